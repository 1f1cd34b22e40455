"""Reviewing and editing a model before it goes on paper: flags, figures, edits and what an edit costs.

The figures (`scorecard.review.report`, matplotlib) are imported on first use, so `edit` and `explain`
start without loading matplotlib.
"""

from scorecard.review.cost import edit_cost
from scorecard.review.edits import declare, force_direction, hold_beyond, pool_levels, remove_effect
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
    "declare",
    "edit_cost",
    "force_direction",
    "hold_beyond",
    "isotonic_projection",
    "pdf_bytes",
    "pool_levels",
    "rank_terms",
    "remove_effect",
    "review_flags",
    "write_previews",
]
