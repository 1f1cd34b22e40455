"""`scorecard explain` agrees with predict; edit costs agree with direct computations."""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.special import expit
from sklearn.metrics import roc_auc_score

from scorecard.model import contributions, load_model, predict_risk
from scorecard.discrimination import expected_auc
from scorecard.review.cost import edit_cost
from scorecard.review.edits import remove_effect
from scorecard.tabular import read_csv


@pytest.mark.parametrize("row", [1, 7, 250])
def test_explain_matches_predict(care_model_path, cohort_csv, run_cli, row):
    result = run_cli("explain", care_model_path, "--row", row, "--data", cohort_csv, "--json")
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    model = load_model(care_model_path)
    cohort = read_csv(cohort_csv)
    risk = predict_risk(model, cohort)[row - 1]
    assert doc["risk"] == pytest.approx(risk, rel=1e-12)
    # reference: scipy's logistic function of baseline + the listed contributions
    total = doc["baseline"] + sum(t["contribution"] for t in doc["terms"])
    assert doc["risk"] == pytest.approx(float(expit(total)), rel=1e-12)
    sizes = [abs(t["contribution"]) for t in doc["terms"]]
    assert sizes == sorted(sizes, reverse=True) and len(sizes) == len(model.terms)
    assert doc["model"]["fingerprint"] == model.fingerprint
    # the table shows the same risk, at one decimal
    table = run_cli("explain", care_model_path, "--row", row, "--data", cohort_csv).stdout
    assert f"{100 * risk:.1f}%" in table and "Decision support only" in table


def test_explain_from_values_equals_explain_from_the_row(care_model_path, cohort_csv, run_cli):
    cohort = read_csv(cohort_csv)
    model = load_model(care_model_path)
    patient = cohort.iloc[4]
    pairs = []
    for name in model.used_features:
        if patient[name].strip():
            pairs += ["--values", f"{name}={patient[name]}"]
    by_values = json.loads(run_cli("explain", care_model_path, *pairs, "--json").stdout)
    by_row = json.loads(run_cli("explain", care_model_path, "--row", 5, "--data", cohort_csv, "--json").stdout)
    assert by_values["risk"] == pytest.approx(by_row["risk"], rel=1e-12)
    assert [t["term"] for t in by_values["terms"]] == [t["term"] for t in by_row["terms"]]


def test_expected_auc_equals_the_pairwise_definition_and_scikit_learn():
    # the pairwise Mann-Whitney form over every ordered pair (i, j), a patient with itself included as a tie
    # (scorecard/discrimination.py says why), brute force here; and scikit-learn's roc_auc_score on the doubled
    # cohort (each patient an event with weight p and a non-event with weight 1 - p)
    from sklearn.metrics import roc_auc_score

    rng = np.random.default_rng(4)
    s = np.round(rng.normal(size=60), 1)  # rounding makes ties
    p = rng.uniform(0.02, 0.9, size=60)
    num = den = 0.0
    for i in range(60):
        for j in range(60):
            w = p[i] * (1 - p[j])
            den += w
            num += w * (1.0 if s[i] > s[j] else 0.5 if s[i] == s[j] else 0.0)
    assert expected_auc(p, s) == pytest.approx(num / den, rel=1e-12)
    doubled = roc_auc_score(np.r_[np.ones(60), np.zeros(60)], np.r_[s, s], sample_weight=np.r_[p, 1 - p])
    assert expected_auc(p, s) == pytest.approx(doubled, rel=1e-12)


def test_edit_cost_against_observed_outcome_uses_scikit_learns_auc(care_model, cohort_frame):
    edited, _ = remove_effect(care_model, "geriatric_review")
    y = cohort_frame["delirium"].to_numpy(float)
    cost = edit_cost(care_model, edited, cohort_frame, y)
    parts, _ = contributions(edited, cohort_frame)
    after = edited.intercept + parts.to_numpy().sum(axis=1)
    # reference: sklearn.metrics.roc_auc_score on the edited model's log-odds
    assert cost["auc_after"] == pytest.approx(roc_auc_score(y, after), abs=1e-6)
    assert cost["calibration_in_the_large_after"] == pytest.approx(y.mean() - expit(after).mean(), abs=1e-6)
    # the marker predicts delirium in these data (that is the trap), so removing its effect costs discrimination
    assert cost["delta_auc"] < 0
    without = edit_cost(care_model, edited, cohort_frame, None)
    assert without["against"] == "the unedited model's risks" and without["delta_auc"] < 0


def test_explain_table_names_terms_as_the_pages_do(care_model_path, cohort_csv, run_cli):
    # issue 13: a pair reads "Age with cognitive screen score (0–10)" wherever a user reads it, never its
    # JSON name "age x cognition"; one-feature terms by their labels, as on the review and sheet pages
    from scorecard.sheet.printed import term_label

    model = load_model(care_model_path)
    table = run_cli("explain", care_model_path, "--row", 7, "--data", cohort_csv).stdout
    doc = json.loads(run_cli("explain", care_model_path, "--row", 7, "--data", cohort_csv, "--json").stdout)
    pairs = [t for t in model.terms if t.kind == "pair"]
    assert pairs, "the fixture's model has the demo's pair"
    for term in pairs:
        assert term.name not in table
    lines = table.splitlines()
    header = next(k for k, line in enumerate(lines) if line.startswith("term "))
    width = lines[header + 1].index("  ")  # the dashes under the term column
    labels = []  # the term column read back, a wrapped label's further lines ("  ...") joined on
    for line in lines[header + 2:]:
        if not line.strip():
            break
        if line.startswith("  "):
            labels[-1] += " " + line.strip()
        else:
            labels.append(line[:width].strip())
    assert labels == [term_label(model, entry["term"]) for entry in doc["terms"]]
