"""The cautions every printed page and report carries, in one wording for sheets, reviews and explanations.

A sheet document stores its own copy (`cautions`, written by quantize), so a sheet prints what it was
approved with even if this wording changes later.
"""

from __future__ import annotations


def cautions(subject: str = "this sheet", what_shows: str = "The points show") -> list[str]:
    """The caution sentences for a page about `subject` ('this sheet', 'this review', ...)."""
    return [
        f"Decision support only: {subject} does not replace clinical judgement.",
        "Valid only for the population and outcome stated on it.",
        f"{what_shows} associations, not causes.",
        "Follow local protocols and the judgement of licensed clinicians.",
        "Check the fingerprint against the approved version before use.",
    ]
