"""The invented demo: older adults after hip-fracture surgery, delirium within 5 days.

A seeded generator of any size with a known true additive model (U-shapes, a step, a plateau, one true pair,
informative missingness and a confounded "protective" care-process flag). All of it is invented.

Public API: generate_cohort, cohort_chunks (any size in bounded memory), true_model, true_shape, true_auc, OUTCOME, FEATURES, PAIR_TERM, TRUE_AUC,
TRUE_EVENT_RATE, EVENT_RATE_BOUNDS, ALBUMIN_MISSING_BOUNDS.
"""

from scorecard.demo.cohort import FEATURES, OUTCOME, cohort_arrow_table, cohort_chunks, cohort_csv_text, generate_cohort
from scorecard.demo.measures import (
    ALBUMIN_MISSING_BOUNDS,
    EVENT_RATE_BOUNDS,
    TRUE_AUC,
    TRUE_AUC_TOLERANCE,
    TRUE_EVENT_RATE,
    rank_auc,
    true_auc,
)
from scorecard.demo.true_model import PAIR_TERM, true_model, true_shape

__all__ = [
    "ALBUMIN_MISSING_BOUNDS",
    "EVENT_RATE_BOUNDS",
    "FEATURES",
    "OUTCOME",
    "PAIR_TERM",
    "TRUE_AUC",
    "TRUE_AUC_TOLERANCE",
    "TRUE_EVENT_RATE",
    "cohort_arrow_table",
    "cohort_chunks",
    "cohort_csv_text",
    "generate_cohort",
    "rank_auc",
    "true_auc",
    "true_model",
    "true_shape",
]
