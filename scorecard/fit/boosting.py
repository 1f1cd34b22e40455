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
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scorecard.fit.trees import quadrant_step, step_tree


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


def _odds(logodds: np.ndarray) -> np.ndarray:
    return np.exp(np.clip(logodds, -40.0, 40.0))


def base_logodds(y: np.ndarray, w: np.ndarray) -> float:
    rate = float(np.sum(w * y) / np.sum(w))
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


class _BestRound:
    """Early stopping on the held-out rows: keeps a copy of the terms at the round with the lowest held-out
    log-loss, and says when `patience` rounds have passed without lowering it by the `tolerance` share."""

    def __init__(self, held_f: np.ndarray, y_held: np.ndarray, w_held: np.ndarray, terms: list[np.ndarray],
                 settings: BoostSettings):
        self.active = len(y_held) > 0 and np.sum(w_held) > 0
        self.y, self.w, self.settings = y_held, w_held, settings
        self.best = (weighted_log_loss(held_f, y_held, w_held) if self.active else np.inf, [a.copy() for a in terms], 0)
        self.since_best = 0

    def stop_after(self, rounds: int, held_f: np.ndarray, terms: list[np.ndarray]) -> bool:
        if not self.active:
            return False
        loss = weighted_log_loss(held_f, self.y, self.w)
        if loss < self.best[0] * (1.0 - self.settings.tolerance):
            self.best = (loss, [a.copy() for a in terms], rounds)
            self.since_best = 0
            return False
        self.since_best += 1
        return self.since_best >= self.settings.patience

    def result(self, rounds: int, terms: list[np.ndarray]) -> tuple[float, list[np.ndarray], int]:
        """(held-out loss, terms, rounds) of the best round; without held-out rows, the last round's (loss NaN)."""
        return self.best if self.active else (np.nan, terms, rounds)


@np.errstate(divide="ignore", invalid="ignore")
def boost_one_feature_terms(
    codes_fit: list[np.ndarray],
    y_fit: np.ndarray,
    w_fit: np.ndarray,
    codes_held: list[np.ndarray],
    y_held: np.ndarray,
    w_held: np.ndarray,
    n_slots: list[int],
    ordered: list[bool],
    settings: BoostSettings,
) -> dict:
    """Stage 1 on one bag: returns {"intercept", "shapes" (one array per feature, one value per slot),
    "rounds", "held_loss"}. Without held-out rows, all `max_rounds` rounds are run."""
    s = settings
    intercept = base_logodds(y_fit, w_fit)
    shapes = [np.zeros(n) for n in n_slots]
    counts = [np.bincount(c, weights=w_fit, minlength=n) for c, n in zip(codes_fit, n_slots)]
    events = [np.bincount(c, weights=w_fit * y_fit, minlength=n) for c, n in zip(codes_fit, n_slots)]
    active = [j for j, c in enumerate(counts) if np.count_nonzero(c) > 1]
    odds = np.full(len(y_fit), np.exp(intercept))
    work = _buffers(len(y_fit))
    w_fit = None if np.all(w_fit == 1.0) else w_fit
    held_f = np.full(len(y_held), intercept)
    stopper = _BestRound(held_f, y_held, w_held, shapes, s)
    has_held = stopper.active
    rounds = 0
    for rounds in range(1, s.max_rounds + 1):
        moved = False
        for j in active:
            p, h = probabilities_and_hessians(odds, w_fit, work)
            G = np.bincount(codes_fit[j], weights=p, minlength=n_slots[j]) - events[j]
            H = np.bincount(codes_fit[j], weights=h, minlength=n_slots[j])
            values = step_tree(G, H, counts[j], ordered[j], s.leaves, s.l2, s.min_leaf)
            if values is None:
                continue
            delta = s.learning_rate * values
            shapes[j] += delta
            odds *= np.exp(delta).take(codes_fit[j])
            if has_held:
                held_f += delta.take(codes_held[j])
            moved = True
        if not moved or stopper.stop_after(rounds, held_f, shapes):
            break
    held_loss, best_shapes, best_rounds = stopper.result(rounds, shapes)
    return {"intercept": intercept, "shapes": best_shapes, "rounds": best_rounds, "held_loss": held_loss}


@np.errstate(divide="ignore", invalid="ignore")
def boost_pair_terms(
    pair_codes_fit: list[np.ndarray],
    start_fit: np.ndarray,
    y_fit: np.ndarray,
    w_fit: np.ndarray,
    pair_codes_held: list[np.ndarray],
    start_held: np.ndarray,
    y_held: np.ndarray,
    w_held: np.ndarray,
    grid_shapes: list[tuple[int, int]],
    settings: BoostSettings,
) -> dict:
    """Stage 2 on one bag: boost a grid per pair on top of the fixed stage-1 log-odds `start_*`.

    A pair code is row_bin * n_columns + column_bin, or n_rows * n_columns for a patient with either
    feature not measured (that slot never moves, so such patients get 0 from the pair). Each step adds the
    best 2x2 cut of the pair's gradient histogram (the same tree the FAST ranking uses)."""
    s = settings
    grids = [np.zeros(shape) for shape in grid_shapes]
    sizes = [a * b for a, b in grid_shapes]
    counts = [np.bincount(c, weights=w_fit, minlength=n + 1)[:n].reshape(shape) for c, n, shape in zip(pair_codes_fit, sizes, grid_shapes)]
    pair_events = [np.bincount(c, weights=w_fit * y_fit, minlength=n + 1) for c, n in zip(pair_codes_fit, sizes)]
    odds = _odds(start_fit)
    work = _buffers(len(y_fit))
    w_fit = None if np.all(w_fit == 1.0) else w_fit
    held_f = start_held.copy()
    stopper = _BestRound(held_f, y_held, w_held, grids, s)
    has_held = stopper.active
    rounds = 0
    for rounds in range(1, s.max_rounds + 1):
        moved = False
        for k, shape in enumerate(grid_shapes):
            p, h = probabilities_and_hessians(odds, w_fit, work)
            n = sizes[k]
            G2 = (np.bincount(pair_codes_fit[k], weights=p, minlength=n + 1) - pair_events[k])[:n].reshape(shape)
            H2 = np.bincount(pair_codes_fit[k], weights=h, minlength=n + 1)[:n].reshape(shape)
            values = quadrant_step(G2, H2, counts[k], s.l2, s.min_leaf)
            if values is None:
                continue
            delta = s.learning_rate * values
            grids[k] += delta
            flat = np.append(delta.ravel(), 0.0)
            odds *= np.exp(flat).take(pair_codes_fit[k])
            if has_held:
                held_f += flat.take(pair_codes_held[k])
            moved = True
        if not moved or stopper.stop_after(rounds, held_f, grids):
            break
    held_loss, best_grids, best_rounds = stopper.result(rounds, grids)
    return {"grids": best_grids, "rounds": best_rounds, "held_loss": held_loss}
