"""What a default sheet would print for each term, as a preview for the reviewer.

The sheet is made by the quantize stage's public `quantize_model` with its default bound (no risk bands, no
bootstrap interval: neither changes the rows), on the review's cohort or, without one, on the population the
quantizer draws from the model's own training counts, exactly as `scorecard quantize MODEL.json [--data ...]`
would. Nothing here decides a row: the rows, cut-points and points are the quantizer's, and a measurement finds
its row by the sheet's reading rule (`scorecard.sheet.printed.row_indices`). The only thing added is where a
row sits on the log-odds axis of a shape plot: points x log-odds per point, shifted by one constant per term so
the rows' patient-weighted mean equals the curve's (a term's level on the log-odds axis is arbitrary; the
sheet's offset absorbs it).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from scorecard.errors import CheckFailed, UserError
from scorecard.model.document import AdditiveModel, Term
from scorecard.review.weights import term_weights
from scorecard.sheet.printed import reading_of, row_indices


@dataclass
class PreviewRows:
    """One table (or one pair axis) of the default sheet: its rows, and the row each model entry falls in."""

    texts: list[str]
    points: np.ndarray  # one-feature table: points per row (measured rows, then the not-measured row if any)
    of_entry: np.ndarray  # row index (into texts) of each score entry of the model term; -1 when none
    missing_row: int | None = None  # index of the not-measured row
    block: dict | None = None  # the sheet's own term (or axis) dict, for the reading rule


@dataclass
class TermPreview:
    name: str
    points_range: int  # highest minus lowest points the term can give on the default sheet (0 when left off)
    left_off: str | None = None  # why the default sheet leaves the term off
    rows: PreviewRows | None = None  # one-feature terms
    axes: list[PreviewRows] | None = None  # pair terms: the rows of each axis
    grid: np.ndarray | None = None  # pair terms: points per (axis-0 row, axis-1 row)
    missing_points: int | None = None  # pair terms: points when either is not measured
    shift: float = 0.0  # log-odds added to points x log-odds per point to sit on the curve

    def logodds(self, points, per_point: float) -> np.ndarray:
        return np.asarray(points, dtype=float) * per_point + self.shift


@dataclass
class SheetPreview:
    """The default sheet's rows per term, or why there is none (`failure`)."""

    per_point: float = 0.0  # log-odds per point
    total: tuple[int, int] = (0, 0)
    printed_rows: int = 0
    terms: dict[str, TermPreview] = field(default_factory=dict)
    failure: str | None = None
    evaluation: str = ""

    @property
    def ok(self) -> bool:
        return self.failure is None


def sheet_preview(model: AdditiveModel, cohort: pd.DataFrame | None) -> SheetPreview:
    """The default sheet for `model` (see the module doc), read back per term; `failure` says why when the
    quantizer finds no sheet within its default limits (the review is drawn without the preview then)."""
    from scorecard.quantize import quantize_model  # the quantize stage's public entry, loaded only when asked

    try:
        doc = quantize_model(model, data=cohort, bootstrap=0)
    except CheckFailed as failed:
        return SheetPreview(failure=f"no sheet within the default limits meets the default bound ({str(failed).splitlines()[0]})")
    except UserError as refused:
        return SheetPreview(failure=f"the quantizer refuses this model or cohort: {refused}")
    return preview_of_sheet(model, cohort, doc)


def preview_of_sheet(model: AdditiveModel, cohort: pd.DataFrame | None, doc: dict) -> SheetPreview:
    """A sheet document (as `quantize_model` returns it) read back against the model's terms."""
    per_point = float(doc["scale"]["logodds_per_point"])
    out = SheetPreview(per_point=per_point, total=(int(doc["total"]["min"]), int(doc["total"]["max"])),
                       printed_rows=int(doc["report"]["printed_rows"]), evaluation=doc["provenance"]["evaluation"])
    on_sheet = {t["name"]: t for t in doc["terms"]}
    left_off = {d["name"]: d["reason"] for d in doc.get("dropped_terms") or []}
    for term in model.terms:
        block = on_sheet.get(term.name)
        if block is None:
            out.terms[term.name] = TermPreview(term.name, 0, left_off=left_off.get(term.name, "not on the default sheet"))
        elif term.kind == "pair":
            out.terms[term.name] = _pair_preview(model, term, block, cohort, per_point)
        else:
            out.terms[term.name] = _one_preview(model, term, block, cohort, per_point)
    return out


def _centre(term: Term, points_of_entry: np.ndarray, weights: np.ndarray, missing_points: float | None,
            missing_weight: float, per_point: float) -> float:
    """The shift putting the rows' patient-weighted mean log-odds on the curve's."""
    scores = np.asarray(term.scores, dtype=float).ravel()
    w = np.asarray(weights, dtype=float).ravel()
    pts = np.asarray(points_of_entry, dtype=float).ravel()
    keep = np.isfinite(pts)
    wt, curve, sheet = w[keep].sum(), (w[keep] * scores[keep]).sum(), (w[keep] * pts[keep]).sum() * per_point
    if missing_points is not None and term.missing_score is not None and missing_weight > 0:
        wt += missing_weight
        curve += missing_weight * term.missing_score
        sheet += missing_weight * missing_points * per_point
    if wt <= 0:  # no weights at all: line the rows up on the unweighted mean
        return float(scores[keep].mean() - pts[keep].mean() * per_point) if keep.any() else 0.0
    return float((curve - sheet) / wt)


def _representatives(term_edges, shape: str) -> np.ndarray:
    """A value inside each model bin (step shape), or the knots themselves (linear shape)."""
    edges = np.asarray(term_edges or [], dtype=float)
    if shape == "linear" or edges.size == 0:
        return edges if edges.size else np.array([0.0])
    width = np.diff(edges).min() if edges.size > 1 else 1.0
    inner = (edges[:-1] + edges[1:]) / 2
    return np.r_[edges[0] - width / 2, inner, edges[-1] + width / 2]


def _table_rows(block: dict, kind: str, entries, missing_ok: bool) -> PreviewRows:
    """Rows of a sheet table (or pair axis) and the row of each model entry: continuous entries are values
    read by the sheet's rule, categorical entries levels, flag entries False/True."""
    rows = block["rows"]
    texts = [r["text"] for r in rows]
    points = np.array([r.get("points", 0) for r in rows], dtype=float)
    missing_row = next((i for i, r in enumerate(rows) if r.get("missing")), None)
    if kind == "continuous":
        of_entry = row_indices(rows, np.asarray(entries, dtype=float), int(block["decimals"]), reading_of(block))
    elif kind == "flag":
        at = {bool(r["value"]): i for i, r in enumerate(rows) if "value" in r}
        of_entry = np.array([at.get(bool(v), -1) for v in entries])
    else:
        at = {lv: i for i, r in enumerate(rows) for lv in r.get("levels", [])}
        other = next((i for i, r in enumerate(rows) if r.get("other")), -1)
        of_entry = np.array([at.get(lv, other) for lv in entries])
    return PreviewRows(texts, points, np.asarray(of_entry, dtype=np.int64), missing_row if missing_ok else None, block)


def _one_preview(model: AdditiveModel, term: Term, block: dict, cohort, per_point: float) -> TermPreview:
    if term.kind == "continuous":
        entries = _representatives(term.edges, term.shape)
    elif term.kind == "flag":
        entries = [False, True]
    else:
        entries = list(term.levels)
    rows = _table_rows(block, term.kind, entries, missing_ok=True)
    weights = term_weights(model, term, cohort)
    pts = np.where(rows.of_entry >= 0, rows.points[np.maximum(rows.of_entry, 0)], np.nan)
    missing_points = None if rows.missing_row is None else rows.points[rows.missing_row]
    preview = TermPreview(term.name, int(rows.points.max() - rows.points.min()), rows=rows)
    preview.shift = _centre(term, pts, weights.per_score, missing_points, weights.not_measured, per_point)
    return preview


def _pair_preview(model: AdditiveModel, term: Term, block: dict, cohort, per_point: float) -> TermPreview:
    axes = []
    for name, axis, sheet_axis in zip(term.features, term.axes, block["axes"]):
        feature = model.feature(name)
        if feature.kind == "continuous":
            entries = _representatives(axis["edges"], "step")
        elif feature.kind == "flag":
            entries = [False, True]
        else:
            entries = list(axis["levels"])
        axes.append(_table_rows(sheet_axis, feature.kind, entries, missing_ok=False))
    grid = np.asarray(block["points"], dtype=float)
    i0, i1 = axes[0].of_entry, axes[1].of_entry
    cells = grid[np.ix_(np.maximum(i0, 0), np.maximum(i1, 0))]
    cells[(i0 < 0)[:, None] | (i1 < 0)[None, :]] = np.nan
    weights = term_weights(model, term, cohort)
    allowed = block.get("missing_allowed", True)
    missing_points = int(block["missing_points"]) if allowed else None
    values = [grid.max(), grid.min()] + ([missing_points] if missing_points is not None else [])
    preview = TermPreview(term.name, int(max(values) - min(values)), axes=axes, grid=grid, missing_points=missing_points)
    preview.shift = _centre(term, cells, weights.per_score, missing_points, weights.not_measured, per_point)
    return preview
