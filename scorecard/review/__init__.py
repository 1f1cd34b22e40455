"""Reviewing and editing a model before it goes on paper: flags, figures, edits and what an edit costs."""

from scorecard.review.cost import edit_cost
from scorecard.review.edits import clip_term, declare, merge_levels, monotone_term, zero_term
from scorecard.review.flags import Flag, FlagSettings, review_flags
from scorecard.review.importance import rank_terms
from scorecard.review.isotonic import isotonic_projection
from scorecard.review.report import build_review, pdf_bytes, write_previews

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
