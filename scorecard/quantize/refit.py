"""Joint refit of the row values of all terms before rounding.

Segmenting each term on its own fixes each row's value at the mean of its own curve. Fitting all row values
together lets the errors of correlated terms offset each other: a weighted least-squares fit of the exact
model log-odds on the row indicators of every term at once,

    minimise  sum over patients i of w_i (y_i - a - sum_t v_t[row_t(i)])^2
              + lam * sum over rows r of omega_r (v_r - v0_r)^2,

with w_i = p_i (1 - p_i) (the risk weights of `segment`), y the model log-odds, a free intercept, and a tiny
ridge towards the per-term values v0 so a row no patient falls in keeps the value of its own curve.
"""

from __future__ import annotations

import numpy as np

from scorecard.quantize.points import Quadratic


def refit_row_values(q: Quadratic, v0: np.ndarray, ridge: float = 1e-6) -> tuple[np.ndarray, float]:
    """Row values and intercept solving the penalised weighted least squares above (normal equations from
    the Gram form `q` of the row indicators)."""
    n_rows = len(v0)
    omega = ridge * max(float(q.xw.mean()), 1e-12)
    # unknowns: [row values..., intercept]
    a = np.zeros((n_rows + 1, n_rows + 1))
    a[:n_rows, :n_rows] = q.gram + omega * np.eye(n_rows)
    a[:n_rows, n_rows] = q.xw
    a[n_rows, :n_rows] = q.xw
    a[n_rows, n_rows] = q.sw
    b = np.concatenate([q.xwy + omega * v0, [q.swy]])
    sol = np.linalg.solve(a, b)
    return sol[:n_rows], float(sol[n_rows])
