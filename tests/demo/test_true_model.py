"""The demo's true model: a valid, centred, purified model document that reproduces the generator exactly."""

import json
from pathlib import Path

import numpy as np
import pytest
import statsmodels.api as sm
from sklearn.metrics import roc_auc_score

from scorecard.demo import (
    FEATURES,
    OUTCOME,
    PAIR_TERM,
    TRUE_AUC,
    TRUE_AUC_TOLERANCE,
    generate_cohort,
    rank_auc,
    true_auc,
    true_model,
    true_shape,
)
from scorecard.demo.truth import raw_logodds
from scorecard.model import contributions, load_model, predict_logodds, save_model, validate_model_dict

EXAMPLE = Path(__file__).resolve().parents[2] / "example_models" / "demo-true.model.json"


@pytest.fixture(scope="module")
def cohort():
    return generate_cohort(100_000, seed=21)


@pytest.mark.parametrize("interaction", [True, False])
def test_document_validates_and_round_trips(tmp_path, interaction):
    model = true_model(interaction)
    validate_model_dict(model.to_dict())
    path = tmp_path / "true.model.json"
    written = save_model(model, path)
    again = load_model(path)
    assert written == model.fingerprint == again.fingerprint
    assert [t.name for t in model.terms] == FEATURES + ([PAIR_TERM] if interaction else [])


def test_example_model_is_the_current_true_model():
    # example_models/demo-true.model.json must be regenerated whenever the generator changes
    assert load_model(EXAMPLE).fingerprint == true_model().fingerprint


def test_document_says_what_it_is():
    model = true_model()
    assert model.outcome["horizon"] == "5 days after the operation"
    assert "60" in model.outcome["population"] and "hip fracture" in model.outcome["population"]
    assert "invented" in model.provenance["source"]
    review = model.feature("geriatric_review")
    assert review.role == "care_process"
    assert model.term("geriatric_review").scores == [0.0, 0.0]  # its true effect is nil
    for feature in model.features:
        if feature.kind == "continuous":
            rng = feature.training_range
            assert rng["min"] <= rng["p01"] <= rng["p99"] <= rng["max"]
    assert model.feature("albumin").missing == "score" and model.term("albumin").missing_score > 0


@pytest.mark.parametrize("interaction", [True, False])
def test_model_logodds_equal_the_generators(interaction):
    frame = generate_cohort(20_000, seed=4, interaction=interaction)
    logodds, _ = predict_logodds(true_model(interaction), frame)
    assert np.max(np.abs(logodds - raw_logodds(frame, interaction))) < 1e-9


def test_terms_are_centred_under_the_population(cohort):
    model = true_model()
    for term in model.terms:
        scores, counts = np.asarray(term.scores), np.asarray(term.counts)
        total, weighted = counts.sum(), (scores * counts).sum()
        if term.missing_score is not None:
            total, weighted = total + term.missing_count, weighted + term.missing_score * term.missing_count
        # exact population (the expected counts); the document's 11-digit numbers (jsondoc) leave ~1e-12
        assert abs(weighted / total) < 1e-10, term.name
    # and on a sample of 100,000 patients, each term's mean is near 0 (Monte Carlo error only)
    parts, _ = contributions(model, cohort)
    for name in parts.columns:
        spread = parts[name].std()
        assert abs(parts[name].mean()) <= 4 * spread / np.sqrt(len(parts)) + 1e-12, name


def test_pair_is_purified_as_a_fitter_reports_it():
    pair = true_model().term(PAIR_TERM)
    grid, weights = np.asarray(pair.scores), np.asarray(pair.counts)
    rows = (grid * weights).sum(axis=1) / weights.sum(axis=1)
    cols = (grid * weights).sum(axis=0) / weights.sum(axis=0)
    assert np.abs(rows).max() < 1e-10 and np.abs(cols).max() < 1e-10  # 11-digit document numbers (jsondoc)
    # low cognition matters more at high age: the purified grid still has a positive age x (10 - screen) trend
    assert grid[-1, 0] - grid[-1, -1] > grid[0, 0] - grid[0, -1]


def test_true_shape_equals_the_model_terms(cohort):
    model = true_model()
    parts, _ = contributions(model, cohort)
    for term in model.terms:
        if term.kind == "pair":
            shape = true_shape(PAIR_TERM)(cohort["age"], cohort["cognition"])
        else:
            shape = true_shape(term.name)(cohort[term.name].to_numpy())
        assert np.allclose(shape, parts[term.name].to_numpy(), atol=0, rtol=0), term.name
    # between recorded values, a value rounds half up to the display precision (the sheet's rule)
    age = true_shape("age")
    assert age(80.5) == age(81) and age(80.49) == age(80)
    temperature = true_shape("temperature")
    assert temperature(38.25) == temperature(38.3) and temperature(38.24) == temperature(38.2)
    with pytest.raises(KeyError):
        true_shape("shoe_size")


def test_shapes_have_the_promised_forms():
    sodium, temperature = true_shape("sodium"), true_shape("temperature")
    assert sodium(140) < sodium(130) and sodium(140) < sodium(150)  # U around 140
    assert temperature(36.8) < temperature(35.5) and temperature(36.8) < temperature(38.5)
    hours = true_shape("hours_to_surgery")
    assert hours(36) == hours(1) and hours(37) - hours(36) > 0.5 and hours(37) == hours(120)  # one step after 36 h
    medicines = true_shape("medicines", interaction=False)
    rise = medicines(4) - medicines(0)
    assert rise > 0 and 0 < medicines(20) - medicines(12) < rise / 5  # rises then flattens
    assert true_shape("albumin")(np.nan) > true_shape("albumin")(35)  # not measured carries risk


def test_true_auc_matches_the_documented_value_and_scikit_learn():
    for interaction in (True, False):
        frame = generate_cohort(200_000, seed=8, interaction=interaction)
        logodds, _ = predict_logodds(true_model(interaction), frame)
        ours = rank_auc(frame[OUTCOME], logodds)
        # outside reference: scikit-learn's roc_auc_score on the same scores
        assert abs(ours - roc_auc_score(frame[OUTCOME], logodds)) < 1e-12
        assert abs(ours - TRUE_AUC[interaction]) < TRUE_AUC_TOLERANCE
    assert abs(true_auc(rows=20_000, seed=3) - TRUE_AUC[True]) < 0.03  # smaller sample, wider tolerance


def test_outcomes_follow_the_true_terms(cohort):
    # outside reference: statsmodels' logistic regression of the outcome on the true model's term contributions.
    # If outcomes are drawn from the true model, every coefficient is 1 and the intercept is the model's;
    # with 100,000 patients each estimate must lie within 4 standard errors.
    model = true_model()
    parts, _ = contributions(model, cohort)
    parts = parts.drop(columns="geriatric_review")  # constant 0: no effect to estimate
    fit = sm.Logit(cohort[OUTCOME].to_numpy(), sm.add_constant(parts)).fit(disp=0)
    z = (fit.params.drop("const") - 1.0) / fit.bse.drop("const")
    assert np.abs(z).max() < 4, z.to_dict()
    assert abs(fit.params["const"] - model.intercept) < 4 * fit.bse["const"]


def test_care_process_flag_looks_protective_though_its_true_effect_is_nil(cohort):
    model = true_model()
    assert model.term("geriatric_review").scores == [0.0, 0.0]
    y, review = cohort[OUTCOME].to_numpy(), cohort["geriatric_review"].to_numpy()
    # crude 2x2 odds ratio (statsmodels Table2x2): reviewed patients have delirium less often
    table = np.array([[np.sum((review == 1) & (y == 1)), np.sum((review == 1) & (y == 0))],
                      [np.sum((review == 0) & (y == 1)), np.sum((review == 0) & (y == 0))]])
    crude = sm.stats.Table2x2(table)
    assert crude.oddsratio_confint()[1] < 1.0
    # about 0.57 by Bayes' rule from the generator's stated probabilities (scorecard.demo.cohort docstring)
    assert 0.50 < crude.oddsratio < 0.65
    # and it stays protective after adjusting for every recorded feature (statsmodels Logit with the true
    # log-odds as offset): the hidden routine behind it is not in the data
    logodds, _ = predict_logodds(model, cohort)
    adjusted = sm.Logit(y, sm.add_constant(review.astype(float)), offset=logodds).fit(disp=0)
    assert adjusted.conf_int()[1][1] < 0


def test_example_file_is_plain_json_listing_every_feature():
    doc = json.loads(EXAMPLE.read_text("utf-8"))
    assert doc["document"] == "scorecard-model" and doc["link"] == "logit"
    assert {f["name"] for f in doc["features"]} == set(FEATURES)


def test_no_demo_label_repeats_its_unit():
    # the sheet prints "label (unit)": "Hours from admission to surgery (hours)" said the unit twice
    from scorecard.demo.true_model import FEATURE_INFO

    for name, label, unit, *_ in FEATURE_INFO:
        if unit:
            assert unit.lower() not in label.lower(), (name, label, unit)
