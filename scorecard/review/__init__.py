"""Reviewing and editing a model before it goes on paper: flags, figures, edits and what an edit costs.

The figures (`scorecard.review.report`, matplotlib) are imported on first use, so `edit` and `explain`
start without loading matplotlib.
"""

from scorecard.review.cost import edit_cost
from scorecard.review.edits import clip_term, declare, merge_levels, monotone_term, zero_term
from scorecard.review.flags import Flag, FlagSettings, review_flags
from scorecard.review.importance import rank_terms
from scorecard.review.isotonic import isotonic_projection

_REPORT = ("build_review", "pdf_bytes", "write_previews")


def __getattr__(name):
    if name in _REPORT:
        from scorecard.review import report

        return getattr(report, name)
    raise AttributeError(f"module 'scorecard.review' has no attribute {name!r}")


__all__ = [
    "Flag",
    "FlagSettings",
    "build_review",
    "clip_term",
    "declare",
    "edit_cost",
    "isotonic_projection",
    "merge_levels",
    "monotone_term",
    "pdf_bytes",
    "rank_terms",
    "review_flags",
    "write_previews",
    "zero_term",
]
