"""What an edit costs on a cohort: change in AUC and in calibration-in-the-large.

With an observed outcome column the edited and unedited models are both scored against it. Without one the
unedited model's own risks stand in for the outcome: each patient counts as an event with weight p and a
non-event with weight 1 - p (the model-based concordance of van Klaveren, Gönen, Steyerberg and Vergouwe,
Statistics in Medicine, 2016), and calibration-in-the-large is the shift in mean risk.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from sklearn.metrics import roc_auc_score

from scorecard.discrimination import expected_auc
from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel
from scorecard.model.predict import logistic, predict_logodds
from scorecard.tabular import flag_column, source_of
from scorecard.suggest import did_you_mean


def observed_outcome(cohort: pd.DataFrame, column: str) -> np.ndarray:
    """0/1 outcome with NaN where not recorded; a column with a single class cannot measure AUC."""
    if column not in cohort.columns:
        raise UserError(f"{source_of(cohort)}: outcome column {column!r} is not in the file"
                        f"{did_you_mean(column, list(cohort.columns))}; name it with --outcome")
    y = flag_column(cohort, column)
    known = y[~np.isnan(y)]
    if known.size == 0 or known.min() == known.max():
        raise UserError(f"{source_of(cohort)}: outcome column {column!r} needs both events and non-events to measure AUC")
    return y


def edit_cost(before: AdditiveModel, after: AdditiveModel, cohort: pd.DataFrame, outcome: np.ndarray | None) -> dict:
    """Figures comparing the edited model with the unedited one on the same patients (risk as a fraction)."""
    lo_before, _ = predict_logodds(before, cohort)
    lo_after, _ = predict_logodds(after, cohort)
    risk_before, risk_after = logistic(lo_before), logistic(lo_after)
    delta = np.abs(risk_after - risk_before)
    figures = {"patients": int(len(cohort)), "max_abs_risk_change": delta.max(), "mean_abs_risk_change": delta.mean()}
    if outcome is not None:
        keep = ~np.isnan(outcome)
        y = outcome[keep]
        auc_before = roc_auc_score(y, lo_before[keep])
        auc_after = roc_auc_score(y, lo_after[keep])
        observed = y.mean()
        figures.update(
            against="observed outcome",
            auc_before=auc_before,
            auc_after=auc_after,
            observed_rate=observed,
            mean_risk_before=risk_before[keep].mean(),
            mean_risk_after=risk_after[keep].mean(),
            # calibration-in-the-large as observed minus expected event rate (common practice)
            calibration_in_the_large_before=observed - risk_before[keep].mean(),
            calibration_in_the_large_after=observed - risk_after[keep].mean(),
        )
    else:
        auc_before = expected_auc(risk_before, lo_before)
        auc_after = expected_auc(risk_before, lo_after)
        figures.update(
            against="the unedited model's risks",
            auc_before=auc_before,
            auc_after=auc_after,
            mean_risk_before=risk_before.mean(),
            mean_risk_after=risk_after.mean(),
            calibration_in_the_large_after=risk_before.mean() - risk_after.mean(),
        )
    figures["delta_auc"] = figures["auc_after"] - figures["auc_before"]
    return {k: (float(f"{v:.6g}") if isinstance(v, (float, np.floating)) else v) for k, v in figures.items()}


def cost_lines(cost: dict) -> list[str]:
    """The figures as a person reads them (percentage points for risks)."""
    lines = [
        f"AUC {cost['auc_before']:.4f} -> {cost['auc_after']:.4f} (change {cost['delta_auc']:+.4f}) against {cost['against']}",
    ]
    if "observed_rate" in cost:
        lines.append(
            f"calibration-in-the-large (observed - mean risk): {100 * cost['calibration_in_the_large_before']:+.2f} -> "
            f"{100 * cost['calibration_in_the_large_after']:+.2f} percentage points (observed rate {100 * cost['observed_rate']:.1f}%)"
        )
    else:
        lines.append(
            f"mean risk {100 * cost['mean_risk_before']:.2f}% -> {100 * cost['mean_risk_after']:.2f}% "
            f"(calibration-in-the-large against the unedited model {100 * cost['calibration_in_the_large_after']:+.2f} percentage points)"
        )
    lines.append(
        f"risk change per patient: largest {100 * cost['max_abs_risk_change']:.2f}, mean {100 * cost['mean_abs_risk_change']:.2f} percentage points "
        f"over {cost['patients']} patients"
    )
    return lines
