import numpy as np
import pandas as pd
import statsmodels.api as sm

from scorecard.fit import AdditiveRiskClassifier
from scorecard.fit.purify import purify_grid
from scorecard.fit.trees import quadrant_gains, step_tree


def test_boosting_converges_to_the_maximum_likelihood_additive_logistic_model():
    # With categorical features only, the additive model's best fit is the maximum-likelihood logistic
    # regression on one-hot columns; statsmodels' Logit is the outside reference.
    rng = np.random.default_rng(5)
    n = 3000
    a = rng.choice(["low", "mid", "high"], n, p=[0.3, 0.5, 0.2])
    b = rng.choice(["w", "x", "y", "z"], n)
    flag = (rng.random(n) < 0.4).astype(float)
    logit = -1.0 + pd.Series(a).map({"low": -0.5, "mid": 0.0, "high": 0.8}).to_numpy() \
        + pd.Series(b).map({"w": 0.0, "x": 0.4, "y": -0.3, "z": 0.6}).to_numpy() + 0.7 * flag
    y = (rng.random(n) < 1 / (1 + np.exp(-logit))).astype(int)
    X = pd.DataFrame({"a": a, "b": b, "flag": flag})
    est = AdditiveRiskClassifier(
        repeats=1, n_jobs=1, held_out_share=0.0, learning_rate=0.5, max_rounds=400, min_leaf_patients=1,
        shrinkage=1e-9, min_level_count=1, pairs=0,
    ).fit(X, y)
    design = pd.get_dummies(X[["a", "b"]], drop_first=True).astype(float)
    design["flag"] = flag
    reference = sm.Logit(y, sm.add_constant(design)).fit(disp=0)
    assert np.max(np.abs(est.decision_function(X) - reference.fittedvalues.to_numpy())) < 1e-3


def test_step_tree_gives_newton_leaf_values():
    # Leaf value -G/(H + l2): Friedman 2001 / Chen & Guestrin 2016 (second-order boosting, common practice)
    G = np.array([-5.0, -4.0, 6.0, 5.0, 0.0])
    H = np.array([2.0, 2.0, 2.0, 2.0, 0.0])
    C = np.array([10.0, 10.0, 10.0, 10.0, 0.0])
    values = step_tree(G, H, C, ordered=True, leaves=2, l2=0.0, min_leaf=1)
    assert np.allclose(values[:4], [9 / 4, 9 / 4, -11 / 4, -11 / 4])
    # a leaf may not hold fewer patients than min_leaf
    assert step_tree(G, H, C, ordered=True, leaves=2, l2=0.0, min_leaf=25) is None


def test_quadrant_gains_match_a_direct_count():
    rng = np.random.default_rng(1)
    G, H = rng.normal(size=(5, 4)), rng.random((5, 4)) + 0.1
    C = np.ones((5, 4))
    gains = quadrant_gains(G, H, C, l2=0.5, min_leaf=1)
    for a in range(4):
        for b in range(3):
            quads = [(slice(0, a + 1), slice(0, b + 1)), (slice(0, a + 1), slice(b + 1, None)),
                     (slice(a + 1, None), slice(0, b + 1)), (slice(a + 1, None), slice(b + 1, None))]
            want = sum(G[q].sum() ** 2 / (H[q].sum() + 0.5) for q in quads) - G.sum() ** 2 / (H.sum() + 0.5)
            assert np.isclose(gains[a, b], want)


def test_purified_grid_has_zero_weighted_row_and_column_means():
    rng = np.random.default_rng(2)
    grid = rng.normal(size=(6, 5))
    weights = rng.integers(0, 30, size=(6, 5)).astype(float)
    pure, row, column = purify_grid(grid, weights)
    assert np.allclose(pure + row[:, None] + column[None, :], grid)
    assert np.allclose((pure * weights).sum(axis=1), 0, atol=1e-9)
    assert np.allclose((pure * weights).sum(axis=0), 0, atol=1e-9)
    # an additive grid is all main effect: nothing is left as interaction
    additive = np.arange(6)[:, None] * 0.3 + np.arange(5)[None, :] * -0.2
    assert np.allclose(purify_grid(additive, weights + 1)[0], 0, atol=1e-9)
