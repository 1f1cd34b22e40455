"""Properties of the edits on random step shapes (hypothesis): what must hold for any shape and any bounds."""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.model import model_from_dict, predict_logodds
from scorecard.review.edits import force_direction, hold_beyond


@st.composite
def step_models(draw):
    n = draw(st.integers(2, 12))
    cuts = sorted(draw(st.sets(st.integers(101, 199), min_size=n - 1, max_size=n - 1)))
    scores = draw(st.lists(st.floats(-3, 3, allow_nan=False), min_size=n, max_size=n))
    counts = draw(st.lists(st.integers(0, 500), min_size=n, max_size=n))
    if sum(counts) == 0:
        counts[0] = 1
    doc = {
        "format_version": 1, "document": "scorecard-model", "name": "property", "version": "1",
        "outcome": {"event": "Delirium within 5 days", "horizon": "5 days", "population": "invented"},
        "link": "logit", "intercept": -1.0,
        "features": [{"name": "x", "label": "x", "kind": "continuous", "training_range": {"min": 100, "max": 200}}],
        "terms": [{"kind": "continuous", "name": "x", "feature": "x", "shape": "step", "edges": [float(c) for c in cuts],
                   "scores": scores, "counts": [float(c) for c in counts]}],
        "provenance": {},
    }
    return model_from_dict(doc)


def logodds(model, values):
    return predict_logodds(model, pd.DataFrame({"x": [str(v) for v in values]}))[0]


@settings(max_examples=60, deadline=None)
@given(model=step_models(), lo=st.integers(100, 199), width=st.integers(1, 100))
def test_holding_keeps_every_prediction_inside_the_bounds_and_freezes_it_outside(model, lo, width):
    hi = min(lo + width, 200)
    edited, _ = hold_beyond(model, "x", float(lo), float(hi))
    inside = np.linspace(lo, hi, 23)
    np.testing.assert_allclose(logodds(edited, inside), logodds(model, inside), atol=1e-9)
    below = logodds(edited, [90, lo - 0.5, lo - 7])
    above = logodds(edited, [hi + 0.5, hi + 9, 250])
    np.testing.assert_allclose(below, logodds(model, [lo])[0], atol=1e-9)
    np.testing.assert_allclose(above, logodds(model, [hi])[0], atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(model=step_models(), increasing=st.booleans())
def test_forced_direction_is_monotone_keeps_the_weighted_mean_and_is_idempotent(model, increasing):
    direction = "increasing" if increasing else "decreasing"
    edited, _ = force_direction(model, "x", direction)
    new = np.asarray(edited.term("x").scores)
    steps = np.diff(new) if increasing else -np.diff(new)
    assert np.all(steps >= -1e-12)
    w = np.asarray(model.term("x").counts)
    assert np.isclose(np.dot(w, new), np.dot(w, model.term("x").scores), atol=1e-9)
    again, _ = force_direction(edited, "x", direction)
    np.testing.assert_allclose(again.term("x").scores, new, atol=1e-12)
