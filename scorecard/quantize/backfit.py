"""Rows chosen for the per-patient error: backfitting re-segmentation and allocation by its gain.

The sheet's log-odds for patient i is a + sum over terms t of v_t[row_t(i)]. What a nurse feels is each
patient's error, so the objective is the weighted per-patient error of the whole sheet,

    J = sum over patients i of w_i (y_i - a - sum_t v_t[row_t(i)])^2,

with y the exact model log-odds and w_i = p_i (1 - p_i) (a log-odds error e moves a risk by about
p(1 - p) e, so J is the summed squared risk error), optionally raised near band edges.

Backfitting (Hastie & Tibshirani, Generalized Additive Models, 1990, ch. 4): holding every other term fixed,
term t sees the partial residual r_i = y_i - a - sum_{u != t} v_u[row_u(i)]. Its best printed rows for that
residual are again an optimal segmentation, now of the residual's weighted mean per piece: J splits into a
part that does not depend on term t's rows plus sum over pieces j of W_j (m_j - v[row(j)])^2, so the exact DP
of `segment` applied to (m_j, W_j) gives the exact best rows and values of term t given the others. A step
is kept only when it lowers J, so J never rises; the terms are visited in turn until J stops falling.

Allocation by the same objective: the next printed row goes to the term (or pair-grid axis) whose best
re-segmentation with one more row lowers J the most per printed row; a pair grid still 1 x 1 (left off) is
also offered as a whole 2 x 2 grid, since an interaction often pays only with both axes cut. The rows are
added one at a time, each followed by backfitting, which gives a path of ever larger sheets; the search
then picks the smallest sheet on the path that meets every bound after rounding.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scorecard.quantize.curves import ContinuousCurve, Curve, PairCurve, RowPlan

_REL_TOL = 1e-4  # backfitting stops when a sweep lowers J by less than this share


@dataclass
class Step:
    """One sheet on the allocation path: the plan of every term and its printed rows."""

    plans: list[RowPlan]
    printed: int
    objective: float


def printed_rows(curve: Curve, plan: RowPlan) -> int:
    """Rows a nurse reads for this term under the plan; a term left with a single row (or a 1 x 1 grid)
    and no not-measured row prints nothing."""
    if isinstance(curve, PairCurve):
        k0, k1 = plan.detail["k"]
        return 0 if (k0, k1) == (1, 1) else k0 + k1
    if isinstance(curve, ContinuousCurve):
        (k,) = plan.detail["k"]
        specials = plan.n_rows - k
        return specials + 1 if k == 1 and specials else (0 if k == 1 else plan.n_rows)
    return plan.n_rows


class Backfit:
    """The sheet's row values and plans, updated term by term against the partial residual."""

    def __init__(self, curves: list[Curve], y: np.ndarray, w: np.ndarray, max_rows: int, cap: float, nice: bool = True):
        self.curves, self.y, self.w = curves, np.asarray(y, dtype=float), np.asarray(w, dtype=float)
        self.max_rows, self.cap, self.nice = max_rows, cap, nice
        self.piece_w = [c.piece_weights(self.w) for c in curves]
        # the patients' own weight per piece (piece_w less its small floor), for `target`
        self._raw_w = [np.bincount(c.patient_piece, weights=self.w, minlength=len(c.scores)) for c in curves]
        self.sw = float(self.w.sum())
        self.plans: list[RowPlan] = []
        self.values: list[np.ndarray] = []
        self.parts: list[np.ndarray] = []
        self.total = np.zeros_like(self.y)  # sum of the parts, kept up to date term by term
        self.intercept = 0.0
        # kept because they are asked for thousands of times along the path: the residual y - fitted of the
        # current state and its weighted form (None once the state moves), and per term the patients' rows
        # under its last applied piece-to-row map (a re-segmentation often keeps the cuts)
        self._residual: np.ndarray | None = None
        self._weighted_residual: np.ndarray | None = None
        self._patient_rows: list[tuple[bytes, np.ndarray] | None] = [None] * len(curves)

    # -- state --------------------------------------------------------------------------------------
    def start(self, plans: list[RowPlan]) -> None:
        """Begin from these plans, each term's values the weighted mean of its own curve in each row; then
        value-only backfitting sweeps (exact for fixed rows) bring the values to their joint fit."""
        self.plans = list(plans)
        self.values, self.parts = [], []
        for curve, plan, pw in zip(self.curves, self.plans, self.piece_w):
            v = _row_means(plan, curve.scores, pw)
            self.values.append(v)
            self.parts.append(v[plan.row_of_piece[curve.patient_piece]])
        self.total = np.sum(self.parts, axis=0)
        self.intercept = _dot(self.w, self.y - self.total) / self.sw
        self._residual = self._weighted_residual = None
        self.sweep(resegment=False)

    def fitted(self) -> np.ndarray:
        return self.intercept + self.total

    def residual(self) -> np.ndarray:
        """y - fitted of the current state (read only: shared until the state moves)."""
        if self._residual is None:
            self._residual = self.y - self.fitted()
        return self._residual

    def weighted_residual(self) -> np.ndarray:
        """w (y - fitted) of the current state, shared by every term's target until the state moves."""
        if self._weighted_residual is None:
            self._weighted_residual = self.w * self.residual()
        return self._weighted_residual

    def objective(self) -> float:
        r = self.residual()
        return _dot(self.w, r * r)

    def target(self, t: int) -> np.ndarray:
        """Per piece of term t: the weighted mean partial residual, written as the model's own score plus
        the mean error of everything else, so a piece no patient falls in keeps its own curve's score."""
        curve = self.curves[t]
        # every patient of a piece has the same sheet value and own score there, so the patients' sum of
        # w (sheet value - own score) is the piece's weight times that difference: only w (y - fitted), the
        # same for every term, is summed over patients
        shift = np.bincount(curve.patient_piece, weights=self.weighted_residual(), minlength=len(curve.scores))
        sheet_value = self.values[t][self.plans[t].row_of_piece]
        shift += self._raw_w[t] * (sheet_value - curve.scores)
        return curve.scores + shift / self.piece_w[t]

    def _cost(self, t: int, target: np.ndarray, plan: RowPlan, values: np.ndarray) -> float:
        return _dot(self.piece_w[t], (target - values[plan.row_of_piece]) ** 2)

    def _apply(self, t: int, plan: RowPlan, values: np.ndarray) -> None:
        curve = self.curves[t]
        self.plans[t], self.values[t] = plan, values
        key = plan.row_of_piece.tobytes()
        kept = self._patient_rows[t]
        if kept is None or kept[0] != key:
            kept = self._patient_rows[t] = (key, plan.row_of_piece[curve.patient_piece])
        new = values[kept[1]]
        self.total += new - self.parts[t]
        self.parts[t] = new
        self.intercept = _dot(self.w, self.y - self.total) / self.sw
        self._residual = self._weighted_residual = None

    # -- one term -----------------------------------------------------------------------------------
    def candidates(self, t: int, target: np.ndarray, grow: bool) -> list[tuple[float, RowPlan, np.ndarray]]:
        """(cost, plan, values) of the term's best plans for `target`: at its current size, or (grow) at
        each next size it may take."""
        curve, plan, pw = self.curves[t], self.plans[t], self.piece_w[t]
        out = []
        if isinstance(curve, ContinuousCurve):
            (k,) = plan.detail["k"]
            # at its size k, or (grow) the next size that meets the cap
            sizes = range(k + 1, self.max_rows + 1) if grow else range(k, k + 1)
            found, _ = curve.cut_choices(target, pw, self.max_rows, self.cap, self.nice, wanted=sizes, first=grow)
            for k2, cost, cuts in found:
                new = curve.plan(k2, cuts)
                out.append((cost, new, _row_means(new, target, pw)))
        elif isinstance(curve, PairCurve):
            k0, k1 = plan.detail["k"]
            sizes = [(k0, k1)]
            if grow:
                r0, r1 = curve.axis_rows(0, self.max_rows), curve.axis_rows(1, self.max_rows)
                sizes = [(a, b) for a, b in ((k0 + 1, k1), (k0, k1 + 1), (k0 + 1, k1 + 1)) if a in r0 and b in r1]
            start = plan.detail["rows"][1] if not grow else None
            for a, b in sizes:
                _, new = curve.grid(target, pw, a, b, start=start, nice=self.nice)
                values = _row_means(new, target, pw)
                out.append((self._cost(t, target, new, values), new, values))
        elif not grow:  # one row per level: only the values move, and it never grows
            values = _row_means(plan, target, pw)
            out.append((self._cost(t, target, plan, values), plan, values))
        return out

    def update(self, t: int) -> bool:
        """Re-segment term t against its partial residual at its current size; kept only if J falls."""
        target = self.target(t)
        current = self._cost(t, target, self.plans[t], self.values[t])
        best = min(self.candidates(t, target, grow=False), key=lambda c: c[0], default=None)
        if best is None or not best[0] < current - 1e-12 * max(1.0, current):
            return False
        self._apply(t, best[1], best[2])
        return True

    def refit_values(self, t: int) -> None:
        """Term t's values at its current rows: the exact fit to its partial residual."""
        target = self.target(t)
        values = _row_means(self.plans[t], target, self.piece_w[t])
        if self._cost(t, target, self.plans[t], values) < self._cost(t, target, self.plans[t], self.values[t]):
            self._apply(t, self.plans[t], values)

    def sweep(self, resegment: bool = True, max_sweeps: int = 6) -> float:
        """Visit every term in turn until a sweep lowers J by less than _REL_TOL of it; returns J."""
        j = self.objective()
        for _ in range(max_sweeps):
            for t in range(len(self.curves)):
                if resegment:
                    self.update(t)
                else:
                    self.refit_values(t)
            new = self.objective()
            done = j - new <= _REL_TOL * j
            j = new
            if done:
                break
        return j

    # -- allocation ---------------------------------------------------------------------------------
    def grow_once(self) -> bool:
        """Give the next printed row(s) to the term whose best plan with more rows lowers J most per printed
        row; False when every term is at its limit."""
        best = None
        for t, curve in enumerate(self.curves):
            target = self.target(t)
            current = self._cost(t, target, self.plans[t], self.values[t])
            before = printed_rows(curve, self.plans[t])
            for cost, plan, values in self.candidates(t, target, grow=True):
                extra = max(1, printed_rows(curve, plan) - before)
                gain = (current - cost) / extra
                if best is None or gain > best[0]:
                    best = (gain, t, plan, values)
        if best is None:
            return False
        _, t, plan, values = best
        self._apply(t, plan, values)
        return True

    def path(self, plans: list[RowPlan], max_steps: int = 10_000) -> list[Step]:
        """From the smallest plans, one printed row at a time (each followed by a backfitting sweep) up to
        every term's limit: the sheets the search chooses among."""
        self.start(plans)
        j = self.sweep()
        steps = [Step(list(self.plans), self.printed(), j)]
        for _ in range(max_steps):
            if not self.grow_once():
                break
            # one sweep per added row (each kept step lowers J); the full convergence of `sweep` at every
            # step cost 3-4 x the time for a J lower by < 1 % on the demo
            j = self.sweep(max_sweeps=1)
            steps.append(Step(list(self.plans), self.printed(), j))
        return steps

    def printed(self) -> int:
        return int(sum(printed_rows(c, p) for c, p in zip(self.curves, self.plans)))


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """a . b without BLAS: for a vector of 20,000 patients a threaded BLAS dot hands the work to helper threads,
    and on a loaded machine waiting for them cost ~20 ms a call (against ~20 us here); measured in
    docs/quantization.md."""
    return float(np.einsum("i,i->", a, b))


def _row_means(plan: RowPlan, target: np.ndarray, piece_weight: np.ndarray) -> np.ndarray:
    """Each row's weighted mean of the piece values: the exact best value of every row."""
    sw = np.bincount(plan.row_of_piece, weights=piece_weight, minlength=plan.n_rows)
    ss = np.bincount(plan.row_of_piece, weights=piece_weight * target, minlength=plan.n_rows)
    return ss / np.where(sw > 0, sw, 1.0)


def smallest_plans(curves: list[Curve], weight: np.ndarray, cap: float, max_rows: int, nice: bool = True) -> list[RowPlan]:
    """Every term at its fewest rows: one row per continuous term (cap permitting), a 1 x 1 pair grid."""
    plans = []
    for curve in curves:
        if isinstance(curve, PairCurve):
            plans.append(curve.grid(curve.scores, curve.piece_weights(weight), curve.axis_rows(0, max_rows)[0],
                                    curve.axis_rows(1, max_rows)[0], nice=nice)[1])
        elif isinstance(curve, ContinuousCurve):
            plans.append(curve.segmentations(curve.scores, curve.piece_weights(weight), max_rows, cap, nice)[0][2])
        else:
            plans.append(curve.options(weight, max_rows, cap, nice)[0].layout)
    return plans
