"""Local recalibration: a unit's own outcomes refit only the conversion of a sheet (logistic recalibration of
the outcome on the sheet's log-odds: a new intercept and slope), leaving every printed row and point as it is,
and refusing when a new conversion cannot be enough.

`logistic` fits the logistic regressions with their standard errors; `adequacy` decides whether recalibration
is enough (a term whose observed effect is reversed, a slope far from 1); `sheet` writes the recalibrated
sheet document with its lineage.
"""

from scorecard.recalibrate.adequacy import assess
from scorecard.recalibrate.sheet import recalibrated_sheet

__all__ = ["assess", "recalibrated_sheet"]
