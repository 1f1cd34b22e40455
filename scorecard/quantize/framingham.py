"""The Framingham points method, the published baseline the benchmark compares against.

Sullivan, Massaro & D'Agostino, "Presentation of multivariate data for clinical use: the Framingham Study
risk score functions", Statistics in Medicine 23:1631-1660 (2004). Its steps, applied to an additive model
(the shape function f_t takes the place of beta_t * W):
1. organise each risk factor into categories: here `categories` equal-width categories between the 1st and
   99th percentiles (cut at the nearest printable value), every level of a categorical or flag factor, and
   "not measured";
2. a reference value W_tj for each category: its midpoint (the 1st/99th percentile closes the end ones);
3. the referent category of each factor: the one of lowest risk, so points are non-negative;
4. the distance from the referent in regression units: f_t(W_tj) - f_t(W_t,ref);
5. a points constant B: regression units per point (the paper uses the effect of 5 years of age; with
   no common unit across factors here, B is chosen so the largest total fits the allowed points);
6. points_tj = round((f_t(W_tj) - f_t(W_t,ref)) / B);
7. risk at each total from the model: logistic(intercept + sum_t f_t(W_t,ref) + B * total).
Pair terms use the same rule on the grid of both factors' categories.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scorecard.quantize.curves import ContinuousCurve, Curve, RowPlan, LevelCurve, PairCurve
from scorecard.quantize.segment import rows_of_pieces


@dataclass
class PointsTable:
    """A baseline sheet in the quantizer's terms: per term the row of each piece and the row points."""

    layouts: list[RowPlan]
    points: list[np.ndarray]
    scale: float
    offset: float

    def sheet_logodds(self, curves: list[Curve]) -> np.ndarray:
        total = sum(pts[lay.row_of_piece[c.patient_piece]] for c, lay, pts in zip(curves, self.layouts, self.points))
        return self.offset + self.scale * total

    def printed_rows(self) -> int:
        return int(sum(lay.size for lay, pts in zip(self.layouts, self.points) if np.ptp(pts) > 0))

    @property
    def total_range(self) -> int:
        return int(sum(np.ptp(p) for p in self.points))


def _axis_categories(ax: dict, feature, categories: int):
    """Cut piece positions and the reference value (midpoint) of each category of a continuous axis."""
    rng = feature.training_range or {}
    lo = float(rng.get("p01", ax["training_range"]["min"]))
    hi = float(rng.get("p99", ax["training_range"]["max"]))
    if hi <= lo:
        lo, hi = ax["training_range"]["min"], ax["training_range"]["max"]
    targets = lo + (hi - lo) * np.arange(1, categories) / categories
    scale = 10**feature.decimals
    cut_values = ax["cuts"] / scale
    picked = sorted({int(np.argmin(np.abs(cut_values - t))) for t in targets}) if len(cut_values) else []
    cut_pieces = [int(ax["allowed"][i]) for i in picked]
    cuts = [float(cut_values[i]) for i in picked]
    ends = [lo] + cuts + [hi]
    mids = [(a + b) / 2 for a, b in zip(ends[:-1], ends[1:])]
    return cut_pieces, mids


def reference_values(curves: list[Curve], categories: int) -> tuple[list[RowPlan], list[np.ndarray]]:
    """Steps 1-2: the categories of every factor (as layouts over its pieces) and f at each reference value."""
    layouts, refvals = [], []
    for c in curves:
        if isinstance(c, ContinuousCurve):
            cut_pieces, mids = _axis_categories(c.axis, c.feature, categories)
            row = rows_of_pieces(c.n_main, cut_pieces)
            values = [c.model_score(m) for m in mids]
            extra = list(c.scores[c.n_main:])
            k = len(values)
            layouts.append(RowPlan(np.concatenate([row, np.arange(len(extra)) + k]), k + len(extra), k + len(extra), {"cuts": cut_pieces}))
            refvals.append(np.array(values + extra))
        elif isinstance(c, LevelCurve):
            n = len(c.scores)
            layouts.append(RowPlan(np.arange(n), n, n, {}))
            refvals.append(c.scores.copy())
        elif isinstance(c, PairCurve):
            grid = np.asarray(c.term.scores, dtype=float)
            axis_rows, axis_vals, sizes = [], [], []
            for feature, ax in zip(c.features, c.axes):
                if ax["kind"] == "continuous":
                    cut_pieces, mids = _axis_categories(ax, feature, categories)
                    axis_rows.append(rows_of_pieces(ax["n_pieces"], cut_pieces))
                    axis_vals.append([int(np.searchsorted(ax["edges"], m, side="right")) for m in mids])
                else:
                    axis_rows.append(np.arange(ax["n_pieces"]))
                    axis_vals.append(list(range(ax["n_pieces"])))
                sizes.append(len(axis_vals[-1]))
            cells = grid[np.ix_(axis_vals[0], axis_vals[1])].ravel()
            cell = axis_rows[0][:, None] * sizes[1] + axis_rows[1][None, :]
            n_cells = sizes[0] * sizes[1]
            layouts.append(RowPlan(np.concatenate([cell.ravel(), [n_cells]]), n_cells + 1, sizes[0] + sizes[1], {}))
            refvals.append(np.concatenate([cells, [float(c.term.missing_score or 0.0)]]))
        else:  # pragma: no cover - every curve kind is handled above
            raise TypeError(type(c))
    return layouts, refvals


def framingham_table(curves: list[Curve], intercept: float, categories: int, scale: float) -> PointsTable:
    """Steps 3-7: points with `categories` per continuous factor and the points constant B = `scale`."""
    layouts, refvals = reference_values(curves, categories)
    points = [np.round((v - v.min()) / scale).astype(np.int64) for v in refvals]
    offset = intercept + float(sum(v.min() for v in refvals))
    return PointsTable(layouts, points, scale, offset)


def framingham_span(curves: list[Curve], categories: int) -> float:
    """Sum over factors of the largest distance from the referent, in regression units (for choosing B)."""
    _, refvals = reference_values(curves, categories)
    return float(sum(np.ptp(v) for v in refvals))
