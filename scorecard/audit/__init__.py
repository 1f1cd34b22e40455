"""The audit: scoring patients as the paper does, the agreement report, and reading the printed PDF back.

Everything is recomputed from the sheet document (never from the quantizer's internals): that independence is
the point of an audit.
"""

from scorecard.audit.agreement import check_agreement
from scorecard.audit.paper import ScoredCohort, TermChoices, round_half_up_units, score_cohort, sheet_logodds

__all__ = ["ScoredCohort", "TermChoices", "check_agreement", "round_half_up_units", "score_cohort", "sheet_logodds"]
