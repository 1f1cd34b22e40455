"""The worst-case certificate: how far the sheet can be from the exact model for ANY patient.

Sheet log-odds minus model log-odds = (offset - intercept) + sum over terms t of d_t, where
d_t = s * points_t(row of the piece) - score_t(piece) takes one of finitely many values (one per piece:
every model bin split at every printed cut, every level, "not measured"). With m_t and r_t the midpoint and
half-range of term t's values of d_t,

    |sheet - model| <= |offset - intercept + sum_t m_t| + sum_t r_t

for every combination of inputs, in or out of the training range; terms left off the sheet count with
points 0. The printed conversion uses the exact total, so its rounding in log-odds is 0; the printed risk
text rounds by at most 0.05 (below 10 %) or 0.5 percentage points, added to the risk bound at each total.
"""

from __future__ import annotations

import numpy as np

from scorecard.model import logistic
from scorecard.sheet.printed import risk_text_rounding


def certificate(piece_errors: dict[str, np.ndarray], offset: float, intercept: float, scale: float,
                total_min: int, total_max: int) -> dict:
    """`piece_errors`: term name -> d_t for each of its pieces."""
    per_term, mids = {}, 0.0
    for name, d in piece_errors.items():
        hi, lo = float(np.max(d)), float(np.min(d))
        per_term[name] = (hi - lo) / 2
        mids += (hi + lo) / 2
    offset_error = abs(offset - intercept + mids)
    bound = offset_error + sum(per_term.values())
    by_total = risk_error_by_total(offset, scale, bound, total_min, total_max)
    return {
        "per_term": per_term,
        "offset_error": offset_error,
        "conversion_rounding": 0.0,
        "max_logodds_error": bound,
        "max_risk_error": max(e["max_risk_error"] for e in by_total),
        "risk_error_by_total": by_total,
    }


def risk_error_by_total(offset: float, scale: float, bound: float, total_min: int, total_max: int) -> list[dict]:
    """At each total, the largest risk error a log-odds error of `bound` can cause, plus the printed text's
    rounding (also used when a recalibrated sheet's certificate is restated on its new scale)."""
    by_total = []
    for total in range(total_min, total_max + 1):
        z = offset + scale * total
        r = float(logistic(np.array([z]))[0])
        up = float(logistic(np.array([z + bound]))[0]) - r
        low = float(logistic(np.array([z - bound]))[0])
        down = r - low
        # the model's risk of a patient with this total lies in [low, high] whatever their inputs
        by_total.append({"total": total, "max_risk_error": min(1.0, max(up, down) + risk_text_rounding(r)),
                         "model_risk_low": low, "model_risk_high": r + up})
    return by_total
