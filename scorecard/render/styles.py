"""Paragraph styles for one layout: every size comes from the layout and none is below its minimum."""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.lib.enums import TA_CENTER, TA_LEFT, TA_RIGHT
from reportlab.lib.styles import ParagraphStyle

from scorecard.pdf_plumbing import BOLD, REGULAR, register_fonts
from scorecard.render.layout import PageLayout

LEADING = 1.22  # line height / font size; enough that descenders never touch the next line's capitals


@dataclass(frozen=True)
class Styles:
    min_pt: float
    body_pt: float
    heading_pt: float
    title_pt: float
    body: ParagraphStyle
    body_right: ParagraphStyle
    body_center: ParagraphStyle
    points: ParagraphStyle
    points_center: ParagraphStyle
    heading: ParagraphStyle
    section: ParagraphStyle
    title: ParagraphStyle
    small: ParagraphStyle
    small_bold: ParagraphStyle


def styles_for(layout: PageLayout) -> Styles:
    register_fonts()
    body, heading, title, small = layout.body_pt, layout.heading_pt, layout.title_pt, layout.min_pt

    def style(name, size, font=REGULAR, align=TA_LEFT, **extra):
        return ParagraphStyle(name, fontName=font, fontSize=size, leading=round(size * LEADING, 2), alignment=align,
                              spaceBefore=0, spaceAfter=0, **extra)

    return Styles(
        min_pt=small, body_pt=body, heading_pt=heading, title_pt=title,
        body=style("body", body),
        body_right=style("body_right", body, align=TA_RIGHT),
        body_center=style("body_center", body, align=TA_CENTER),
        points=style("points", body, font=BOLD, align=TA_RIGHT),
        points_center=style("points_center", body, font=BOLD, align=TA_CENTER),
        heading=style("heading", heading, font=BOLD),
        section=style("section", max(heading, body * 1.15), font=BOLD),
        title=style("title", title, font=BOLD),
        small=style("small", small),
        small_bold=style("small_bold", small, font=BOLD),
    )
