"""Edits without retraining: what each changes, what it leaves alone, and the history it leaves behind."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from sklearn.isotonic import IsotonicRegression

from scorecard.demo import true_model
from scorecard.model import load_model, predict_logodds
from scorecard.review.edits import force_direction, hold_beyond, pool_levels, remove_effect


def _without(doc: dict, term_name: str) -> dict:
    doc = dict(doc)
    doc["terms"] = [t for t in doc["terms"] if t["name"] != term_name]
    return doc


@pytest.mark.parametrize("name", [t.name for t in true_model().terms])
def test_removing_an_effect_changes_only_that_term(name):
    model = true_model()
    edited, record = remove_effect(model, name)
    assert record["action"] == "remove_effect" and "removed the effect" in record["what"] and record["term"] == name
    if model.term(name).kind == "pair":  # issue 13: the history a user reads names a pair in words
        assert name not in record["what"] and "Age with cognitive screen score" in record["what"]
    before, after = model.to_dict(), edited.to_dict()
    assert _without(before, name) == _without(after, name)  # intercept, features, other terms, provenance
    zeroed = edited.term(name)
    assert not np.any(np.asarray(zeroed.scores)) and zeroed.missing_score in (None, 0.0)
    assert zeroed.counts == model.term(name).counts
    assert np.any(np.asarray(model.term(name).scores)) or name == "geriatric_review"  # the true effect of the review is 0


def test_removing_an_effect_shifts_every_patient_by_minus_that_terms_contribution(cohort_frame):
    model = true_model()
    edited, _ = remove_effect(model, "age x cognition")
    before, _ = predict_logodds(model, cohort_frame)
    after, _ = predict_logodds(edited, cohort_frame)
    from scorecard.model import contributions

    parts, _ = contributions(model, cohort_frame)
    np.testing.assert_allclose(before - after, parts["age x cognition"].to_numpy(), atol=1e-12)


def test_forced_direction_is_scikit_learns_weighted_isotonic_fit_of_the_term(cohort_frame):
    model = true_model()
    edited, record = force_direction(model, "sodium", "increasing", cohort=cohort_frame)
    term = model.term("sodium")
    # weights: patients of the cohort per sodium bin
    bins = np.searchsorted(term.edges, cohort_frame["sodium"].to_numpy(float), side="right")
    weights = np.bincount(bins, minlength=len(term.scores)).astype(float)
    seen = weights > 0
    x = np.arange(len(term.scores))
    # reference: sklearn.isotonic.IsotonicRegression with the same weights, on the bins that hold patients
    reference = IsotonicRegression().fit(x[seen], np.asarray(term.scores)[seen], sample_weight=weights[seen]).predict(x[seen])
    np.testing.assert_allclose(np.asarray(edited.term("sodium").scores)[seen], reference, atol=1e-12)
    assert np.all(np.diff(edited.term("sodium").scores) >= -1e-15)
    assert edited.feature("sodium").direction == "increasing"
    assert record["weights"] == "cohort"


def test_holding_keeps_the_shape_flat_beyond_the_values():
    model = true_model()
    edited, record = hold_beyond(model, "sodium", 128.0, 150.0)
    frame = pd.DataFrame({n: ["0"] for n in model.used_features})
    for name, value in {"age": "80", "cognition": "7", "sodium": "140", "haemoglobin": "120", "hours_to_surgery": "20",
                        "medicines": "5", "albumin": "35", "temperature": "36.8", "anaesthesia": model.feature("anaesthesia").levels[0],
                        "residence": model.feature("residence").levels[0]}.items():
        frame[name] = value
    probes = [118, 124, 128, 133, 140, 149, 150, 156, 160]
    table = pd.concat([frame.assign(sodium=str(v)) for v in probes], ignore_index=True)
    before, _ = predict_logodds(model, table)
    after, _ = predict_logodds(edited, table)
    at = dict(zip(probes, before))
    new = dict(zip(probes, after))
    # re-centring moves a constant from the term into the intercept, so log-odds inside the bounds are unchanged
    for v in (133, 140, 149):
        assert new[v] == pytest.approx(at[v], abs=1e-12)
    for v in (118, 124, 128):
        assert new[v] == pytest.approx(at[128], abs=1e-12)
    for v in (150, 156, 160):
        assert new[v] == pytest.approx(at[150], abs=1e-12)
    assert at[118] != pytest.approx(at[128]) and at[160] != pytest.approx(at[150])  # holding did change something
    # the history says it in words with the numbers, not as "LO / HI" placeholders
    assert "values below 128 score as 128 and values above 150 score as 150" in record["what"]
    assert "LO" not in record["what"] and "HI" not in record["what"]
    _, one_sided = hold_beyond(model, "sodium", hi=150.0)
    assert "values above 150 score as 150" in one_sided["what"] and "below" not in one_sided["what"]
    shift = edited.intercept - model.intercept
    # the term is still centred on its training counts (DESIGN: terms are centred)
    t = edited.term("sodium")
    assert np.average(t.scores, weights=t.counts) == pytest.approx(0.0, abs=1e-12)
    assert record["intercept_shift"] == pytest.approx(shift, rel=1e-5)


def test_pooling_gives_the_count_weighted_mean_score():
    model = true_model()
    term = model.term("residence")
    a, b = term.levels[0], term.levels[1]
    edited, _ = pool_levels(model, "residence", [a, b])
    w = np.asarray(term.counts, dtype=float)[:2]
    expected = float(np.dot(w, term.scores[:2]) / w.sum())
    new = edited.term("residence").scores
    assert new[0] == pytest.approx(expected) and new[1] == pytest.approx(expected)
    assert new[2] == term.scores[2]


def test_edit_history_round_trips_and_the_fingerprint_changes(care_model_path, cohort_csv, review_dir, monkeypatch, run_cli):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1780000000")
    out = review_dir / "history.model.json"
    result = run_cli("edit", care_model_path, "--declare", "geriatric_review=care_process", "--remove-effect", "geriatric_review",
                     "--reason", "care-process marker must not lower the score", "--by", "methodologist",
                     "--data", cohort_csv, "--outcome", "delirium", "-o", out)
    assert result.exit_code == 0, result.output
    original = load_model(care_model_path)
    edited = load_model(out)
    assert edited.fingerprint != original.fingerprint
    edits = edited.provenance["edits"]
    assert [e["action"] for e in edits] == ["declare", "remove_effect"]
    assert edits[1]["by"] == "methodologist" and edits[1]["at"] == "2026-05-28T20:26:40Z"  # SOURCE_DATE_EPOCH 1780000000
    assert edits[1]["reason"] == "care-process marker must not lower the score"
    assert edits[0]["applied_to"] == original.fingerprint and edits[1]["applied_to"] != original.fingerprint
    # the chain: running the two edits one command at a time gives the same history and the same bytes
    step1, step2 = review_dir / "step1.model.json", review_dir / "step2.model.json"
    common = ["--reason", "care-process marker must not lower the score", "--by", "methodologist", "--data", cohort_csv, "--outcome", "delirium"]
    assert run_cli("edit", care_model_path, "--declare", "geriatric_review=care_process", *common, "-o", step1).exit_code == 0
    assert load_model(step1).fingerprint == edits[1]["applied_to"]
    assert run_cli("edit", step1, "--remove-effect", "geriatric_review", *common, "-o", step2).exit_code == 0
    assert step2.read_bytes() == out.read_bytes()
    cost = edits[1]["cost"]
    assert cost["against"] == "observed outcome" and cost["delta_auc"] == pytest.approx(cost["auc_after"] - cost["auc_before"], abs=2e-6)
    # save -> load -> save is stable, and the same inputs give the same bytes
    again = review_dir / "history-again.model.json"
    assert run_cli("edit", care_model_path, "--declare", "geriatric_review=care_process", "--remove-effect", "geriatric_review",
                   "--reason", "care-process marker must not lower the score", "--by", "methodologist",
                   "--data", cohort_csv, "--outcome", "delirium", "-o", again).exit_code == 0
    assert again.read_bytes() == out.read_bytes()
    assert json.loads(out.read_text())["provenance"]["edits"] == edits
    # a second run appends to the history rather than replacing it
    more = review_dir / "history-more.model.json"
    assert run_cli("edit", out, "--force-direction", "age=increasing", "-o", more).exit_code == 0
    assert [e["action"] for e in load_model(more).provenance["edits"]] == ["declare", "remove_effect", "force_direction"]
