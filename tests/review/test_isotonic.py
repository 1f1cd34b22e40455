"""Weighted isotonic projection against scikit-learn's IsotonicRegression (the outside reference)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.isotonic import IsotonicRegression

from scorecard.review.isotonic import isotonic_projection

values = st.lists(st.floats(-5, 5, allow_nan=False), min_size=1, max_size=40)


@settings(max_examples=150, deadline=None)
@given(data=st.data(), ys=values, increasing=st.booleans())
def test_matches_scikit_learn_isotonic_regression_with_the_same_weights(data, ys, increasing):
    weights = data.draw(st.lists(st.floats(0.01, 100), min_size=len(ys), max_size=len(ys)))
    ours = isotonic_projection(ys, weights, increasing=increasing)
    # reference: sklearn.isotonic.IsotonicRegression, fitted on positions 0..n-1 with sample_weight
    reference = IsotonicRegression(increasing=increasing).fit(np.arange(len(ys)), ys, sample_weight=weights).predict(np.arange(len(ys)))
    np.testing.assert_allclose(ours, reference, rtol=1e-9, atol=1e-9)


def test_a_u_shape_pooled_the_way_scikit_learn_pools_it():
    # a U-shape like the demo's sodium, with the most patients in the middle
    ys = np.array([2.2, 1.5, 0.7, 0.1, -0.2, -0.2, 0.1, 0.6, 1.4, 2.1])
    w = np.array([2, 5, 40, 200, 600, 650, 210, 45, 6, 3], dtype=float)
    ours = isotonic_projection(ys, w, increasing=True)
    reference = IsotonicRegression().fit(np.arange(10), ys, sample_weight=w).predict(np.arange(10))
    np.testing.assert_allclose(ours, reference, atol=1e-12)
    assert np.all(np.diff(ours) >= 0)
    # the weighted mean is kept, so a centred term stays centred (a property of the projection)
    assert np.isclose(np.average(ours, weights=w), np.average(ys, weights=w))


def test_zero_weight_entries_follow_their_weighted_neighbour_and_stay_monotone():
    ys = [3.0, 1.0, 5.0, 0.0, 2.0]
    w = [0.0, 1.0, 0.0, 1.0, 0.0]
    out = isotonic_projection(ys, w, increasing=True)
    # the weighted entries alone are the 2-point problem [1, 0] -> pooled to 0.5 (scikit-learn agrees)
    reference = IsotonicRegression().fit([1, 3], [1.0, 0.0], sample_weight=[1.0, 1.0]).predict([1, 3])
    np.testing.assert_allclose(out[[1, 3]], reference)
    np.testing.assert_allclose(out, [0.5, 0.5, 0.5, 0.5, 0.5])
    assert np.all(np.diff(isotonic_projection([4.0, 3.0, 9.0, 1.0], [0, 2, 0, 2], increasing=False)) <= 0)
