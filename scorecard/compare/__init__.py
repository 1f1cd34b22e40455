"""What changed between two versions of a sheet (or of a model), for re-training staff: printed rows, points,
conversion, bands and fingerprints, and with a cohort how many patients move total and band.

`sheets` compares two sheet documents block by block on the values a nurse would read; `models` compares two
model documents (terms, shapes, edits); `cohort` scores one cohort with both sheets the way the paper does
(`scorecard.audit.paper`); `report_pdf` lays the comparison out for the practice-development team.
"""

from scorecard.compare.cohort import cohort_changes
from scorecard.compare.models import model_changes
from scorecard.compare.sheets import sheet_changes

__all__ = ["cohort_changes", "model_changes", "sheet_changes"]
