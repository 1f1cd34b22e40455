"""The one typeface every page uses: DejaVu Sans from the files matplotlib ships, so ≤ ≥ – × − print
without any system font (DESIGN: the product installs with pip alone)."""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import matplotlib
from reportlab.lib.fonts import addMapping
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont

REGULAR = "DejaVuSans"
BOLD = "DejaVuSans-Bold"


@lru_cache(maxsize=1)
def register_fonts() -> tuple[str, str]:
    """Register DejaVu Sans and DejaVu Sans Bold with reportlab once; returns (regular, bold) font names."""
    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    pdfmetrics.registerFont(TTFont(REGULAR, str(folder / "DejaVuSans.ttf")))
    pdfmetrics.registerFont(TTFont(BOLD, str(folder / "DejaVuSans-Bold.ttf")))
    # <b> inside a Paragraph picks the bold face of the family
    addMapping(REGULAR, 0, 0, REGULAR)
    addMapping(REGULAR, 1, 0, BOLD)
    addMapping(REGULAR, 0, 1, REGULAR)
    addMapping(REGULAR, 1, 1, BOLD)
    return REGULAR, BOLD


def text_width(text: str, size: float, bold: bool = False) -> float:
    register_fonts()
    return pdfmetrics.stringWidth(text, BOLD if bold else REGULAR, size)
