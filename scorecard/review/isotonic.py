"""Weighted isotonic projection: the closest monotone sequence to a shape, in weighted least squares."""

from __future__ import annotations

import numpy as np


def isotonic_projection(values, weights, increasing: bool = True) -> np.ndarray:
    """Return z minimising sum_i w_i (z_i - y_i)^2 subject to z_1 <= z_2 <= ... <= z_n (or >= if decreasing).

    Solved exactly by the pool-adjacent-violators algorithm (Ayer, Brunk, Ewing, Reid and Silverman, Annals of
    Mathematical Statistics, 1955; Barlow, Bartholomew, Bremner and Brunk, "Statistical inference under order
    restrictions", Wiley, 1972): neighbouring blocks that break the order are pooled into their weighted mean
    until none do. The weighted mean of the shape is unchanged, so a term centred with these weights stays
    centred.

    Entries with zero weight do not enter the sum; they take the value of the nearest weighted entry before
    them (after them at the start), which keeps the result monotone and leaves the optimum unchanged.
    """
    y = np.asarray(values, dtype=float)
    w = np.asarray(weights, dtype=float)
    if y.shape != w.shape or y.ndim != 1:
        raise ValueError("values and weights must be 1-D arrays of the same length")
    if np.any(w < 0) or not np.all(np.isfinite(w)) or not np.all(np.isfinite(y)):
        raise ValueError("weights must be finite and non-negative, values finite")
    out = y.copy()
    used = np.flatnonzero(w > 0)
    if used.size == 0:
        # nothing observed: the only evidence-free monotone shape is flat at the plain mean
        return np.full_like(y, y.mean() if y.size else 0.0)
    sign = 1.0 if increasing else -1.0
    yy = sign * y[used]
    ww = w[used]
    # blocks as parallel stacks: weighted mean, total weight, number of entries
    means: list[float] = []
    totals: list[float] = []
    sizes: list[int] = []
    for value, weight in zip(yy, ww):
        means.append(float(value))
        totals.append(float(weight))
        sizes.append(1)
        while len(means) > 1 and means[-2] > means[-1]:
            m2, t2, s2 = means.pop(), totals.pop(), sizes.pop()
            t1 = totals[-1]
            means[-1] = (means[-1] * t1 + m2 * t2) / (t1 + t2)
            totals[-1] = t1 + t2
            sizes[-1] += s2
    fitted = np.repeat(np.array(means), sizes) * sign
    out[used] = fitted
    # zero-weight entries copy the nearest weighted entry before them (or after, at the start)
    position = np.searchsorted(used, np.arange(y.size), side="right") - 1
    source = used[np.clip(position, 0, None)]
    unused = w <= 0
    out[unused] = out[source[unused]]
    return out
