"""How numbers from the sheet are written on paper, and safe Paragraph markup.

Nothing here computes a number: points and totals are the sheet's integers, written with an unmistakable sign.
"""

from __future__ import annotations

from xml.sax.saxutils import escape

from scorecard.sheet.printed import pair_name, unit_text

MINUS = "\u2212"  # a real minus sign: a hyphen can vanish on a photocopy or read as a dash


def sheet_has_negative_points(sheet: dict) -> bool:
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            if any(p < 0 for row in term["points"] for p in row) or term.get("missing_points", 0) < 0:
                return True
        elif any(r["points"] < 0 for r in term["rows"]):
            return True
    return False


def points_text(points: int, signed: bool) -> str:
    """'−3' / '+2' / '0' when the sheet has negative points (so every sign is written), else '2'."""
    points = int(points)
    if points < 0:
        return f"{MINUS}{-points}"
    if signed and points > 0:
        return f"+{points}"
    return str(points)


def total_text(total: int) -> str:
    """A total written with a real minus when below zero (totals carry no plus sign)."""
    total = int(total)
    return f"{MINUS}{-total}" if total < 0 else str(total)


def markup(text: str) -> str:
    """Escape a sheet text for a reportlab Paragraph so &, < and > print literally."""
    return escape(str(text))


def term_heading(term: dict) -> str:
    """Block heading: the label, with the unit in brackets for a measured term."""
    if term["kind"] == "pair":
        return term.get("label") or pair_name(term["labels"])
    unit = unit_text(term)
    return f"{term['label']} ({unit})" if unit else term["label"]
