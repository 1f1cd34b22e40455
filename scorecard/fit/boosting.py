"""Cyclic gradient boosting of additive terms on one bag of rows.

Stage 1 grows one shape per feature; stage 2 grows a grid per chosen pair on top of the stage-1 shapes.
Both are the round-robin ("cyclic") boosting of Lou, Caruana & Gehrke (KDD 2012, "Intelligible models for
classification and regression") and Lou, Caruana, Gehrke & Hooker (KDD 2013): in every round each term in
turn receives one tiny tree fitted to the current gradient of the log-loss, scaled by a low learning rate,
so all shapes grow together and none absorbs another's signal. Rounds stop when the log-loss on the bag's
held-out rows has not improved for `patience` rounds; the best round is kept (early stopping).

What is minimised: the weighted log-loss  sum_i w_i [log(1 + exp(F_i)) - y_i F_i]  over the bag's fitting
rows, with F_i = intercept + sum_j f_j(x_ij) (+ sum of pair grids), in small Newton steps.

Cost of a step: two weighted histograms (np.bincount) and one update of the per-row odds, i.e. O(rows),
plus the tree on the histogram, O(bins). The odds exp(F) are updated multiplicatively so a step needs no
exponential per row.

The loop (`boost_terms`) never touches rows: it asks a histogram source (`RowsInMemory` here, the Dask
engine's partitions in `scorecard/fit/dask_engine.py`) for the sums it needs and tells it each step, so the
algorithm has one home whatever holds the rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Generator, Protocol

import numpy as np

from scorecard.fit.trees import linear_step, quadrant_step, step_tree


@dataclass(frozen=True)
class BoostSettings:
    """One repeat's settings (the estimator fills them from `scorecard.fit.defaults`)."""

    learning_rate: float
    leaves: int
    max_rounds: int
    patience: int
    tolerance: float  # a round counts as better only if it lowers the held-out loss by this share
    l2: float  # the shrinkage
    min_leaf: float
    held_out_share: float
    linear: bool = False  # stage 1 first grows straight lines in each ordered feature's bin position
    # (`linear_step`) to its best round, then steps on top of them to theirs


def split_rows(y: np.ndarray, fraction: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Stratified random split into (fitting rows, held-out rows); held-out is empty when too few rows."""
    fit_parts, held_parts = [], []
    for label in (0.0, 1.0):
        rows = np.flatnonzero(y == label)
        rows = rows[rng.permutation(len(rows))]
        n_held = int(round(fraction * len(rows)))
        if len(rows) - n_held < 1:
            n_held = 0
        held_parts.append(rows[:n_held])
        fit_parts.append(rows[n_held:])
    return np.sort(np.concatenate(fit_parts)), np.sort(np.concatenate(held_parts))


def weighted_log_loss(logodds: np.ndarray, y: np.ndarray, w: np.ndarray) -> float:
    """Mean log-loss, sum w [log(1+e^F) - y F] / sum w."""
    return float(np.sum(w * (np.logaddexp(0.0, logodds) - y * logodds)) / np.sum(w))


def log_loss_sums(logodds: np.ndarray, y: np.ndarray, w: np.ndarray) -> tuple[float, float]:
    """(sum w [log(1+e^F) - y F], sum w): the two sums a held-out loss is made of, for adding up partitions."""
    return float(np.sum(w * (np.logaddexp(0.0, logodds) - y * logodds))), float(np.sum(w))


def _odds(logodds: np.ndarray) -> np.ndarray:
    return np.exp(np.clip(logodds, -40.0, 40.0))


def base_logodds(y: np.ndarray, w: np.ndarray) -> float:
    return logodds_of_rate(np.sum(w * y), np.sum(w))


def logodds_of_rate(events: float, weight: float) -> float:
    """Log-odds of the weighted event rate events / weight, kept away from 0 and 1."""
    rate = float(events / weight)
    rate = min(max(rate, 1e-6), 1 - 1e-6)
    return float(np.log(rate / (1 - rate)))


def _buffers(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    return np.empty(n), np.empty(n), np.empty(n)


def probabilities_and_hessians(odds, w, work):
    """p = odds / (1 + odds) and the log-loss hessian p(1 - p) = p / (1 + odds) per row (times the weights),
    written into preallocated buffers (a step runs thousands of times; fresh arrays cost page faults).
    The gradient p - y is never formed: its histogram is hist(p) - hist(y), and hist(y) is fixed."""
    q, p, h = work
    np.add(odds, 1.0, out=q)
    np.reciprocal(q, out=q)
    np.multiply(odds, q, out=p)
    np.multiply(p, q, out=h)
    if w is not None:
        p *= w
        h *= w
    return p, h


class HistogramSource(Protocol):
    """What the boosting loop needs from the rows of one bag; `columns` are integer code columns (a feature's
    bins in stage 1, a pair's cells in stage 2), column j having `n_slots[j]` slots."""

    n_slots: list[int]

    def totals(self) -> tuple[float, float]:
        """(sum of weights, sum of weighted events) over the fitting rows."""

    def start(self, logodds_offset: float) -> None:
        """Begin at F = the source's own starting model + `logodds_offset` on every row (fit and held-out)."""

    def fixed_histograms(self) -> tuple[list[np.ndarray], list[np.ndarray]]:
        """Per column, the fitting rows' weight and weighted events per slot (they never change)."""

    def gradient_hessian(self, j: int) -> tuple[np.ndarray, np.ndarray]:
        """Per slot of column j, sum w p and sum w p (1 - p) at the current model (fitting rows)."""

    def move(self, j: int, delta: np.ndarray) -> None:
        """Add delta[slot of column j] to every row's log-odds."""

    def has_held(self) -> bool:
        """Whether there are held-out rows with positive weight (early stopping is possible)."""

    def held_loss(self) -> float:
        """Weighted mean log-loss on the held-out rows at the current model."""

    def finish(self) -> None:
        """The loop is done: let go of the per-row state."""


class RowsInMemory:
    """A bag's rows held in this process: code columns, outcome and weights of the fitting and held-out rows,
    and each row's starting log-odds (None: 0, the offset alone)."""

    def __init__(self, columns_fit, y_fit, w_fit, columns_held, y_held, w_held, n_slots, start_fit=None, start_held=None):
        self.columns_fit, self.y_fit, self.w_fit = columns_fit, y_fit, w_fit
        self.columns_held, self.y_held, self.w_held = columns_held, y_held, w_held
        self.n_slots = list(n_slots)
        self.start_fit, self.start_held = start_fit, start_held
        self._w = None if np.all(w_fit == 1.0) else w_fit
        self._held = len(y_held) > 0 and np.sum(w_held) > 0
        self._work = None

    def totals(self):
        return np.sum(self.w_fit), np.sum(self.w_fit * self.y_fit)

    def start(self, logodds_offset):
        if self.start_fit is None:
            self.odds = np.full(len(self.y_fit), np.exp(logodds_offset))
            self.held_f = np.full(len(self.y_held), logodds_offset)
        else:
            self.odds = _odds(self.start_fit + logodds_offset)
            self.held_f = self.start_held + logodds_offset
        self._work = _buffers(len(self.y_fit))

    def fixed_histograms(self):
        weights = [np.bincount(c, weights=self.w_fit, minlength=n) for c, n in zip(self.columns_fit, self.n_slots)]
        events = [np.bincount(c, weights=self.w_fit * self.y_fit, minlength=n) for c, n in zip(self.columns_fit, self.n_slots)]
        return weights, events

    def gradient_hessian(self, j):
        p, h = probabilities_and_hessians(self.odds, self._w, self._work)
        n = self.n_slots[j]
        return np.bincount(self.columns_fit[j], weights=p, minlength=n), np.bincount(self.columns_fit[j], weights=h, minlength=n)

    def move(self, j, delta):
        self.odds *= np.exp(delta).take(self.columns_fit[j])
        if self._held:
            self.held_f += delta.take(self.columns_held[j])

    def has_held(self):
        return self._held

    def held_loss(self):
        return weighted_log_loss(self.held_f, self.y_held, self.w_held)

    def held_sums(self) -> tuple[float, float]:
        """The held-out loss as its two sums (`log_loss_sums`), for adding up blocks of rows."""
        return log_loss_sums(self.held_f, self.y_held, self.w_held)

    def finish(self):
        self.odds = self.held_f = self._work = None


class _BestRound:
    """Early stopping on the held-out rows: keeps a copy of the terms at the round with the lowest held-out
    log-loss, and says when `patience` rounds have passed without lowering it by the `tolerance` share."""

    def __init__(self, active: bool, loss: float, terms: list[np.ndarray], settings: BoostSettings):
        self.active, self.settings = active, settings
        self.best = (loss if active else np.inf, [a.copy() for a in terms], 0)
        self.since_best = 0

    def stop_after(self, rounds: int, loss: float, terms: list[np.ndarray]) -> bool:
        if loss < self.best[0] * (1.0 - self.settings.tolerance):
            self.best = (loss, [a.copy() for a in terms], rounds)
            self.since_best = 0
            return False
        self.since_best += 1
        return self.since_best >= self.settings.patience

    def result(self, rounds: int, terms: list[np.ndarray]) -> tuple[float, list[np.ndarray], int]:
        """(held-out loss, terms, rounds) of the best round; without held-out rows, the last round's (loss NaN)."""
        return self.best if self.active else (np.nan, terms, rounds)


# The loop is written as a generator of requests to a histogram source: ("method", *arguments) is answered
# by `source.method(*arguments)`. `answer_with` answers them one by one; the Dask engine answers many bags'
# requests in one call per partition. Either way the algorithm below is the only copy.
Requests = Generator[tuple, object, object]

# A step rule: (column, G, H, fixed weight per slot) -> the Newton value of every slot of the column, or None.
StepRule = Callable[[int, np.ndarray, np.ndarray, np.ndarray], "np.ndarray | None"]


def answer_with(source: HistogramSource, requests: Requests):
    """Run a request generator against `source` to its end; its return value, the source finished."""
    answer = None
    try:
        while True:
            try:
                method, *arguments = requests.send(answer)
            except StopIteration as done:
                return done.value
            answer = getattr(source, method)(*arguments)
    finally:
        source.finish()


@np.errstate(divide="ignore", invalid="ignore")
def boost_terms(step: StepRule, columns: list[int], n_slots: list[int], offset: float, settings: BoostSettings,
                initial: list[np.ndarray] | None = None) -> Requests:
    """The cyclic boosting loop: every round, each of `columns` in turn gets one step fitted to its histogram,
    starting from the terms `initial` (None: zeros).

    Returns (terms: one array per column of the source, one value per slot; rounds; held-out loss) of the
    best round."""
    s = settings
    yield ("start", offset)
    weights, events = yield ("fixed_histograms",)
    terms = [np.zeros(n) for n in n_slots]
    for j, values in enumerate(initial or ()):
        if np.any(values != 0):
            terms[j] = values.copy()
            yield ("move", j, terms[j])
    has_held = yield ("has_held",)
    stopper = _BestRound(has_held, (yield ("held_loss",)) if has_held else np.inf, terms, s)
    rounds = 0
    for rounds in range(1, s.max_rounds + 1):
        moved = False
        for j in columns:
            P, H = yield ("gradient_hessian", j)
            values = step(j, P - events[j], H, weights[j])
            if values is None:
                continue
            delta = s.learning_rate * values
            terms[j] += delta
            yield ("move", j, delta)
            moved = True
        if not moved or (has_held and stopper.stop_after(rounds, (yield ("held_loss",)), terms)):
            break
    held_loss, best, best_rounds = stopper.result(rounds, terms)
    return best, best_rounds, held_loss


def one_feature_terms(n_slots: list[int], ordered: list[bool], settings: BoostSettings, positions=None) -> Requests:
    """Stage 1 on one bag's source (columns = features' bins): {"intercept", "shapes" (one array per feature,
    one value per slot), "rounds", "held_loss"}. Without held-out rows, all `max_rounds` rounds are run.
    With `settings.linear`, a first pass grows every ordered feature as a straight line in `positions[j]`
    (its measured bins' standardised mean values; categorical features take tree steps) until the held-out
    loss stops falling, and a second pass of tree steps continues from its best round: a line plus the shape
    the held-out rows still support. "rounds" counts both passes."""
    s = settings
    weight, events = yield ("totals",)
    intercept = logodds_of_rate(events, weight)
    counts, _ = yield ("fixed_histograms",)
    active = [j for j, c in enumerate(counts) if np.count_nonzero(c) > 1]

    def step(j, G, H, C):
        return step_tree(G, H, C, ordered[j], s.leaves, s.l2, s.min_leaf)

    def line(j, G, H, C):
        if positions[j] is not None:
            return linear_step(G, H, positions[j], s.l2)
        return step(j, G, H, C)

    lines, line_rounds = None, 0
    if s.linear and positions is not None:
        lines, line_rounds, _ = yield from boost_terms(line, active, n_slots, intercept, s)
    shapes, rounds, held_loss = yield from boost_terms(step, active, n_slots, intercept, s, lines)
    rounds += line_rounds
    return {"intercept": intercept, "shapes": shapes, "rounds": rounds, "held_loss": held_loss}


def pair_terms(grid_shapes: list[tuple[int, int]], settings: BoostSettings) -> Requests:
    """Stage 2 on one bag's source (columns = pairs' cells, each with one last slot for a patient with either
    feature not measured, which never moves), on top of the source's own starting model (the bag's stage-1
    log-odds). Each step adds the best 2x2 cut of the pair's gradient histogram (the same tree the FAST ranking
    uses)."""
    s = settings
    sizes = [a * b for a, b in grid_shapes]

    def step(k, G, H, C):
        n, shape = sizes[k], grid_shapes[k]
        values = quadrant_step(G[:n].reshape(shape), H[:n].reshape(shape), C[:n].reshape(shape), s.l2, s.min_leaf)
        return None if values is None else np.append(values.ravel(), 0.0)

    flat, rounds, held_loss = yield from boost_terms(step, list(range(len(grid_shapes))), [n + 1 for n in sizes], 0.0, s)
    grids = [t[:n].reshape(shape) for t, n, shape in zip(flat, sizes, grid_shapes)]
    return {"grids": grids, "rounds": rounds, "held_loss": held_loss}


def boost_one_feature_terms(codes_fit, y_fit, w_fit, codes_held, y_held, w_held, n_slots, ordered, settings) -> dict:
    """Stage 1 on one bag held in memory (see `one_feature_terms`)."""
    source = RowsInMemory(codes_fit, y_fit, w_fit, codes_held, y_held, w_held, n_slots)
    return answer_with(source, one_feature_terms(n_slots, ordered, settings))


def boost_pair_terms(pair_codes_fit, start_fit, y_fit, w_fit, pair_codes_held, start_held, y_held, w_held,
                     grid_shapes, settings) -> dict:
    """Stage 2 on one bag held in memory: a pair code is row_bin * n_columns + column_bin, or
    n_rows * n_columns for a patient with either feature not measured (see `pair_terms`)."""
    slots = [a * b + 1 for a, b in grid_shapes]
    source = RowsInMemory(pair_codes_fit, y_fit, w_fit, pair_codes_held, y_held, w_held, slots, start_fit, start_held)
    return answer_with(source, pair_terms(grid_shapes, settings))
