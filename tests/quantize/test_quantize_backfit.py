"""Backfitting against the per-patient partial residual: no step raises the weighted per-patient error, and
on a small case a term's re-segmentation equals an exhaustive search over every choice of cuts."""

import itertools

import numpy as np
import pandas as pd
from hypothesis import given, settings, strategies as st

from quantize_models import small_model_dict
from scorecard.model import model_from_dict
from scorecard.quantize.backfit import Backfit, smallest_plans
from scorecard.quantize.curves import ContinuousCurve, build_curves
from scorecard.quantize.population import evaluation_population


def _problem(seed: int, n: int = 400):
    model = model_from_dict(small_model_dict())
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({"age": rng.integers(60, 100, n).astype(float), "sodium": rng.integers(122, 158, n).astype(float),
                          "albumin": np.where(rng.random(n) < 0.2, np.nan, rng.integers(21, 49, n).astype(float)),
                          "prior_delirium": rng.integers(0, 2, n).astype(float),
                          "residence": rng.choice(["home", "family", "care_home"], n),
                          "haemoglobin": rng.integers(72, 168, n).astype(float)})
    pop = evaluation_population(model, frame)
    curves = build_curves(model, pop.frame, 60)
    p = pop.risk
    return curves, pop.logodds, p * (1 - p)


def _objective(curves, plans, y, w):
    """J recomputed from scratch: the weighted least-squares fit of y on the rows' indicators (numpy lstsq)."""
    cols = [np.ones(len(y))]
    for c, plan in zip(curves, plans):
        rows = plan.row_of_piece[c.patient_piece]
        cols += [(rows == r).astype(float) for r in range(plan.n_rows)]
    x = np.column_stack(cols) * np.sqrt(w)[:, None]
    beta, *_ = np.linalg.lstsq(x, y * np.sqrt(w), rcond=None)
    r = y * np.sqrt(w) - x @ beta
    return float(r @ r)


@settings(max_examples=12, deadline=None)
@given(seed=st.integers(0, 10_000), moves=st.lists(st.tuples(st.integers(0, 6), st.booleans()), min_size=3, max_size=12))
def test_no_backfitting_step_raises_the_weighted_per_patient_error(seed, moves):
    curves, y, w = _problem(seed)
    fit = Backfit(curves, y, w, max_rows=4, cap=np.inf)
    fit.start(smallest_plans(curves, w, np.inf, 4))
    j = fit.objective()
    for t, grow in moves:
        if grow:
            fit.grow_once()
            j = fit.objective()  # a new row may be placed anywhere; only re-segmentation is promised monotone
            continue
        fit.update(t % len(curves))
        new = fit.objective()
        assert new <= j * (1 + 1e-9) + 1e-12
        j = new
    before = fit.objective()
    assert fit.sweep() <= before * (1 + 1e-9) + 1e-12


def test_a_term_resegmented_alone_equals_exhaustive_search_over_its_cuts():
    # one continuous term and nothing else on the sheet: its partial residual is the exact log-odds, and the
    # DP's rows must be the best of every choice of k - 1 cuts among the readable cut positions
    d = small_model_dict(with_pair=False)
    d["terms"] = [t for t in d["terms"] if t["name"] == "sodium"]
    d["features"] = [f for f in d["features"] if f["name"] == "sodium"]
    model = model_from_dict(d)
    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"sodium": rng.integers(121, 160, 600).astype(float)})
    pop = evaluation_population(model, frame)
    curves = build_curves(model, pop.frame, 8)  # few readable cuts, so every choice can be tried
    (curve,) = curves
    assert isinstance(curve, ContinuousCurve)
    p = pop.risk
    w = p * (1 - p)
    allowed = [int(a) for a in curve.axis["allowed"] if 0 < a < curve.n_main]
    for k in (2, 3):
        fit = Backfit(curves, pop.logodds, w, max_rows=k, cap=np.inf)
        start = curve.segmentations(curve.scores, curve.piece_weights(w), k, np.inf)[k - 1][2]
        fit.start([start])
        fit.update(0)
        got = _objective(curves, fit.plans, pop.logodds, w)
        best = np.inf
        for cuts in itertools.combinations(allowed, k - 1):
            rows = np.searchsorted(np.array(cuts), np.arange(curve.n_main), side="right")
            plan = type(start)(rows, k, k, {"cuts": list(cuts), "k": (k,)})
            best = min(best, _objective(curves, [plan], pop.logodds, w))
        # the DP weighs pieces no patient falls in by a tiny amount as well, hence the relative tolerance
        assert got <= best * (1 + 1e-6) + 1e-9
        assert got >= best * (1 - 1e-6) - 1e-9


@settings(max_examples=10, deadline=None)
@given(seed=st.integers(0, 10_000), grows=st.integers(0, 8))
def test_each_term_target_is_the_weighted_mean_partial_residual_of_its_piece(seed, grows):
    """The backfitting target (partial residuals, Hastie and Tibshirani's backfitting), recomputed here from its
    definition patient by patient: per piece, the weighted mean of y - intercept - every other term's sheet value
    (its own model score where no patient falls), with numpy only."""
    curves, y, w = _problem(seed)
    fit = Backfit(curves, y, w, max_rows=4, cap=np.inf)
    fit.start(smallest_plans(curves, w, np.inf, 4))
    for _ in range(grows):
        fit.grow_once()
    for t, curve in enumerate(curves):
        values = [fit.values[u][fit.plans[u].row_of_piece[c.patient_piece]] for u, c in enumerate(curves)]
        partial = y - fit.intercept - (np.sum(values, axis=0) - values[t])
        expected = curve.scores.astype(float).copy()
        for piece in range(len(curve.scores)):
            inside = curve.patient_piece == piece
            if inside.any():
                # the code keeps a small weight floor on every piece (piece_weights); it pulls the mean towards
                # the model's own score by that floor's share
                floor = fit.piece_w[t][piece] - w[inside].sum()
                expected[piece] = (np.sum(w[inside] * partial[inside]) + floor * curve.scores[piece]) / fit.piece_w[t][piece]
        np.testing.assert_allclose(fit.target(t), expected, rtol=1e-9, atol=1e-9)
