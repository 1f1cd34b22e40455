"""The invented-data mark: a model fitted on invented data (the demo, tests) says so on every page made from it.

A model document records `invented_data: true`; the sheets quantised from it inherit the flag, and every PDF
page drawn from either (sheet, review, check report, and so their PNG previews) carries MARK in white bold
capitals on a solid black band at the top and at the foot of the page, inside the printable margins. A solid
band survives photocopying and faxing where a light tint, a watermark or small print in a footer would not.
"""

from __future__ import annotations

MARK = "INVENTED DATA \u2014 NOT FOR CLINICAL USE"
BAND_SHARE = 1.8  # band height as a multiple of its type size


def is_invented(doc) -> bool:
    """True for a model (object or document) or a sheet document that records invented data."""
    if isinstance(doc, dict):
        return bool(doc.get("invented_data"))
    return bool(getattr(doc, "invented_data", False))


def band_height(size: float) -> float:
    return size * BAND_SHARE


def draw_band(canvas, x0: float, width: float, top: float, font: str, size: float) -> None:
    """A black band `width` wide from `x0`, its upper edge at `top`, with the mark centred in white."""
    from reportlab.lib import colors

    h = band_height(size)
    canvas.saveState()
    canvas.setFillColor(colors.black)
    canvas.rect(x0, top - h, width, h, stroke=0, fill=1)
    canvas.setFillColor(colors.white)
    canvas.setFont(font, size)
    canvas.drawCentredString(x0 + width / 2, top - h + (h - size * 0.72) / 2, MARK)
    canvas.restoreState()


def add_matplotlib_mark(fig, bottoms: tuple[float, float] = (0.972, 0.007), band: float = 0.016,
                        left: float = 0.06, width: float = 0.88) -> None:
    """The same bands on a matplotlib page: `band` of the page height, with their lower edges at `bottoms`
    (page fractions), kept off the paper's edges, which printers crop."""
    from matplotlib.patches import Rectangle

    for y0 in bottoms:
        fig.patches.append(Rectangle((left, y0), width, band, transform=fig.transFigure, facecolor="black",
                                     edgecolor="none", zorder=10))
        fig.text(0.5, y0 + band / 2, MARK, ha="center", va="center", fontsize=9, weight="bold", color="white",
                 zorder=11)
