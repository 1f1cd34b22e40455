"""Slip robustness of a sheet on the cohort the audit scored: the rule is the sheet's (`scorecard.sheet.slips`,
the one home `quantize` uses too); the audit applies it to its own scoring of the cohort (`audit.paper`)."""

from __future__ import annotations

from scorecard.audit.paper import ScoredCohort
from scorecard.sheet import slips


def slip_figures(sheet: dict, scored: ScoredCohort) -> dict:
    """The slip figures (`scorecard.sheet.slips.slip_figures`) of a sheet on a scored cohort; also the check's JSON."""
    return slips.slip_figures(sheet, scored.total, scored.terms)
