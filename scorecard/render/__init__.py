"""Print-ready pages from a sheet document: point tables, conversion chart, nomogram, laid out by a layout file.

Public entry: `render_pdf(sheet, layout, short_fingerprint) -> bytes`, `load_layout(name_or_path)`,
`write_previews(pdf_bytes, folder)`.
"""

from scorecard.render.layout import DEFAULT_LAYOUT, PageLayout, load_layout, parse_layout, shipped_layouts
from scorecard.render.pages import render_pdf
from scorecard.render.preview import write_previews

__all__ = ["DEFAULT_LAYOUT", "PageLayout", "load_layout", "parse_layout", "render_pdf", "shipped_layouts", "write_previews"]
