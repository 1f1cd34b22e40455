"""The review document: summary page(s), then one page per term, as a deterministic PDF and optional PNGs."""

from __future__ import annotations

import io
from pathlib import Path

import matplotlib
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_pdf import PdfPages

from scorecard.jsondoc import atomic_write_bytes
from scorecard.model.document import AdditiveModel
from scorecard.review.plots import frame_page, shown_name, summary_page, term_page
from scorecard.review.flags import Flag, FlagSettings, review_flags
from scorecard.review.importance import TermEffect, rank_terms
from scorecard.review.preview import sheet_preview

# no dates, and a fixed producer: the same model and cohort give the same bytes
PDF_METADATA = {"Creator": "scorecard review", "Producer": "scorecard", "CreationDate": None, "ModDate": None}


def build_review(
    model: AdditiveModel, cohort: pd.DataFrame | None, settings: FlagSettings = FlagSettings(), cohort_name: str | None = None,
    sheet_preview_wanted: bool = True,
) -> tuple[list, list[TermEffect], list[Flag]]:
    """All pages as matplotlib figures (framed and numbered), with the ranking and flags they show. With
    `sheet_preview_wanted` a default sheet is quantised first (`scorecard.review.preview`) and its rows drawn
    on every term page."""
    preview = sheet_preview(model, cohort) if sheet_preview_wanted else None
    ranking = rank_terms(model, cohort, preview)
    flags = review_flags(model, cohort, settings)
    note = f"on {cohort_name}" if cohort is not None else "on the model's training counts"
    fingerprint = model.fingerprint
    with matplotlib.rc_context():
        matplotlib.rcdefaults()
        matplotlib.rcParams["hatch.linewidth"] = 0.6
        pages: list[tuple[object, str]] = []
        first, left = summary_page(model, ranking, flags, settings, note, preview)
        pages.append((first, "Review summary: effect on the sheet and flags"))
        while left:
            more, left = summary_page(model, None, left, settings, note)
            pages.append((more, "Review summary: flags (continued)"))
        by_name = {r.term: r for r in ranking}
        for term in model.terms:
            own = [f for f in flags if f.term == term.name]
            fig = term_page(model, term, cohort, by_name[term.name], own, settings, preview)
            pages.append((fig, f"Term {shown_name(model, term)}"))
        for number, (fig, title) in enumerate(pages, start=1):
            frame_page(fig, model, fingerprint, title, number, len(pages))
    return [fig for fig, _ in pages], ranking, flags


def pdf_bytes(figures: list) -> bytes:
    buffer = io.BytesIO()
    with matplotlib.rc_context():
        matplotlib.rcdefaults()
        with PdfPages(buffer, metadata=PDF_METADATA) as pdf:
            for fig in figures:
                FigureCanvasAgg(fig)
                pdf.savefig(fig)
    return buffer.getvalue()


def write_previews(figures: list, folder: str | Path, stem: str, dpi: int = 110) -> list[Path]:
    """One PNG per page (`<stem>-page-01.png` ...), written atomically."""
    out = []
    for number, fig in enumerate(figures, start=1):
        buffer = io.BytesIO()
        FigureCanvasAgg(fig)
        fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
        path = Path(folder) / f"{stem}-page-{number:02d}.png"
        atomic_write_bytes(path, buffer.getvalue())
        out.append(path)
    return out
