"""PDF plumbing shared by every PDF the product draws with reportlab (the sheet in `render`, the reports of
`check` and `compare`): the one typeface, text measuring and wrapping, and a canvas that stamps 'page x of y'.

It knows nothing about sheets, models or reports, so the audit can use it without importing render.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path
from typing import Callable

import matplotlib
from reportlab.lib.fonts import addMapping
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen.canvas import Canvas

# DejaVu Sans from the files matplotlib ships, so ≤ ≥ – × − print without any system font (the product
# installs with pip alone)
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


def wrap_words(text: str, size: float, width: float, bold: bool = False) -> list[str]:
    """Greedy word wrap at `width` points; a word longer than the width keeps a line of its own."""
    lines, current = [], ""
    for word in text.split():
        trial = f"{current} {word}".strip()
        if current and text_width(trial, size, bold) > width:
            lines.append(current)
            current = word
        else:
            current = trial
    if current:
        lines.append(current)
    return lines or [""]


def page_x_of_y_canvas(stamp: Callable[[Canvas, int, int], None]) -> type[Canvas]:
    """A canvas class that holds every page back until the end, then calls `stamp(canvas, page, total)` on each
    before it is written, so every page can say 'page x of y' and a missing page shows (common practice: the
    two-pass page-count recipe for reportlab canvases)."""

    class PageXOfYCanvas(Canvas):
        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self._held = []

        def showPage(self):
            self._held.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._held)
            for state in self._held:
                self.__dict__.update(state)
                stamp(self, self._pageNumber, total)
                Canvas.showPage(self)
            Canvas.save(self)

    return PageXOfYCanvas
