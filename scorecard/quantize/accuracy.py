"""Accuracy figures of a sheet against the exact model on an evaluation population.

The model's own risk p_i is taken as the truth for each patient: patient i counts as an event with weight
p_i and as a non-event with weight 1 - p_i. The figures then measure what the sheet loses relative to the
model, independently of any observed outcomes (which belong to the model's validation, not to the
sheet's). With these weights:
- AUC is scikit-learn's `roc_auc_score` with `sample_weight` on the doubled arrays (the expected AUC under the
  model); ΔAUC = AUC(model) - AUC(sheet), with a percentile bootstrap interval over patients;
- Brier is scikit-learn's `brier_score_loss` on the same arrays;
- calibration-in-the-large and slope: the logistic recalibration logit(p) ~ a + b * sheet log-odds (fitted by
  Newton's method on the same weighted likelihood; a = 0, b = 1 when the sheet is calibrated to the model);
- |Δrisk| per patient: max, 99th percentile, mean, and the share over the bound;
- band agreement: share of patients in the same risk band by the sheet as by the model.
"""

from __future__ import annotations

import numpy as np
from sklearn.metrics import brier_score_loss, roc_auc_score

from scorecard.discrimination import expected_auc
from scorecard.model import logistic
from scorecard.sheet.printed import band_indices


def doubled(p: np.ndarray, score: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(labels, scores, weights): every patient once as an event (weight p) and once as a non-event (1 - p)."""
    n = len(p)
    y = np.concatenate([np.ones(n), np.zeros(n)])
    return y, np.concatenate([score, score]), np.concatenate([p, 1 - p])


def sklearn_auc(p: np.ndarray, score: np.ndarray) -> float:
    y, s, w = doubled(p, score)
    return float(roc_auc_score(y, s, sample_weight=w))


def sklearn_brier(p: np.ndarray, q: np.ndarray) -> float:
    y, s, w = doubled(p, q)
    return float(brier_score_loss(y, s, sample_weight=w))


def recalibration(p: np.ndarray, logodds: np.ndarray, iterations: int = 50) -> tuple[float, float] | tuple[None, None]:
    """Intercept and slope of the logistic regression of the model's risk on the sheet's log-odds."""
    x = np.asarray(logodds, dtype=float)
    if np.ptp(x) == 0:
        return None, None
    beta = np.array([0.0, 1.0])
    design = np.column_stack([np.ones_like(x), x])
    for _ in range(iterations):
        q = logistic(design @ beta)
        grad = design.T @ (p - q)
        hess = (design * (q * (1 - q))[:, None]).T @ design
        try:
            step = np.linalg.solve(hess, grad)
        except np.linalg.LinAlgError:
            return None, None
        beta = beta + step
        if np.max(np.abs(step)) < 1e-10:
            break
    return float(beta[0]), float(beta[1])


def band_agreement(bands: list[dict] | None, model_risk: np.ndarray, sheet_risk: np.ndarray,
                   sheet_band: np.ndarray | None = None) -> float | None:
    """Share of patients whose band on the sheet is their model band; the sheet band is `sheet_band` when given
    (the band of each patient's total, `band_edges`), else that of the sheet's risk. None without bands."""
    if not bands:
        return None
    on_sheet = band_indices(bands, sheet_risk) if sheet_band is None else np.asarray(sheet_band)
    return float(np.mean(band_indices(bands, model_risk) == on_sheet))


def quick_figures(model_logodds: np.ndarray, sheet_logodds: np.ndarray, max_risk_error: float, auc_model: float | None = None,
                  bands: list[dict] | None = None, percentile: float = 95.0, sheet_band: np.ndarray | None = None) -> dict:
    """The figures the search judges a sheet by: ΔAUC, the share over the risk bound, the `percentile`-th
    percentile, mean and largest |Δrisk|, and band agreement (None without bands; see `band_agreement`).
    Arrays in, so any caller holding per-patient model and sheet log-odds can reuse it."""
    p = logistic(model_logodds)
    q = logistic(sheet_logodds)
    auc_model = expected_auc(p, model_logodds) if auc_model is None else auc_model
    err = np.abs(q - p)
    return {
        "auc_loss": auc_model - expected_auc(p, sheet_logodds),
        "share_over_risk_error": float(np.mean(err > max_risk_error)),
        "p95_abs_risk_error": float(np.quantile(err, 0.95)),
        "percentile_abs_risk_error": float(np.quantile(err, percentile / 100)),
        "mean_abs_risk_error": float(err.mean()),
        "max_abs_risk_error": float(err.max()),
        "band_agreement": band_agreement(bands, p, q, sheet_band),
    }


def full_figures(model_logodds: np.ndarray, sheet_logodds: np.ndarray, max_risk_error: float, bands: list[dict],
                 bootstrap: int = 200, seed: int = 0, percentile: float = 95.0, sheet_band: np.ndarray | None = None) -> dict:
    """Every figure of the sheet document's `achieved` block (risks as fractions)."""
    p = logistic(model_logodds)
    q = logistic(sheet_logodds)
    err = np.abs(q - p)
    auc_model = sklearn_auc(p, model_logodds)
    auc_sheet = sklearn_auc(p, sheet_logodds)
    ci = None
    if bootstrap:
        rng = np.random.default_rng(seed)
        n = len(p)
        losses = []
        for _ in range(bootstrap):
            idx = rng.integers(0, n, n)
            losses.append(expected_auc(p[idx], model_logodds[idx]) - expected_auc(p[idx], sheet_logodds[idx]))
        ci = [float(np.quantile(losses, 0.025)), float(np.quantile(losses, 0.975))]
    intercept, slope = recalibration(p, sheet_logodds)
    agreement = band_agreement(bands, p, q, sheet_band)
    return {
        "n": int(len(p)),
        "auc_model": auc_model,
        "auc_sheet": auc_sheet,
        "auc_loss": auc_model - auc_sheet,
        "auc_loss_ci": ci,
        "max_abs_risk_error": float(err.max()),
        "p99_abs_risk_error": float(np.quantile(err, 0.99)),
        "p95_abs_risk_error": float(np.quantile(err, 0.95)),
        "percentile_abs_risk_error": float(np.quantile(err, percentile / 100)),
        "mean_abs_risk_error": float(err.mean()),
        "share_over_risk_error": float(np.mean(err > max_risk_error)),
        "calibration_intercept": intercept,
        "calibration_slope": slope,
        "brier_model": sklearn_brier(p, p),
        "brier_sheet": sklearn_brier(p, q),
        "band_agreement": agreement,
    }
