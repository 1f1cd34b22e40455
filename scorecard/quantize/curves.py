"""Each model term as a curve of pieces: the smallest units a printed row can hold.

A continuous term is split at every model bin edge and at every readable cut-point (see `nice`), so any
choice of printed cuts puts each piece wholly in one row and each piece has one model score. Categorical and
flag terms have one piece per level; pair terms one piece per cell of their two axes' pieces. "Not measured"
(and, for categorical terms whose model scores unknown levels at the average, "other") are pieces of their
own that always get their own row. Every patient of the evaluation population maps to one piece per term,
using the sheet's own rule (round half up to the printed decimals) on the printed side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from scorecard.model import AdditiveModel
from scorecard.model.document import Feature, Term
from scorecard.model.predict import axis_bins, feature_values, level_bins, step_bins
from scorecard.quantize.nice import candidate_cuts, cut_boundary
from scorecard.quantize.segment import best_segmentations, rows_of_pieces, segment_table, segmentations_by_rows, smallest_cap
from scorecard.sheet.printed import COMPLETED, NOT_MEASURED_TEXT, ROUNDED, flag_text, pair_name, range_text, read_units_array

EPS_WEIGHT = 1e-6  # share of the mean weight given to every piece, so unpopulated pieces still get a value
MAX_LINEAR_PIECES = 400


@dataclass
class RowPlan:
    """How one term is printed: the row of every piece, and what each row says."""

    row_of_piece: np.ndarray
    n_rows: int
    size: int  # printed rows counted against the row budget
    detail: dict = field(default_factory=dict)


@dataclass
class Option:
    size: int
    cost: float
    layout: RowPlan
    cap: float


def _missing_score(feature: Feature, term: Term) -> float | None:
    """The model's contribution for not measured: None when the model refuses missing values."""
    if feature.missing == "error":
        return None
    if feature.missing == "average" or term.missing_score is None:
        return 0.0
    return float(term.missing_score)


def _axis_pieces(feature: Feature, edges, decimals: int, max_candidates: int):
    """Boundaries of the pieces of a continuous axis, their model bin, and the readable cut positions."""
    edges = np.asarray(edges or [], dtype=float)
    rng = feature.training_range or {}
    lo = float(rng.get("min", edges[0] if len(edges) else 0.0))
    hi = float(rng.get("max", edges[-1] if len(edges) else 1.0))
    cuts = candidate_cuts(lo, hi, decimals, max_candidates)
    reading = feature.reading or ROUNDED
    cut_pos = cut_boundary(cuts, decimals, reading)
    boundaries = np.unique(np.concatenate([edges, cut_pos]))
    n_pieces = len(boundaries) + 1
    piece_bin = np.concatenate([[0], np.searchsorted(edges, boundaries, side="right")])
    # piece j starts at boundaries[j - 1]; a cut allowed there starts a row at piece j
    allowed = np.searchsorted(boundaries, cut_pos) + 1
    edge_allowed = np.searchsorted(boundaries, edges) + 1
    piece_cuts = np.concatenate([[0], np.searchsorted(cut_pos, boundaries, side="right")])
    return {
        "edges": edges, "cuts": cuts, "cut_pos": cut_pos, "boundaries": boundaries, "n_pieces": n_pieces,
        "piece_bin": piece_bin, "allowed": allowed, "edge_allowed": np.unique(edge_allowed),
        "piece_cuts": piece_cuts, "decimals": decimals, "training_range": {"min": lo, "max": hi},
        "reading": reading,
    }


def _continuous_patient_pieces(ax: dict, x: np.ndarray) -> np.ndarray:
    """Piece of each measured value: model bin from the raw value, printed side from the rounded value."""
    b = step_bins(ax["edges"], x)
    units = read_units_array(x, ax["decimals"], ax["reading"])
    c = np.searchsorted(ax["cuts"].astype(float), np.where(np.isnan(units), 0.0, units), side="right")
    table = np.full((len(ax["edges"]) + 1, len(ax["cuts"]) + 1), -1, dtype=np.int64)
    table[ax["piece_bin"], ax["piece_cuts"]] = np.arange(ax["n_pieces"])
    out = table[np.clip(b, 0, None), c]
    # float noise right at a boundary can pair a bin with a cut count no piece has: fall back to the raw value
    fallback = np.searchsorted(ax["boundaries"], np.where(np.isnan(x), 0.0, x), side="right")
    out = np.where(out < 0, fallback, out)
    return np.where(np.isnan(x), -1, out)


class Curve:
    """Base: pieces with model scores, the patients' pieces, and the special rows."""

    name: str
    kind: str
    scores: np.ndarray
    patient_piece: np.ndarray
    n_main: int  # pieces that take part in segmentation (the rest are not measured / other)

    missing_allowed = True

    def score_range(self) -> tuple[np.ndarray, np.ndarray]:
        """Lowest and highest model score inside each piece (equal for step shapes, levels and cells)."""
        return getattr(self, "score_low", self.scores), getattr(self, "score_high", self.scores)

    def certified(self) -> np.ndarray:
        """Pieces an input can reach on the sheet (a pair's not-measured cell only when the model allows it)."""
        mask = np.ones(len(self.scores), dtype=bool)
        if not self.missing_allowed:
            mask[self.n_main:] = False
        return mask

    def piece_weights(self, patient_weight: np.ndarray) -> np.ndarray:
        w = np.bincount(self.patient_piece, weights=patient_weight, minlength=len(self.scores)).astype(float)
        return w + EPS_WEIGHT * max(float(w.mean()), 1e-12)

    def special_rows(self, first_row: int) -> tuple[np.ndarray, list[dict]]:
        rows = []
        extra = np.arange(len(self.scores) - self.n_main) + first_row
        for key in self.special:
            rows.append({key: True, "text": NOT_MEASURED_TEXT if key == "missing" else "Other"})
        return extra, rows


class ContinuousCurve(Curve):
    kind = "continuous"

    def __init__(self, model: AdditiveModel, term: Term, frame, max_candidates: int):
        feature = model.feature(term.feature)
        self.name, self.term, self.feature = term.name, term, feature
        missing = _missing_score(feature, term)
        self.special = ["missing"] if missing is not None else []
        extra = [missing] if missing is not None else []
        if term.shape == "linear":
            self._linear_pieces(term, feature, max_candidates, extra)
        else:
            self.axis = _axis_pieces(feature, term.edges, feature.decimals, max_candidates)
            scores = np.asarray(term.scores, dtype=float)[self.axis["piece_bin"]]
            self.n_main = len(scores)
            self.scores = np.concatenate([scores, extra])
            self.score_low = self.score_high = self.scores
        x = feature_values(frame, feature)
        piece = _continuous_patient_pieces(self.axis, x)
        self.patient_piece = np.where(piece < 0, self.n_main, piece)

    def model_score(self, value: float) -> float:
        """The model's score at a measured value (what the exact model adds for it)."""
        if self.term.shape == "linear":
            return float(np.interp(value, self.term.edges, self.term.scores))
        return float(self.term.scores[int(np.searchsorted(self.term.edges, value, side="right"))])

    def _linear_pieces(self, term: Term, feature: Feature, max_candidates: int, extra: list) -> None:
        """A linear shape varies inside every piece: split it at the knots and on a grid of at most
        MAX_LINEAR_PIECES display-unit steps, score each piece at its middle and keep the lowest and highest
        value the model takes inside it, so the certificate stays a true bound."""
        knots = np.asarray(term.edges, dtype=float)
        scores = np.asarray(term.scores, dtype=float)
        d = feature.decimals
        lo_u, hi_u = math.ceil(knots[0] * 10**d), math.floor(knots[-1] * 10**d)
        step = max(1, math.ceil((hi_u - lo_u + 1) / MAX_LINEAR_PIECES))
        grid = cut_boundary(np.arange(lo_u, hi_u + 1, step), d, feature.reading or ROUNDED)
        edges = np.unique(np.concatenate([knots, grid]))
        self.axis = _axis_pieces(feature, list(edges), d, max_candidates)
        b = self.axis["boundaries"]
        left = np.clip(np.concatenate([[knots[0]], b]), knots[0], knots[-1])
        right = np.clip(np.concatenate([b, [knots[-1]]]), knots[0], knots[-1])
        at_left, at_right = np.interp(left, knots, scores), np.interp(right, knots, scores)
        self.n_main = len(left)
        self.scores = np.concatenate([np.interp((left + right) / 2, knots, scores), extra])
        self.score_low = np.concatenate([np.minimum(at_left, at_right), extra])
        self.score_high = np.concatenate([np.maximum(at_left, at_right), extra])

    def options(self, patient_weight: np.ndarray, max_rows: int, cap: float, nice: bool = True) -> list[Option]:
        w = self.piece_weights(patient_weight)
        return [Option(size=k, cost=cost, layout=plan, cap=cap_used)
                for k, cost, plan, cap_used in self.segmentations(self.scores, w, max_rows, cap, nice)]

    def segmentations(self, target: np.ndarray, piece_weight: np.ndarray, max_rows: int, cap: float,
                      nice: bool = True) -> list[tuple[int, float, RowPlan, float]]:
        """(k, cost, plan, cap used) for every k = 1..max_rows rows that meets the cap: the exact DP
        (`segment`) of the piece values `target` with weights `piece_weight` (the model's own curve, or a
        partial residual when backfitting). The cap is raised to the smallest `max_rows` rows can meet."""
        found, cap_used = self.cut_choices(target, piece_weight, max_rows, cap, nice)
        return [(k, cost, self.plan(k, cuts), cap_used) for k, cost, cuts in found]

    def cut_choices(self, target: np.ndarray, piece_weight: np.ndarray, max_rows: int, cap: float,
                    nice: bool = True, wanted: range | None = None,
                    first: bool = False) -> tuple[list[tuple[int, float, list[int]]], float]:
        """`segmentations` without building the plans (the backfitting keeps one of them): ([(k, cost, cuts)
        for every k that meets the cap], cap used); only the k in `wanted` (default all), and with `first`
        only the smallest such k that meets the cap."""
        n = self.n_main
        allowed = self.axis["allowed"] if nice else self.axis["edge_allowed"]
        allowed = allowed[(allowed > 0) & (allowed < n)]
        table = segment_table(target[:n], piece_weight[:n], allowed)
        rows_limit = min(max_rows, len(allowed) + 1)
        # the smallest cap rows_limit rows can meet is at most the one-row deviation: when even that is within
        # the cap, the cap stands and the minimax DP is not needed
        whole = table.whole_deviation()
        if rows_limit >= 1 and whole * (1 + 1e-9) + 1e-12 <= cap:
            cap_used = cap
        else:
            cap_used = max(cap, smallest_cap(table, rows_limit) * (1 + 1e-9) + 1e-12)
        found = []
        last = rows_limit if wanted is None else min(rows_limit, max(wanted, default=0))
        for k, f in segmentations_by_rows(table, last, cap_used, wanted):
            if f is not None:
                found.append((k, f[0], f[1]))
                if first:
                    break
        return found, cap_used

    def plan(self, k: int, cuts: list[int]) -> RowPlan:
        """The plan of k ranged rows cut at these pieces, then the special rows."""
        row = rows_of_pieces(self.n_main, cuts)
        extra, _ = self.special_rows(k)
        return RowPlan(np.concatenate([row, extra]), k + len(extra), k + len(extra), {"cuts": cuts, "k": (k,)})

    def sheet_term(self, layout: RowPlan, points: list[int]) -> dict:
        d = self.feature.decimals
        cut_units = [int(self.axis["cuts"][np.searchsorted(self.axis["allowed"], c)]) for c in layout.detail["cuts"]]
        n_ranged = len(cut_units) + 1
        # neighbouring rows that rounded to the same points print as one row (same scores, fewer lines)
        kept = [u for r, u in enumerate(cut_units) if int(points[r]) != int(points[r + 1])]
        ranged_points = [int(points[0])] + [int(points[r + 1]) for r, u in enumerate(cut_units) if u in kept]
        bounds = [None] + [u / 10**d if d else u for u in kept] + [None]
        rows = []
        for r in range(len(bounds) - 1):
            lo, hi = bounds[r], bounds[r + 1]
            rows.append({"lower": lo, "upper": hi, "text": range_text(lo, hi, d), "points": ranged_points[r]})
        _, special = self.special_rows(0)
        for k, row in enumerate(special):
            rows.append({**row, "points": int(points[n_ranged + k])})
        out = {
            "name": self.name, "kind": "continuous", "label": self.feature.label, "feature": self.feature.name,
            "unit": self.feature.unit or "", "decimals": d, "training_range": self.axis["training_range"], "rows": rows,
        }
        if self.axis["reading"] == COMPLETED:
            out["reading"] = COMPLETED
        return out


class LevelCurve(Curve):
    """Categorical or flag term: one row per level (levels of equal points may be merged afterwards)."""

    def __init__(self, model: AdditiveModel, term: Term, frame):
        feature = model.feature(term.feature)
        self.name, self.term, self.feature, self.kind = term.name, term, feature, term.kind
        scores = list(map(float, term.scores))
        self.levels = list(term.levels) if term.kind == "categorical" else [False, True]
        self.n_main = len(scores)
        missing = _missing_score(feature, term)
        self.special = []
        if missing is not None:
            self.special.append("missing")
            scores.append(missing)
        self.unseen = "error"
        if term.kind == "categorical":
            policy = term.unseen or "error"
            if policy == "average":
                self.special.append("other")
                scores.append(0.0)
                self.unseen = "other"
            elif policy == "missing" and missing is not None:
                self.unseen = "missing"
        self.scores = np.asarray(scores, dtype=float)
        values = feature_values(frame, feature)
        if term.kind == "categorical":
            idx = level_bins(term.levels, values)
            other = self.n_main + self.special.index("other") if "other" in self.special else -1
            miss = self.n_main + self.special.index("missing") if "missing" in self.special else -1
            idx = np.where(idx == -2, other if self.unseen == "other" else miss, idx)
            idx = np.where(idx == -1, miss, idx)
        else:
            miss = self.n_main if "missing" in self.special else -1
            idx = np.where(np.isnan(values), miss, values).astype(np.int64)
        self.patient_piece = np.where(idx < 0, 0, idx)  # unscorable patients were refused by the model already

    def options(self, patient_weight: np.ndarray, max_rows: int, cap: float, nice: bool = True) -> list[Option]:
        n = len(self.scores)
        layout = RowPlan(np.arange(n), n, n, {})
        return [Option(size=self.n_main, cost=0.0, layout=layout, cap=cap)]

    def sheet_term(self, layout: RowPlan, points: list[int], merge_equal: bool = False) -> dict:
        rows = []
        if self.kind == "flag":
            for v in (False, True):
                rows.append({"value": v, "text": flag_text(v), "points": int(points[int(v)])})
        else:
            groups: list[tuple[int, list[str]]] = []
            for i, lv in enumerate(self.levels):
                p = int(points[i])
                same = next((g for g in groups if g[0] == p), None) if merge_equal else None
                if same is not None:
                    same[1].append(lv)
                else:
                    groups.append((p, [lv]))
            for p, lvs in groups:
                rows.append({"levels": lvs, "text": ", ".join(_level_text(lv) for lv in lvs), "points": p})
        _, special = self.special_rows(0)
        for k, row in enumerate(special):
            rows.append({**row, "points": int(points[self.n_main + k])})
        out = {"name": self.name, "kind": self.kind, "label": self.feature.label, "feature": self.feature.name, "rows": rows}
        if self.kind == "categorical":
            out["unseen"] = self.unseen
        return out


def _level_text(level: str) -> str:
    text = level.replace("_", " ")
    return text[:1].upper() + text[1:]


class PairCurve(Curve):
    """A pair grid: rows x columns, each continuous axis cut the same way as a one-feature term."""

    kind = "pair"

    def __init__(self, model: AdditiveModel, term: Term, frame, max_candidates: int):
        self.name, self.term = term.name, term
        self.features = [model.feature(n) for n in term.features]
        self.axes = []
        patient_axis = []
        for feature, axis in zip(self.features, term.axes):
            values = feature_values(frame, feature)
            if feature.kind == "continuous":
                ax = _axis_pieces(feature, axis["edges"], feature.decimals, max_candidates)
                ax["kind"] = "continuous"
                patient_axis.append(_continuous_patient_pieces(ax, values))
            else:
                levels = axis["levels"]
                ax = {"kind": feature.kind, "n_pieces": len(levels), "piece_bin": np.arange(len(levels)), "levels": levels}
                b = axis_bins(axis, feature, values)
                patient_axis.append(np.where(b < 0, -1, b))
            self.axes.append(ax)
        grid = np.asarray(term.scores, dtype=float)
        p0, p1 = self.axes[0]["n_pieces"], self.axes[1]["n_pieces"]
        self.shape = (p0, p1)
        cells = grid[np.ix_(self.axes[0]["piece_bin"], self.axes[1]["piece_bin"])]
        self.n_main = p0 * p1
        self.special = ["missing"]
        # the model scores "either not measured" only if one of the two features may be left unmeasured
        self.missing_allowed = any(f.missing != "error" for f in self.features)
        self.scores = np.concatenate([cells.ravel(), [float(term.missing_score or 0.0)]])
        a0, a1 = patient_axis
        missing = (a0 < 0) | (a1 < 0)
        self.patient_piece = np.where(missing, self.n_main, np.clip(a0, 0, None) * p1 + np.clip(a1, 0, None))

    def _axis_groups(self, j: int, k: int, scores2d: np.ndarray, w2d: np.ndarray, other_rows: np.ndarray, nice: bool):
        """Best cuts of axis j into k rows given the other axis' grouping (cost summed over its groups)."""
        ax = self.axes[j]
        if ax["kind"] != "continuous":
            return None, np.arange(ax["n_pieces"])
        s = scores2d if j == 0 else scores2d.T
        w = w2d if j == 0 else w2d.T
        n_groups = int(other_rows.max()) + 1
        gw = np.stack([w[:, other_rows == g].sum(axis=1) for g in range(n_groups)], axis=1)
        gs = np.stack([(w * s)[:, other_rows == g].sum(axis=1) for g in range(n_groups)], axis=1)
        gmean = gs / gw
        # within-group scatter does not depend on this axis' cuts, so the grouped means carry the whole cost
        allowed = ax["allowed"] if nice else ax["edge_allowed"]
        allowed = allowed[(allowed > 0) & (allowed < ax["n_pieces"])]
        k = min(k, len(allowed) + 1)
        found = best_segmentations(segment_table(gmean, gw, allowed), k)[k - 1]
        cuts = found[1] if found else []
        return cuts, rows_of_pieces(ax["n_pieces"], cuts)

    def options(self, patient_weight: np.ndarray, max_rows: int, cap: float, nice: bool = True) -> list[Option]:
        w = self.piece_weights(patient_weight)
        out = []
        for k0 in self.axis_rows(0, max_rows):
            for k1 in self.axis_rows(1, max_rows):
                cost, plan = self.grid(self.scores, w, k0, k1, nice=nice)
                out.append(Option(size=plan.size, cost=cost, layout=plan, cap=cap))
        return out

    def axis_rows(self, j: int, max_rows: int) -> range:
        """Row counts axis j may take: 1..max_rows for a continuous axis, one row per level otherwise."""
        ax = self.axes[j]
        return range(1, max_rows + 1) if ax["kind"] == "continuous" else range(ax["n_pieces"], ax["n_pieces"] + 1)

    def grid(self, target: np.ndarray, piece_weight: np.ndarray, k0: int, k1: int, start: np.ndarray | None = None,
             nice: bool = True) -> tuple[float, RowPlan]:
        """A k0 x k1 grid fitted to the cell values `target`: each continuous axis cut by the exact DP given
        the other axis' grouping, alternating three times from `start` (the rows of axis 1; default one
        group), so each step is exact but the grid is not jointly optimal. Returns (cost, plan)."""
        p0, p1 = self.shape
        s2, w2 = target[: self.n_main].reshape(p0, p1), piece_weight[: self.n_main].reshape(p0, p1)
        if start is not None:
            rows1 = start
        else:
            rows1 = np.zeros(p1, dtype=np.int64) if self.axes[1]["kind"] == "continuous" else np.arange(p1)
        cuts0 = cuts1 = None
        for _ in range(3):  # alternate between the axes; each step is an exact DP given the other
            cuts0, rows0 = self._axis_groups(0, k0, s2, w2, rows1, nice)
            cuts1, rows1 = self._axis_groups(1, k1, s2, w2, rows0, nice)
        n1 = int(rows1.max()) + 1
        cell = rows0[:, None] * n1 + rows1[None, :]
        n_cells = (int(rows0.max()) + 1) * n1
        cw = np.bincount(cell.ravel(), weights=w2.ravel(), minlength=n_cells)
        cs = np.bincount(cell.ravel(), weights=(w2 * s2).ravel(), minlength=n_cells)
        value = cs / cw
        cost = float((w2 * (s2 - value[cell]) ** 2).sum())
        row = np.concatenate([cell.ravel(), [n_cells]])
        size = int(rows0.max()) + 1 + n1
        plan = RowPlan(row, n_cells + 1, size, {"cuts": [cuts0, cuts1], "rows": [rows0, rows1], "k": (k0, k1)})
        return cost, plan

    def sheet_term(self, layout: RowPlan, points: list[int]) -> dict:
        axes = []
        for j, (feature, ax) in enumerate(zip(self.features, self.axes)):
            if ax["kind"] == "continuous":
                d = feature.decimals
                cuts = layout.detail["cuts"][j] or []
                units = [int(ax["cuts"][np.searchsorted(ax["allowed"], c)]) for c in cuts]
                bounds = [None] + [u / 10**d if d else u for u in units] + [None]
                rows = [{"lower": bounds[r], "upper": bounds[r + 1], "text": range_text(bounds[r], bounds[r + 1], d)}
                        for r in range(len(bounds) - 1)]
                axes.append({"feature": feature.name, "kind": "continuous", "unit": feature.unit or "", "decimals": d,
                             "training_range": ax["training_range"], "rows": rows})
                if ax["reading"] == COMPLETED:
                    axes[-1]["reading"] = COMPLETED
            elif ax["kind"] == "flag":
                axes.append({"feature": feature.name, "kind": "flag",
                             "rows": [{"value": v, "text": flag_text(v)} for v in (False, True)]})
            else:
                axes.append({"feature": feature.name, "kind": "categorical",
                             "rows": [{"levels": [lv], "text": _level_text(lv)} for lv in ax["levels"]]})
        for axis, feature in zip(axes, self.features):
            if feature.missing == "error":  # the model refuses the patient: the sheet says measure it first
                axis["measure_first"] = True
        n0, n1 = len(axes[0]["rows"]), len(axes[1]["rows"])
        grid = [[int(points[r * n1 + c]) for c in range(n1)] for r in range(n0)]
        missing_points = int(points[n0 * n1]) if self.missing_allowed else min(min(row) for row in grid)
        return {
            "name": self.name, "kind": "pair", "label": pair_name([f.label for f in self.features]),
            "features": [f.name for f in self.features], "labels": [f.label for f in self.features],
            "axes": axes, "points": grid, "missing_points": missing_points, "missing_allowed": self.missing_allowed,
        }


def build_curves(model: AdditiveModel, frame, max_candidates: int) -> list[Curve]:
    curves: list[Curve] = []
    for term in model.terms:
        if term.kind == "continuous":
            curves.append(ContinuousCurve(model, term, frame, max_candidates))
        elif term.kind == "pair":
            curves.append(PairCurve(model, term, frame, max_candidates))
        else:
            curves.append(LevelCurve(model, term, frame))
    return curves
