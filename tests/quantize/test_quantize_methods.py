"""Rounding, merging and the Framingham baseline checked against hand computation."""

import numpy as np
import pytest

from quantize_models import POPULATION_ONLY, small_model_dict
from scorecard.model import model_from_dict
from scorecard.quantize import Bound, quantize_model
from scorecard.quantize.curves import build_curves
from scorecard.quantize.framingham import framingham_table, reference_values
from scorecard.quantize.points import Quadratic, round_points
from scorecard.quantize.population import evaluation_population


def test_moves_never_do_worse_than_independent_rounding():
    rng = np.random.default_rng(5)
    n, sizes = 4000, [4, 3, 5, 2]
    starts = np.concatenate([[0], np.cumsum(sizes)])
    ids = np.stack([starts[t] + rng.integers(0, s, n) for t, s in enumerate(sizes)], axis=1)
    values = rng.normal(0, 0.6, starts[-1])
    y = values[ids].sum(axis=1) + rng.normal(0, 0.05, n)
    w = rng.uniform(0.05, 0.25, n)
    q = Quadratic.from_rows(ids, starts, y, w)
    # the Gram form equals the explicit indicator-matrix product (numpy reference)
    x = np.zeros((n, starts[-1]))
    x[np.arange(n)[:, None], ids] = 1
    assert np.allclose(q.gram, x.T @ (x * w[:, None]))
    term_of_row = np.repeat(np.arange(len(sizes)), sizes)
    for scale in (0.2, 0.35, 0.5):
        pts, offset = round_points(q, values, term_of_row, scale, max_total=200)
        independent = np.concatenate([np.round((values[term_of_row == t] - values[term_of_row == t].min()) / scale)
                                      for t in range(len(sizes))])

        def error(p):
            sheet = scale * p[ids].sum(axis=1)
            a = np.average(y - sheet, weights=w)
            return float(w @ (a + sheet - y) ** 2)

        assert error(pts) <= error(independent) + 1e-9
        assert pts.min() == 0 and all(pts[term_of_row == t].min() == 0 for t in range(len(sizes)))


def test_total_points_limit_is_respected():
    model = model_from_dict(small_model_dict())
    for limit in (8, 15):
        doc = quantize_model(model, bound=Bound(max_auc_loss=0.5, max_risk_error=0.5, risk_error_share=1.0,
                                                max_rows=3, max_total_points=limit, **POPULATION_ONLY), bootstrap=0)
        assert doc["total"]["max"] - doc["total"]["min"] <= limit


def test_merge_equal_levels_prints_one_row():
    d = small_model_dict(with_pair=False)
    res = next(t for t in d["terms"] if t["name"] == "residence")
    res["scores"] = [0.0, 0.01, 0.9]  # home and family differ by far less than a point
    model = model_from_dict(d)
    loose = Bound(max_auc_loss=0.05, max_risk_error=0.1, risk_error_share=0.3, max_rows=6, max_total_points=30,
                  **POPULATION_ONLY)
    merged = quantize_model(model, bound=loose, merge_equal_levels=True, bootstrap=0)
    plain = quantize_model(model, bound=loose, bootstrap=0)
    rows = next(t for t in merged["terms"] if t["name"] == "residence")["rows"]
    assert rows[0]["levels"] == ["home", "family"] and rows[0]["text"] == "Home, Family"
    assert len(next(t for t in plain["terms"] if t["name"] == "residence")["rows"]) == 3


def test_framingham_points_follow_the_published_formula():
    # Sullivan, Massaro & D'Agostino, Statistics in Medicine 2004: points = round((f(W) - f(W_ref)) / B), with
    # W the category midpoint and the referent the lowest-risk category. Linear age effect 0.05 per year here.
    d = small_model_dict(with_pair=False)
    model = model_from_dict(d)
    pop = evaluation_population(model, size=2000)
    curves = build_curves(model, pop.frame, 60)
    table = framingham_table(curves, model.intercept, categories=4, scale=0.25)
    age = next(i for i, c in enumerate(curves) if c.name == "age")
    curve = curves[age]
    # 4 equal-width categories between the 1st and 99th percentile (no p01/p99 given: 60 and 100)
    mids = [65, 75, 85, 95]
    f = [curve.term.scores[int(np.searchsorted(curve.term.edges, m, side="right"))] for m in mids]
    want = [round((v - min(f)) / 0.25) for v in f]
    assert table.points[age][:4].tolist() == want
    flag = next(i for i, c in enumerate(curves) if c.name == "prior_delirium")
    assert table.points[flag].tolist() == [0, round(1.0 / 0.25)]
    # risk at a total comes from the model at the referent profile: intercept + sum of referent values
    _, refvals = reference_values(curves, 4)
    assert table.offset == pytest.approx(model.intercept + sum(v.min() for v in refvals))
    assert refvals[age][:4].tolist() == pytest.approx(f)
