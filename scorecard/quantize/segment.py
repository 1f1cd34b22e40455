"""Optimal segmentation of a shape curve into printed rows, by dynamic programming over its pieces.

A term's curve is a sequence of pieces (model bins, split where a printed cut could fall), each with the
model's score s_i and a weight w_i. A segmentation into k rows puts the cuts at k - 1 allowed positions and
gives each row one value; the best value of a row is its weighted mean, so the cost of a row is its weighted
sum of squared deviations. The weights are risk weights, w_i = sum over the patients in piece i of
p(1 - p): a log-odds error e moves a patient's risk by about p(1 - p) e, so the cost is (to first order) the
summed squared *risk* error, which keeps the sparse high-risk tails from being sacrificed the way plain
population-weighted error does. A cap bounds the largest |s_i - row value| over every piece, populated or
not, so no part of the training range is misstated by more than the cap whatever its weight.

The recursion is the classical optimal k-segmentation of a sequence (Bellman, "On the approximation of
curves by line segments using dynamic programming", Communications of the ACM, 1961; the same DP as
Jenks-Fisher optimal 1-D grouping, Fisher, JASA 1958), exact in O(k m^2) for m allowed cut positions.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property, lru_cache

import numpy as np

_INF = float("inf")


@dataclass
class SegmentTable:
    """Costs of every candidate row [node u, node v) of one curve; nodes are 0, the allowed cuts, and P."""

    nodes: np.ndarray  # piece index where each node starts (first 0, last P)
    cost: np.ndarray  # (m+2, m+2) weighted squared error of the row u..v (inf when u >= v)
    value: np.ndarray  # (m+2, m+2, G) the row's value (weighted mean per column group)
    scores: np.ndarray  # (P, G) the piece values tabulated

    @cached_property
    def deviation(self) -> np.ndarray:
        """(m+2, m+2) largest |score - row value| over the pieces of the row (inf when u >= v): the extremes
        of each stretch between neighbouring nodes, then running extremes over the stretches from u on.
        Worked out only when a cap may bind (`within`), as most backfitting steps never need it."""
        s, nodes, n_nodes = self.scores, self.nodes, len(self.nodes)
        later, _ = _triangles(n_nodes)
        run_max = np.maximum.accumulate(np.where(later, np.maximum.reduceat(s, nodes[:-1], axis=0)[None], -_INF), axis=1)
        run_min = np.minimum.accumulate(np.where(later, np.minimum.reduceat(s, nodes[:-1], axis=0)[None], _INF), axis=1)
        row_mean = self.value[:-1, 1:]  # row u..v for v = u + 1.. (stretches u..v - 1)
        with np.errstate(invalid="ignore"):
            dev = np.maximum(run_max - row_mean, row_mean - run_min).max(axis=2)
        deviation = np.full((n_nodes, n_nodes), _INF)
        deviation[:-1, 1:] = np.where(later[:, :, 0], dev, _INF)
        return deviation

    def whole_deviation(self) -> float:
        """deviation[0, -1] (the whole curve as one row), without the table."""
        m = self.value[0, -1]
        return float(np.maximum(self.scores.max(axis=0) - m, m - self.scores.min(axis=0)).max())

    def within(self, cap: float) -> bool:
        """True when every row meets the cap, proved without the deviation table: each row's value lies
        between the lowest and highest score of all pieces, and both are within the cap of it (rounding is
        monotone, so the table's |score - value| <= cap follows for every row)."""
        hi, lo = float(self.scores.max()), float(self.scores.min())
        return bool(hi - float(self.value.min()) <= cap and float(self.value.max()) - lo <= cap)


def segment_table(scores: np.ndarray, weights: np.ndarray, allowed: np.ndarray) -> SegmentTable:
    """Tabulate every possible row of a curve.

    `scores`, `weights`: (P,) or (P, G) - G > 1 when the curve has several columns that share the same cuts
    (a pair grid segmented along one axis, each column group keeping its own value); the cost then sums over
    the columns. `allowed`: strictly increasing piece indices (1..P-1) where a row may start."""
    s = np.asarray(scores, dtype=float)
    w = np.asarray(weights, dtype=float)
    if s.ndim == 1:
        s, w = s[:, None], w[:, None]
    n_pieces = s.shape[0]
    nodes = np.concatenate([[0], np.asarray(allowed, dtype=np.int64), [n_pieces]])
    if np.any(nodes[1:] <= nodes[:-1]):
        raise ValueError("segment_table: allowed cut positions must be strictly increasing, between 1 and P - 1")
    positive, divisor = _weight_frame(w.tobytes(), w.shape, nodes.tobytes())
    ws = w * s
    ds = _row_sums(ws, nodes)  # (N, N, G): sum over the pieces of row u..v
    dq = _row_sums(ws * s, nodes)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(positive, ds / divisor, 0.0)
        cost = np.maximum(dq - ds * mean, 0.0).sum(axis=2)
    _, upper = _triangles(len(nodes))
    cost = np.where(upper, cost, _INF)
    return SegmentTable(nodes=nodes, cost=cost, value=mean, scores=s)


def _row_sums(x: np.ndarray, nodes: np.ndarray) -> np.ndarray:
    """(N, N, G): x summed over the pieces from node u to node v (a difference of cumulative sums)."""
    c = np.cumsum(x, axis=0)[nodes - 1]
    c[0] = 0.0  # node 0 starts before the first piece
    return c[None, :] - c[:, None]


@lru_cache(maxsize=128)
def _weight_frame(w_bytes: bytes, shape: tuple, nodes_bytes: bytes) -> tuple[np.ndarray, np.ndarray]:
    """What a table needs of the weights alone (rows with weight, and the divisor of their mean), kept: the
    backfitting segments each term's changing residual thousands of times under the same weights."""
    w = np.frombuffer(w_bytes).reshape(shape)
    dw = _row_sums(w, np.frombuffer(nodes_bytes, dtype=np.int64))
    positive = dw > 0
    return positive, np.where(positive, dw, 1.0)


@lru_cache(maxsize=64)
def _triangles(n_nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """(stretch j at or after node u, as (N-1, N-1, 1)) and (node v after node u, (N, N))."""
    later = np.triu(np.ones((n_nodes - 1, n_nodes - 1), dtype=bool))[:, :, None]
    return later, np.triu(np.ones((n_nodes, n_nodes), dtype=bool), k=1)


def best_segmentations(table: SegmentTable, max_rows: int, cap: float = _INF) -> list[tuple[float, list[int]] | None]:
    """For k = 1..max_rows: (cost, cut piece indices) of the segmentation into exactly k rows minimising

        sum over rows r of sum over pieces i in r of w_i (s_i - mean_r)^2
        subject to |s_i - mean_r| <= cap for every piece,

    or None when no k-row segmentation meets the cap. Exact (dynamic programming over the allowed cuts)."""
    return [found for _k, found in segmentations_by_rows(table, max_rows, cap)]


def segmentations_by_rows(table: SegmentTable, max_rows: int, cap: float = _INF, wanted=None):
    """`best_segmentations` one k at a time, (k, found): the caller may stop early, and the cuts are traced
    back only for the k in `wanted` (default every k; found is None for the others)."""
    cost = table.cost if table.within(cap) else np.where(table.deviation <= cap, table.cost, _INF)
    n_nodes = len(table.nodes)
    columns = np.arange(n_nodes)
    best = np.full(n_nodes, _INF)
    best[0] = 0.0
    back = []
    for k in range(1, max_rows + 1):
        total = best[:, None] + cost  # (from u, to v)
        arg = np.argmin(total, axis=0)
        best = total[arg, columns]
        back.append(arg)
        end = best[-1]
        if not np.isfinite(end) or (wanted is not None and k not in wanted):
            yield k, None
            continue
        cuts = []
        v = n_nodes - 1
        for step in range(len(back) - 1, 0, -1):
            v = int(back[step][v])
            cuts.append(int(table.nodes[v]))
        yield k, (float(end), sorted(cuts))


def smallest_cap(table: SegmentTable, rows: int) -> float:
    """The smallest achievable largest error, min over segmentations into at most `rows` rows of
    max over pieces |s_i - row mean| (minimax version of the same DP)."""
    n_nodes = len(table.nodes)
    dev = np.where(np.isfinite(table.cost), table.deviation, _INF)
    best = np.full(n_nodes, _INF)
    best[0] = 0.0
    answer = _INF
    for _k in range(rows):
        best = np.min(np.maximum(best[:, None], dev), axis=0)
        answer = min(answer, float(best[-1]))
    return answer


def optimal_cuts(scores, weights, rows: int, allowed=None, cap: float = _INF) -> tuple[float, list[int]] | None:
    """Convenience: the best segmentation of a curve into exactly `rows` rows (None if the cap cannot be met).
    `allowed` defaults to every position between pieces."""
    n = len(scores)
    allowed = np.arange(1, n) if allowed is None else np.asarray(allowed)
    return best_segmentations(segment_table(scores, weights, allowed), rows, cap)[rows - 1]


def rows_of_pieces(n_pieces: int, cuts: list[int]) -> np.ndarray:
    """Row index of every piece given the cut piece indices."""
    return np.searchsorted(np.asarray(cuts, dtype=np.int64), np.arange(n_pieces), side="right")
