"""Maximum-likelihood logistic regression with Wald standard errors, for a handful of columns.

Newton-Raphson on the binomial log-likelihood (iteratively reweighted least squares; McCullagh & Nelder,
Generalized Linear Models, 1989, ch. 4); the covariance is the inverse Fisher information at the optimum and
the 95 % interval the Wald interval (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

Z95 = 1.959963984540054  # standard normal 97.5 % quantile


@dataclass(frozen=True)
class LogisticFit:
    coef: np.ndarray
    cov: np.ndarray
    converged: bool

    @property
    def se(self) -> np.ndarray:
        return np.sqrt(np.maximum(np.diag(self.cov), 0.0))

    def ci(self, k: int) -> tuple[float, float]:
        return float(self.coef[k] - Z95 * self.se[k]), float(self.coef[k] + Z95 * self.se[k])


def fit_logistic(columns: np.ndarray, y: np.ndarray, iterations: int = 100) -> LogisticFit:
    """logit P(y = 1) = columns @ coef; `columns` includes the constant column where one is wanted."""
    X = np.asarray(columns, dtype=float)
    y = np.asarray(y, dtype=float)
    coef = np.zeros(X.shape[1])
    rate = y.mean()
    if 0 < rate < 1 and np.allclose(X[:, 0], 1.0):
        coef[0] = np.log(rate / (1 - rate))
    converged = False
    info = np.eye(X.shape[1])
    for _ in range(iterations):
        eta = X @ coef
        p = 1 / (1 + np.exp(-eta))
        w = np.maximum(p * (1 - p), 1e-12)
        info = X.T @ (X * w[:, None])
        try:
            step = np.linalg.solve(info, X.T @ (y - p))
        except np.linalg.LinAlgError:
            break
        coef = coef + step
        if np.max(np.abs(step)) < 1e-10 * (1 + np.max(np.abs(coef))):
            converged = True
            break
    eta = X @ coef
    p = 1 / (1 + np.exp(-eta))
    info = X.T @ (X * np.maximum(p * (1 - p), 1e-12)[:, None])
    try:
        cov = np.linalg.inv(info)
    except np.linalg.LinAlgError:
        cov = np.full((X.shape[1], X.shape[1]), np.inf)
        converged = False
    return LogisticFit(coef=coef, cov=cov, converged=converged and bool(np.all(np.isfinite(cov))))
