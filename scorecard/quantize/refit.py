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
import scipy.sparse as sp


def indicator_matrix(row_ids: np.ndarray, n_rows: int) -> sp.csr_matrix:
    """Patients x rows 0/1 matrix from (patients x terms) global row ids."""
    n, t = row_ids.shape
    data = np.ones(n * t)
    cols = row_ids.ravel()
    rows = np.repeat(np.arange(n), t)
    return sp.csr_matrix((data, (rows, cols)), shape=(n, n_rows))


def refit_row_values(x: sp.csr_matrix, y: np.ndarray, w: np.ndarray, v0: np.ndarray, ridge: float = 1e-6) -> tuple[np.ndarray, float]:
    """Row values and intercept solving the penalised weighted least squares above."""
    n_rows = x.shape[1]
    xw = x.multiply(w[:, None]).tocsr()
    gram = (x.T @ xw).toarray()
    rhs = xw.T @ y
    col_w = np.asarray(xw.sum(axis=0)).ravel()
    sw = float(w.sum())
    omega = ridge * max(float(col_w.mean()), 1e-12)
    # unknowns: [row values..., intercept]
    a = np.zeros((n_rows + 1, n_rows + 1))
    a[:n_rows, :n_rows] = gram + omega * np.eye(n_rows)
    a[:n_rows, n_rows] = col_w
    a[n_rows, :n_rows] = col_w
    a[n_rows, n_rows] = sw
    b = np.concatenate([rhs + omega * v0, [float(w @ y)]])
    sol = np.linalg.solve(a, b)
    return sol[:n_rows], float(sol[n_rows])
