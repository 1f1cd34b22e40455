"""The fitted model on small invented demo cohorts: shapes, pairs, purification, centring, export, determinism."""

import numpy as np

from fit_settings import QUICK
from scorecard.demo import FEATURES, OUTCOME, PAIR_TERM, generate_cohort, true_shape
from scorecard.fit import AdditiveRiskClassifier
from scorecard.jsondoc import pretty_text
from scorecard.model import contributions, model_from_dict, predict_logodds

CATEGORICAL = ("anaesthesia", "residence")


def test_shapes_follow_the_true_shapes(pair_fit, pair_cohort):
    model = pair_fit.to_model()
    parts, _ = contributions(model, pair_cohort)
    for name in ("age", "cognition", "sodium", "haemoglobin", "hours_to_surgery", "temperature", "albumin", "residence"):
        values = pair_cohort[name].to_numpy(dtype=object if name in CATEGORICAL else float)
        truth = true_shape(name)(values)
        # correlation over the patients = weighted by the population density
        r = np.corrcoef(truth, parts[name].to_numpy())[0, 1]
        assert r > 0.9, (name, r)


def test_planted_pair_is_ranked_first_and_fitted(pair_fit):
    first = pair_fit.pair_ranking_[0]
    assert f"{first[0]} x {first[1]}" == PAIR_TERM
    assert [f"{pair_fit.column_names_[p.first]} x {pair_fit.column_names_[p.second]}" for p in pair_fit.pairs_] == [PAIR_TERM]


def test_no_pair_is_fitted_without_interaction(additive_cohort):
    est = AdditiveRiskClassifier(random_state=3, **QUICK).fit(additive_cohort[FEATURES], additive_cohort[OUTCOME])
    assert est.pairs_ == []
    assert len(est.pair_ranking_) == 78  # every pair of 13 features was still ranked


def test_document_predicts_what_the_estimator_predicts(pair_fit, pair_cohort):
    model = model_from_dict(pair_fit.to_model().to_dict())  # through validation
    logodds, _ = predict_logodds(model, pair_cohort)
    assert np.allclose(logodds, pair_fit.decision_function(pair_cohort[FEATURES]), atol=1e-9)


def test_pair_is_purified_and_every_term_is_centred(pair_fit):
    model = pair_fit.to_model()
    pair = model.term(PAIR_TERM)
    scores, counts = np.asarray(pair.scores), np.asarray(pair.counts)
    assert np.abs(scores).max() > 0.05  # there is an interaction to see
    assert np.allclose((scores * counts).sum(axis=1), 0, atol=1e-7)
    assert np.allclose((scores * counts).sum(axis=0), 0, atol=1e-7)
    for term in model.terms:
        if term.kind == "pair":
            continue
        total = np.dot(term.scores, term.counts) + (term.missing_score or 0.0) * (term.missing_count or 0.0)
        assert abs(total / (np.sum(term.counts) + (term.missing_count or 0))) < 1e-9, term.name


def test_document_records_ranges_spread_and_provenance(pair_fit, pair_cohort):
    model = pair_fit.to_model(event="delirium", horizon="5 days", population="invented", units={"sodium": "mmol/L"})
    sodium = model.feature("sodium")
    assert sodium.unit == "mmol/L" and sodium.kind == "continuous"
    assert sodium.training_range["min"] == pair_cohort["sodium"].min()
    assert sodium.training_range["p99"] == np.quantile(pair_cohort["sodium"], 0.99)
    assert model.feature("prior_delirium").kind == "flag" and model.feature("residence").kind == "categorical"
    assert model.feature("albumin").missing == "score" and model.term("albumin").missing_score is not None
    assert model.feature("age").missing == "error"  # never missing in training: refused, not guessed
    age = model.term("age")
    assert sum(age.counts) == len(pair_cohort)
    assert len(age.spread) == len(age.scores) and max(age.spread) > 0
    edges = np.asarray(age.edges)
    distinct = np.unique(pair_cohort["age"])
    assert np.allclose(edges, (distinct[:-1] + distinct[1:]) / 2)  # midpoints of adjacent training values
    prov = model.provenance
    assert prov["settings"]["repeats"] == 2 and len(prov["data"]["fingerprint"]) == 64
    assert 0.7 < prov["validation"]["out_of_bag_auc"] < 0.95


def test_same_seed_same_bytes_whatever_the_number_of_processes():
    cohort = generate_cohort(1500, seed=4)
    docs = []
    for jobs in (1, 2):
        est = AdditiveRiskClassifier(**{**QUICK, "n_jobs": jobs}, random_state=9).fit(cohort[FEATURES], cohort[OUTCOME])
        docs.append(pretty_text(est.to_model().to_dict()))
    assert docs[0] == docs[1]
    other = AdditiveRiskClassifier(**QUICK, random_state=10).fit(cohort[FEATURES], cohort[OUTCOME])
    assert pretty_text(other.to_model().to_dict()) != docs[0]


def test_sample_weights_act_like_repeated_rows():
    cohort = generate_cohort(1200, seed=6)
    X, y = cohort[FEATURES], cohort[OUTCOME].to_numpy()
    twice = np.r_[np.arange(600), np.arange(600)]
    weights = np.r_[np.full(600, 2.0), np.zeros(600)]
    settings = dict(repeats=1, n_jobs=1, held_out_share=0.0, max_rounds=60, pairs=0, min_leaf_patients=1)
    weighted = AdditiveRiskClassifier(**settings).fit(X, y, sample_weight=weights)
    repeated = AdditiveRiskClassifier(**settings).fit(X.iloc[twice], y[twice])
    assert np.allclose(weighted.decision_function(X), repeated.decision_function(X), atol=1e-8)
    # without held-out rows there is no held-out figure: the document says null rather than NaN
    doc = model_from_dict(weighted.to_model().to_dict())
    assert doc.provenance["validation"]["held_out_log_loss"] == [None]


def test_large_weights_do_not_manufacture_pairs():
    # weights that are all 50 carry no more information than weights of 1 (Kish's effective sample size)
    cohort = generate_cohort(5000, seed=13, interaction=False)
    est = AdditiveRiskClassifier(random_state=1, **QUICK).fit(cohort[FEATURES], cohort[OUTCOME], sample_weight=np.full(5000, 50.0))
    assert est.pairs_ == []
    # without the correction every statistic would be 50 times larger and several p-values near 0
    assert min(p for _, _, _, p, _ in est.pair_ranking_) > 0.01 / 78  # the Bonferroni bound of the auto rule
