"""The tiny trees a boosting step adds, grown on histograms of gradients rather than on rows.

A histogram holds, per bin, the summed gradient G, summed hessian H and (weighted) patient count C of the
log-loss at the current model. Splitting a bin range into leaves and giving each leaf the Newton value
-G/(H + l2) is the second-order boosting step of Friedman (Annals of Statistics, 2001) and Chen & Guestrin
(XGBoost, KDD 2016): the split gain G_L^2/(H_L+l2) + G_R^2/(H_R+l2) - G^2/(H+l2) is twice the decrease of the
second-order approximation of the loss. A step therefore costs O(bins), whatever the number of rows.
"""

from __future__ import annotations

import numpy as np


def _best_cut(cg, ch, cc, start, stop, l2, min_leaf):
    """Best single cut of ordered positions [start, stop), from prefix sums (with a leading 0).

    Cut s puts positions [start, s) in the left leaf. Since counts only accumulate, the cuts that leave at
    least `min_leaf` patients on both sides form one contiguous run, found by binary search."""
    if stop - start < 2:
        return 0.0, -1
    lo = max(start + 1, int(cc.searchsorted(cc[start] + min_leaf, side="left")))
    hi = min(stop - 1, int(cc.searchsorted(cc[stop] - min_leaf, side="right")) - 1)
    if lo > hi:
        return 0.0, -1
    gt, ht = cg[stop] - cg[start], ch[stop] - ch[start] + l2
    gl = cg[lo : hi + 1] - cg[start]
    hl = ch[lo : hi + 1] - (ch[start] - l2)
    gr = gt - gl
    hr = ht + l2 - hl
    score = gl * gl / hl + gr * gr / hr  # callers silence 0/0 warnings (an empty leaf with l2 = 0)
    i = int(score.argmax())
    gain = float(score[i]) - gt * gt / ht
    if not gain > 1e-12:  # also refuses NaN
        return 0.0, -1
    return gain, lo + i


def _grow(order, G, H, C, leaves, l2, min_leaf):
    """Best tree of up to `leaves` (2 or 3) contiguous leaves along `order` (None: the bins' own order).

    Returns (gain, cut positions, prefix sums of G and H along the order)."""
    n = len(G)
    cg, ch, cc = np.zeros(n + 1), np.zeros(n + 1), np.zeros(n + 1)
    if order is None:
        G.cumsum(out=cg[1:])
        H.cumsum(out=ch[1:])
        C.cumsum(out=cc[1:])
    else:
        G.take(order).cumsum(out=cg[1:])
        H.take(order).cumsum(out=ch[1:])
        C.take(order).cumsum(out=cc[1:])
    gain, cut = _best_cut(cg, ch, cc, 0, n, l2, min_leaf)
    if cut < 0:
        return 0.0, [], cg, ch
    cuts = [cut]
    if leaves >= 3:
        left = _best_cut(cg, ch, cc, 0, cut, l2, min_leaf)
        right = _best_cut(cg, ch, cc, cut, n, l2, min_leaf)
        extra = max(left, right, key=lambda t: t[0])
        if extra[1] >= 0:
            gain += extra[0]
            cuts = sorted(cuts + [extra[1]])
    return gain, cuts, cg, ch


def step_tree(G: np.ndarray, H: np.ndarray, C: np.ndarray, ordered: bool, leaves: int, l2: float, min_leaf: float):
    """Fit one tiny tree to a one-feature histogram; return the Newton value of every slot, or None.

    Slots 0..n-2 are the ordinary bins and slot n-1 is "not measured". For an ordered (continuous or flag)
    feature the leaves are runs of adjacent bins and the not-measured slot joins either end, whichever
    gains more (the missing-value rule of XGBoost, Chen & Guestrin 2016). For a categorical feature the
    levels are first sorted by G/(H + l2), which makes the best contiguous cut the best partition for a
    second-order loss (Fisher 1958, as used by LightGBM, Ke et al. 2017).
    """
    n = len(G)
    if ordered:
        orders = [None]
        if C[n - 1] > 0:
            orders.append(np.concatenate(([n - 1], np.arange(n - 1))))
    else:
        orders = [np.argsort(G / (H + l2), kind="stable")]
    best = None
    for order in orders:
        grown = _grow(order, G, H, C, leaves, l2, min_leaf)
        if grown[1] and (best is None or grown[0] > best[0][0]):
            best = (grown, order)
    if best is None:
        return None
    (gain, cuts, cg, ch), order = best
    bounds = [0, *cuts, n]
    along = np.empty(n)
    for a, b in zip(bounds[:-1], bounds[1:]):
        along[a:b] = -(cg[b] - cg[a]) / (ch[b] - ch[a] + l2)
    if order is None:
        return along
    values = np.empty(n)
    values[order] = along
    return values


def quadrant_sums(A: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, float]:
    """For every cut (after row a, after column b) of grid A: the sums of its four quadrants."""
    S = A.cumsum(axis=0).cumsum(axis=1)
    top_left = S[:-1, :-1]
    top = S[:-1, -1:]
    left = S[-1:, :-1]
    total = float(S[-1, -1])
    return top_left, top - top_left, left - top_left, total - top - left + top_left, total


def quadrant_gains(G2: np.ndarray, H2: np.ndarray, C2: np.ndarray, l2: float, min_leaf: float) -> np.ndarray:
    """Gain of every 2x2 cut of a two-feature histogram (one cut per axis, four Newton leaves).

    This is the FAST interaction test of Lou, Caruana, Gehrke & Hooker (KDD 2013), "Accurate intelligible
    models with pairwise interactions", written for the second-order loss: the gain of the best such cut
    ranks a pair. Invalid cuts (a quadrant with fewer than `min_leaf` patients) are -inf.
    """
    if G2.shape[0] < 2 or G2.shape[1] < 2:
        return np.full((max(G2.shape[0] - 1, 0), max(G2.shape[1] - 1, 0)), -np.inf)
    gq = quadrant_sums(G2)
    hq = quadrant_sums(H2)
    cq = quadrant_sums(C2)
    with np.errstate(divide="ignore", invalid="ignore"):
        gain = sum(g * g / (h + l2) for g, h in zip(gq[:4], hq[:4])) - gq[4] ** 2 / (hq[4] + l2)
    ok = (cq[0] >= min_leaf) & (cq[1] >= min_leaf) & (cq[2] >= min_leaf) & (cq[3] >= min_leaf) & np.isfinite(gain)
    gain[~ok] = -np.inf
    return gain


def best_quadrant_cut(G2, H2, C2, l2, min_leaf) -> tuple[float, int, int]:
    """(gain, a, b) of the best 2x2 cut: rows <= a vs > a, columns <= b vs > b; a = -1 when none is valid."""
    gain = quadrant_gains(G2, H2, C2, l2, min_leaf)
    if gain.size == 0:
        return 0.0, -1, -1
    flat = int(np.argmax(gain))
    a, b = divmod(flat, gain.shape[1])
    if not gain[a, b] > 1e-12:
        return 0.0, -1, -1
    return float(gain[a, b]), a, b


def quadrant_step(G2, H2, C2, l2, min_leaf) -> np.ndarray | None:
    """Newton values of the best 2x2 cut of a pair histogram, as a grid the shape of G2, or None."""
    gain, a, b = best_quadrant_cut(G2, H2, C2, l2, min_leaf)
    if a < 0:
        return None
    rows = (np.arange(G2.shape[0]) > a).astype(np.intp)
    cols = (np.arange(G2.shape[1]) > b).astype(np.intp)
    quadrant = rows[:, None] * 2 + cols[None, :]
    g = np.bincount(quadrant.ravel(), weights=G2.ravel(), minlength=4)
    h = np.bincount(quadrant.ravel(), weights=H2.ravel(), minlength=4)
    return (-g / (h + l2))[quadrant]


def linear_step(G: np.ndarray, H: np.ndarray, position: np.ndarray, l2: float):
    """The Newton step of a straight line a + b * position over the measured bins (slots 0..n-2), the
    not-measured slot n-1 getting its own value -G/(H + l2); `position` is each bin's standardised mean
    value. The line minimises the second-order loss sum G v + H v^2 / 2 + l2 (a^2 + b^2) / 2 (a 2x2 solve
    from the histogram), so a fit of such steps moves toward a ridge logistic regression on the feature."""
    g, h, x = G[:-1], H[:-1], position
    A = np.array([[h.sum() + l2, (h * x).sum()], [(h * x).sum(), (h * x * x).sum() + l2]])
    b = -np.array([g.sum(), (g * x).sum()])
    if not np.linalg.det(A) > 1e-12:
        return None
    a, slope = np.linalg.solve(A, b)
    return np.append(a + slope * x, -G[-1] / (H[-1] + l2) if H[-1] > 0 else 0.0)
