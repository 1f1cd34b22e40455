"""Is a new conversion enough for this unit's patients? The figures and the verdict.

Every patient is scored as the paper does (`scorecard.audit.paper`). Then, on the patients whose outcome is
known:

- **recalibration**: logit P(event) = a + b × (sheet log-odds); a and b replace the conversion;
- **each term's observed effect**: logit P(event) = c0 + c1 × (sheet log-odds of the other terms) + c2 ×
  (this term's points × log-odds per point). c2 ≈ b when the term carries the weight the sheet gives it; a c2
  whose whole 95 % interval lies below 0 means more points on this term go with *less* risk on this unit: the
  term's effect is reversed, and no conversion can mend that;
- **slope far from 1**: when the whole 95 % interval of b lies below SLOPE_FAR_LOW or above SLOPE_FAR_HIGH, the
  points spread this unit's patients at least twice too much (or too little): the weights, not only the
  conversion, are wrong.

Either refuses (exit 3) and says what to do instead: refit on the unit's patients, or, when the exact model
itself recalibrates with a slope near 1 (given with --model), re-quantise the model on them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import parse_cohort, score_cohort, sheet_logodds
from scorecard.errors import UserError
from scorecard.model import AdditiveModel, predict_logodds
from scorecard.recalibrate.logistic import fit_logistic
from scorecard.suggest import did_you_mean
from scorecard.tabular import flag_column, source_of

SLOPE_FAR_LOW = 0.5  # our choice: a slope under 1/2 means the points spread risk more than twice too widely
SLOPE_FAR_HIGH = 2.0
MIN_EACH_OUTCOME = 20  # events and non-events each (common practice: ~10-20 per estimated parameter, from memory)


def _known_outcome(frame: pd.DataFrame, column: str) -> np.ndarray:
    if column not in frame.columns:
        raise UserError(f"{source_of(frame)}: outcome column {column!r} (from --outcome) is not in the file"
                        f"{did_you_mean(column, list(frame.columns))}; name the column holding the unit's observed outcome (1/0, yes/no)")
    return flag_column(frame, column)


def _far(ci: tuple[float, float]) -> bool:
    return ci[1] < SLOPE_FAR_LOW or ci[0] > SLOPE_FAR_HIGH


def assess(sheet: dict, frame: pd.DataFrame, outcome: str, model: AdditiveModel | None = None) -> dict:
    """Recalibration figures, each term's observed effect, and whether recalibration is enough."""
    y_all = _known_outcome(frame, outcome)
    scored = score_cohort(sheet, frame, parse_cohort(sheet, frame))
    known = ~np.isnan(y_all)
    y = y_all[known]
    events, non_events = int(y.sum()), int(len(y) - y.sum())
    if min(events, non_events) < MIN_EACH_OUTCOME:
        raise UserError(f"{source_of(frame)}: column {outcome!r} has {events} events and {non_events} non-events with a known "
                        f"outcome; recalibration needs at least {MIN_EACH_OUTCOME} of each: pool more patients from the unit")
    lo = sheet_logodds(sheet, scored.total)[known]
    if np.ptp(lo) == 0:
        raise UserError(f"{source_of(frame)}: every patient has the same total; recalibration needs patients with different totals")
    ones = np.ones_like(lo)
    fit = fit_logistic(np.column_stack([ones, lo]), y)
    a, b = (float(v) for v in fit.coef)
    a_ci, b_ci = fit.ci(0), fit.ci(1)
    lpp = float(sheet["scale"]["logodds_per_point"])
    terms = []
    for t in scored.terms:
        part = t.patient_points()[known] * lpp
        if np.ptp(part) == 0:
            terms.append({"term": t.name, "label": t.label, "effect": None, "effect_ci": None, "reversed": False,
                          "note": "same points for every patient here: not testable"})
            continue
        tf = fit_logistic(np.column_stack([ones, lo - part, part]), y)
        ci = tf.ci(2)
        terms.append({"term": t.name, "label": t.label, "effect": float(tf.coef[2]), "effect_ci": list(ci),
                      "reversed": bool(ci[1] < 0), "note": ""})
    reasons, advice = [], []
    reversed_terms = [t for t in terms if t["reversed"]]
    for t in reversed_terms:
        reasons.append(f"{t['label']}: its observed effect is reversed on these patients (log-odds per sheet log-odds "
                       f"{t['effect']:.2f}, 95% CI {t['effect_ci'][0]:.2f} to {t['effect_ci'][1]:.2f}; the sheet assumes about {b:.2f})")
    if _far(b_ci):
        reasons.append(f"calibration slope {b:.2f} (95% CI {b_ci[0]:.2f} to {b_ci[1]:.2f}) is far from 1 "
                       f"(wholly outside {SLOPE_FAR_LOW:g} to {SLOPE_FAR_HIGH:g})")
    model_fit = None
    if model is not None:
        mlo, _ = predict_logodds(model, frame)
        mf = fit_logistic(np.column_stack([ones, mlo[known]]), y)
        model_fit = {"intercept": float(mf.coef[0]), "slope": float(mf.coef[1]), "slope_ci": list(mf.ci(1))}
    if reversed_terms:
        advice.append("refit the model on this unit's patients (scorecard fit), review the reversed term (scorecard review), "
                      "then quantise again (scorecard quantize)")
    elif reasons:
        if model_fit is not None and not _far(tuple(model_fit["slope_ci"])):
            advice.append(f"the exact model recalibrates with slope {model_fit['slope']:.2f}: re-quantise it on this unit's "
                          "patients (scorecard quantize MODEL.json --data LOCAL.csv)")
        else:
            advice.append("refit the model on this unit's patients (scorecard fit) and quantise again; "
                          + ("" if model is not None else "or, if the exact model recalibrates well (run again with --model), re-quantise it on them"))
    return {
        "source": source_of(frame), "outcome_column": outcome, "n": int(known.sum()), "unknown_outcome": int((~known).sum()),
        "events": events, "event_rate": float(y.mean()),
        "intercept": a, "intercept_ci": list(a_ci), "slope": b, "slope_ci": list(b_ci), "converged": fit.converged,
        "mean_sheet_risk": float(np.mean(scored.risk[known])),
        "terms": terms, "model": model_fit,
        "enough": not reasons, "reasons": reasons, "advice": [s.rstrip("; ") for s in advice],
        "warnings": list(scored.warnings),
    }
