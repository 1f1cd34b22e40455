"""The statistics of the agreement report, as plain functions on arrays.

Each function states what it computes and where the method comes from; `scorecard.audit.agreement` strings
them together for one sheet, one model and one cohort. They are written for a million patients: AUCs are
computed from tie groups with `np.bincount` (O(n) once the groups are known), logistic fits on grouped data.
"""

from __future__ import annotations

import numpy as np

from scorecard.discrimination import tie_groups, weighted_auc  # noqa: F401  the report's AUCs


def poisson_weight_table(size: int = 65536) -> np.ndarray:
    """Poisson(1) quantiles at `size` equally likely points: indexing it with uniform integers draws Poisson(1)
    weights (to 1/size in probability) far faster than a Poisson generator. P(k) = e^-1 / k!."""
    k = np.arange(20)
    cdf = np.cumsum(np.exp(-1.0) / np.cumprod(np.r_[1.0, k[1:]]))
    return np.searchsorted(cdf, (np.arange(size) + 0.5) / size).astype(float)


def bootstrap_auc_difference(
    groups_a: np.ndarray, n_a: int, groups_b: np.ndarray, n_b: int, w_pos: np.ndarray, w_neg: np.ndarray,
    replicates: int = 200, seed: int = 0, level: float = 0.95,
) -> tuple[float, float]:
    """Percentile interval of AUC(a) - AUC(b) over paired bootstrap resamples of the patients.

    Each replicate reweights every patient by an independent Poisson(1) count, the large-sample form of
    drawing n patients with replacement (the Poisson bootstrap: Hanley & MacGibbon, Comput Methods Programs
    Biomed 2006); both scores see the same weights, so the interval is for the paired difference (Efron &
    Tibshirani, An Introduction to the Bootstrap, 1993, percentile interval). Seeded: same inputs, same interval.
    """
    rng = np.random.default_rng(seed)
    table = poisson_weight_table()
    diffs = np.empty(replicates)
    n = len(w_pos)
    # visit patients in the order of score a, so its many tie groups are summed sequentially (cache friendly)
    order = np.argsort(groups_a, kind="stable")
    groups_a, groups_b = groups_a[order], groups_b[order]
    w_pos, w_neg = np.asarray(w_pos, dtype=float)[order], np.asarray(w_neg, dtype=float)[order]
    for r in range(replicates):
        w = table[rng.integers(0, len(table), n, dtype=np.uint16)]
        wp, wn = w * w_pos, w * w_neg
        diffs[r] = weighted_auc(groups_a, n_a, wp, wn) - weighted_auc(groups_b, n_b, wp, wn)
    tail = (1 - level) / 2 * 100
    low, high = np.nanpercentile(diffs, [tail, 100 - tail])
    return float(low), float(high)


def logistic_calibration(x: np.ndarray, successes: np.ndarray, trials: np.ndarray, iterations: int = 50) -> tuple[float, float]:
    """Intercept a and slope b maximising the binomial log-likelihood of logit P(event) = a + b x.

    Iteratively reweighted least squares (McCullagh & Nelder, Generalized Linear Models, 1989, ch. 4) on
    grouped data: `successes` events out of `trials` at each x (fractional counts allowed, so the model's own
    risk can be the response). The slope is Cox's calibration slope (Cox, Biometrika 1958): 1 and intercept 0
    mean the risks need no recalibration. Returns (nan, nan) when x does not vary.
    """
    x = np.asarray(x, dtype=float)
    s = np.asarray(successes, dtype=float)
    m = np.asarray(trials, dtype=float)
    keep = m > 0
    x, s, m = x[keep], s[keep], m[keep]
    if len(x) == 0 or np.ptp(x) == 0:
        return float("nan"), float("nan")
    a, b = 0.0, 0.0
    rate = s.sum() / m.sum()
    if 0 < rate < 1:
        a = float(np.log(rate / (1 - rate)))
    for _ in range(iterations):
        eta = a + b * x
        p = 1 / (1 + np.exp(-eta))
        w = np.maximum(m * p * (1 - p), 1e-300)
        z = eta + (s - m * p) / w
        # weighted least squares of z on [1, x]
        sw, swx, swxx = w.sum(), (w * x).sum(), (w * x * x).sum()
        swz, swxz = (w * z).sum(), (w * x * z).sum()
        det = sw * swxx - swx * swx
        if det <= 0:
            return float("nan"), float("nan")
        new_a = (swxx * swz - swx * swxz) / det
        new_b = (sw * swxz - swx * swz) / det
        done = abs(new_a - a) + abs(new_b - b) < 1e-12 * (1 + abs(a) + abs(b))
        a, b = float(new_a), float(new_b)
        if done:
            break
    return a, b


def grouped(x: np.ndarray, successes: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Collapse patients sharing the same x into (x, sum of successes, count) — the binomial likelihood is
    unchanged, and a sheet has only a few dozen distinct totals."""
    values, inverse = np.unique(np.asarray(x, dtype=float), return_inverse=True)
    return values, np.bincount(inverse, weights=successes, minlength=len(values)), np.bincount(inverse, minlength=len(values)).astype(float)


def brier(risk: np.ndarray, outcome: np.ndarray) -> float:
    """Mean squared difference between risk and the 0/1 outcome (Brier, Monthly Weather Review 1950)."""
    return float(np.mean((np.asarray(risk, dtype=float) - outcome) ** 2))


def expected_brier(risk: np.ndarray, true_risk: np.ndarray) -> float:
    """Brier score expected when each outcome is drawn with probability `true_risk`:
    mean(q (1 - q) + (risk - q)^2), the same quantity as scikit-learn's brier_score_loss on every patient
    duplicated as an event (weight q) and a non-event (weight 1 - q)."""
    q = np.asarray(true_risk, dtype=float)
    return float(np.mean(q * (1 - q) + (np.asarray(risk, dtype=float) - q) ** 2))


def calibration_table(risk: np.ndarray, outcome: np.ndarray, groups: int = 10) -> list[dict]:
    """Mean predicted risk and observed event rate in `groups` equal-sized groups of predicted risk
    (deciles by default; common practice for calibration plots). Ties are kept together by a stable sort."""
    order = np.argsort(np.asarray(risk, dtype=float), kind="stable")
    out = []
    for part in np.array_split(order, groups):
        if len(part) == 0:
            continue
        out.append({"n": int(len(part)), "predicted": float(np.mean(risk[part])), "observed": float(np.mean(outcome[part]))})
    return out
