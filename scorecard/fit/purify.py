"""Keeping terms identifiable: pair grids purified to pure interaction, every term centred to mean zero.

Purification (Lengerich, Tan, Chang, Hooker & Caruana, AISTATS 2020, "Purifying interaction effects with the
functional ANOVA"): a pair grid f(a, b) is split as f = pure(a, b) + row(a) + column(b) where pure has
weighted mean zero along every row and every column (weights = the population's patient counts per cell).
The row and column parts belong to the one-feature terms; what stays in the grid is interaction only, so a
reader of the one-feature shapes sees the whole main effect. Found by alternately removing weighted row and
column means until they vanish (iterative proportional fitting in the additive sense).
"""

from __future__ import annotations

import numpy as np


def purify_grid(grid: np.ndarray, weights: np.ndarray, tol: float = 1e-12, max_sweeps: int = 10000):
    """Return (pure, row, column) with grid == pure + row[:, None] + column[None, :] and every weighted
    row mean and column mean of `pure` zero (rows or columns without weight are left alone)."""
    pure = np.array(grid, dtype=float, copy=True)
    w = np.asarray(weights, dtype=float)
    row_w = w.sum(axis=1)
    col_w = w.sum(axis=0)
    row = np.zeros(pure.shape[0])
    column = np.zeros(pure.shape[1])
    scale = max(float(np.max(np.abs(pure))) if pure.size else 0.0, 1e-300)
    for _ in range(max_sweeps):
        r = np.divide((pure * w).sum(axis=1), row_w, out=np.zeros_like(row_w), where=row_w > 0)
        pure -= r[:, None]
        row += r
        c = np.divide((pure * w).sum(axis=0), col_w, out=np.zeros_like(col_w), where=col_w > 0)
        pure -= c[None, :]
        column += c
        if max(np.max(np.abs(r), initial=0.0), np.max(np.abs(c), initial=0.0)) <= tol * scale:
            break
    return pure, row, column


def centre(values: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, float]:
    """Shift `values` to weighted mean zero; return (centred values, the mean removed)."""
    total = float(np.sum(weights))
    mean = float(np.sum(values * weights) / total) if total > 0 else 0.0
    return values - mean, mean
