"""Which pairs of features deserve a two-feature grid: the FAST ranking and a held-out check of each pair.

Ranking (FAST, Lou, Caruana, Gehrke & Hooker, KDD 2013): on the residuals of the one-feature model, build
each pair's 2-D histogram of gradients and hessians and score the pair by the gain of its best 2x2 cut.
Because the one-feature shapes have already taken the marginal signal, what is left is mostly interaction.

Choosing how many (`auto`): the rows are split in two random halves; each pair's histograms are merged to
at most `test_bins` bins per axis (a stable cut needs fewer, fuller cells); the best cut chosen on one half is
judged on the other half by the interaction contrast of its four cells, delta = t11 - t10 - t01 + t00 with
t = -G/H the Newton value of each cell; delta^2 / sum(1/H) is the one-degree-of-freedom score statistic for
interaction in a 2x2 table (common practice for logistic models). Doing this both ways (cross-fitting) and
adding the two independent statistics gives a chi-square with 2 df under no interaction. A pair is kept
when its p-value is below `alpha` / (number of pairs ranked), Bonferroni's correction.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.stats import chi2

from scorecard.fit.trees import best_quadrant_cut


@dataclass
class PairScore:
    first: int
    second: int
    gain: float  # FAST gain on all rows
    statistic: float  # cross-fitted held-out interaction statistic (2 df)
    p_value: float


def pair_histograms(row_code, col_code, shape, values):
    """2-D histograms (one per array in `values`) over patients measured on both features."""
    n = shape[0] * shape[1]
    flat = np.where((row_code >= 0) & (col_code >= 0), row_code * shape[1] + col_code, n)
    return tuple(np.bincount(flat, weights=v, minlength=n + 1)[:n].reshape(shape) for v in values)


def interaction_statistic(G2, H2, a: int, b: int) -> float:
    """delta^2 / sum(1/H) of the 2x2 table made by cutting after row a and column b (see module doc)."""
    rows = np.arange(G2.shape[0]) > a
    cols = np.arange(G2.shape[1]) > b
    cells = []
    for r in (False, True):
        for c in (False, True):
            mask = (rows == r)[:, None] & (cols == c)[None, :]
            cells.append((G2[mask].sum(), H2[mask].sum()))
    if any(hh <= 0 for _, hh in cells):
        return 0.0
    t = [-gg / hh for gg, hh in cells]
    delta = t[3] - t[2] - t[1] + t[0]
    return float(delta * delta / sum(1.0 / hh for _, hh in cells))


def _groups(weight: np.ndarray, most: int) -> np.ndarray:
    """Group index of each bin when adjacent bins are merged into at most `most` groups of similar weight."""
    if len(weight) <= most:
        return np.arange(len(weight))
    share = np.cumsum(weight) / max(weight.sum(), 1e-300)
    return np.minimum((share * most - 1e-9).astype(int).clip(0), most - 1)


def _merge(grid: np.ndarray, groups) -> np.ndarray:
    """Sum the cells of `grid` within row groups and column groups (a matrix product with 0/1 maps)."""
    rows, cols = groups
    row_map = np.zeros((rows.max() + 1, len(rows)))
    row_map[rows, np.arange(len(rows))] = 1.0
    col_map = np.zeros((len(cols), cols.max() + 1))
    col_map[np.arange(len(cols)), cols] = 1.0
    return row_map @ grid @ col_map


def pair_histogram_sums(coarse_codes, shapes, g, h, w, half) -> dict:
    """Every pair's 2-D histograms of g, h and w on each half of the rows: {(j, k): (Ga, Ha, Ca, Gb, Hb, Cb)}.

    A sum over rows, so histograms of separate blocks of rows add up to the histograms of all of them (the
    Dask engine sums its partitions'). `half` marks the rows of half a."""
    sums = {}
    other = ~half
    codes_a = [c[half] for c in coarse_codes]
    codes_b = [c[other] for c in coarse_codes]
    values_a = (g[half], h[half], w[half])
    values_b = (g[other], h[other], w[other])
    for j in range(len(coarse_codes)):
        for k in range(j + 1, len(coarse_codes)):
            shape = (shapes[j], shapes[k])
            if shape[0] < 2 or shape[1] < 2:
                continue
            sums[(j, k)] = (pair_histograms(codes_a[j], codes_a[k], shape, values_a)
                            + pair_histograms(codes_b[j], codes_b[k], shape, values_b))
    return sums


def rank_pairs(
    coarse_codes: list[np.ndarray],
    shapes: list[int],
    g: np.ndarray,
    h: np.ndarray,
    w: np.ndarray,
    half: np.ndarray,
    l2: float,
    min_leaf: float,
    test_bins: int = 8,
) -> list[PairScore]:
    """Every pair of features, ranked by FAST gain (largest first), each with its held-out statistic.

    `coarse_codes[j]` holds each patient's coarse bin of feature j (-1: not measured); `g`, `h` are the
    gradient and hessian of the log-loss at the one-feature model; `half` marks the rows on which the cut is
    chosen for the held-out statistic (the others judge it)."""
    sums = pair_histogram_sums(coarse_codes, shapes, g, h, w, half)
    return rank_from_histograms(sums, np.sum(w), np.sum(w * w), l2, min_leaf, test_bins)


def rank_from_histograms(sums: dict, weight: float, weight_squared: float, l2: float, min_leaf: float,
                         test_bins: int = 8) -> list[PairScore]:
    """The ranking of `rank_pairs` from the pairs' half histograms (`pair_histogram_sums`) and the sums of the
    weights and of their squares. With unequal weights the statistic is taken at Kish's effective sample size,
    (sum w)^2 / sum w^2 (Kish 1965, common practice for weighted samples), so multiplying every weight by a
    constant or by an arbitrary column cannot manufacture significance."""
    scores = []
    effective = float(weight / weight_squared) if weight_squared > 0 else 1.0
    for (j, k), (Ga, Ha, Ca, Gb, Hb, Cb) in sums.items():
        C2 = Ca + Cb
        gain, _, _ = best_quadrant_cut(Ga + Gb, Ha + Hb, C2, l2, min_leaf)  # the two halves make all rows
        statistic = 0.0
        groups = (_groups(C2.sum(axis=1), test_bins), _groups(C2.sum(axis=0), test_bins))
        half_a = [_merge(m, groups) for m in (Ga, Ha, Ca)]
        half_b = [_merge(m, groups) for m in (Gb, Hb, Cb)]
        for chooser, judge in ((half_a, half_b), (half_b, half_a)):
            _, a, b = best_quadrant_cut(*chooser, l2, min_leaf)
            if a >= 0:
                statistic += interaction_statistic(judge[0], judge[1], a, b)
        statistic *= effective
        scores.append(PairScore(j, k, gain, statistic, float(chi2.sf(statistic, 2))))
    scores.sort(key=lambda s: (-s.gain, s.first, s.second))
    return scores


def choose_pairs(ranking: list[PairScore], pairs, max_pairs: int, alpha: float) -> list[PairScore]:
    """`pairs` = an integer (take the top N) or "auto" (those passing the Bonferroni-corrected held-out
    test, in FAST order, at most `max_pairs`)."""
    if pairs == "auto":
        bound = alpha / max(len(ranking), 1)
        return [s for s in ranking if s.p_value < bound and s.gain > 0][:max_pairs]
    return [s for s in ranking if s.gain > 0][: int(pairs)]
