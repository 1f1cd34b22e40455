"""Edits on a linear (knot) shape: holding is exact between knots, a forced direction uses interpolation weights."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.isotonic import IsotonicRegression

from scorecard.model import model_from_dict, predict_logodds
from scorecard.review.edits import force_direction, hold_beyond
from scorecard.review.weights import term_weights


def linear_model():
    # invented demo-style model: one piecewise-linear sodium shape (U around 140) and nothing else
    return model_from_dict({
        "format_version": 1, "document": "scorecard-model", "name": "linear-demo", "version": "1",
        "outcome": {"event": "Delirium within 5 days", "horizon": "5 days", "population": "Adults 60+ after hip-fracture surgery"},
        "link": "logit", "intercept": -1.4,
        "features": [{"name": "sodium", "label": "Sodium", "kind": "continuous", "unit": "mmol/L",
                      "training_range": {"min": 120, "max": 160}}],
        "terms": [{"kind": "continuous", "name": "sodium", "feature": "sodium", "shape": "linear",
                   "edges": [120, 130, 140, 150, 160], "scores": [1.2, 0.3, -0.2, 0.4, 1.5],
                   "spread": [0.3, 0.1, 0.05, 0.1, 0.4], "counts": [20, 300, 900, 300, 20]}],
        "provenance": {},
    })


def frame(values):
    return pd.DataFrame({"sodium": [str(v) for v in values]})


def test_holding_a_linear_shape_is_exact_between_knots():
    model = linear_model()
    edited, _ = hold_beyond(model, "sodium", 125.0, 155.0)
    probes = [118, 121, 125, 127.5, 133, 140, 149, 155, 158, 170]
    before, _ = predict_logodds(model, frame(probes))
    after, _ = predict_logodds(edited, frame(probes))
    ref = dict(zip(probes, before))
    got = dict(zip(probes, after))
    for v in (125, 127.5, 133, 140, 149, 155):
        assert got[v] == pytest.approx(ref[v], abs=1e-12)
    for v in (118, 121):
        assert got[v] == pytest.approx(ref[125], abs=1e-12)
    for v in (158, 170):
        assert got[v] == pytest.approx(ref[155], abs=1e-12)
    term = edited.term("sodium")
    assert 125.0 in term.edges and 155.0 in term.edges
    assert len(term.scores) == len(term.edges) == len(term.spread) == len(term.counts)


def test_forced_direction_on_knots_matches_scikit_learn_with_interpolation_weights():
    model = linear_model()
    cohort = frame([121, 125, 129, 135, 138, 140, 141, 144, 147, 151, 159])
    weights = term_weights(model, model.term("sodium"), cohort)
    # each value splits one patient between its two knots, as linear interpolation does: total = patients
    assert weights.per_score.sum() == pytest.approx(11)
    assert weights.per_score[0] == pytest.approx(0.9 + 0.5 + 0.1)  # 121, 125, 129 against knots 120 and 130
    edited, _ = force_direction(model, "sodium", "decreasing", cohort=cohort)
    x = np.arange(5)
    # reference: sklearn.isotonic.IsotonicRegression(increasing=False) with the same knot weights
    reference = IsotonicRegression(increasing=False).fit(x, model.term("sodium").scores, sample_weight=weights.per_score).predict(x)
    np.testing.assert_allclose(edited.term("sodium").scores, reference, atol=1e-12)
