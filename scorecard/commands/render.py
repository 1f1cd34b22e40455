"""`scorecard render`: lay a sheet document out as print-ready PDF pages (and PNG previews)."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say, preview_folder
from scorecard.errors import UserError
from scorecard.jsondoc import atomic_write_bytes
from scorecard.render import DEFAULT_LAYOUT, load_layout, render_pdf, shipped_layouts, write_previews
from scorecard.sheet import load_sheet, short_fingerprint


def _layout_help() -> str:
    names = ", ".join(shipped_layouts()) or DEFAULT_LAYOUT
    return (f"A shipped layout name ({names}) or the path of a layout .toml file "
            f"(format: docs/layouts.md). Default: {DEFAULT_LAYOUT}.")


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("--layout", "layout_name", metavar="NAME|FILE", default=DEFAULT_LAYOUT, show_default=False, help=_layout_help())
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="PDF file to write.")
@click.option("--preview", "preview_dir", metavar="DIR", type=click.Path(),
              help="Also write a PNG picture of every page into DIR (NAME-01.png, NAME-02.png, ... after the PDF's name), to check by eye.")
def command(sheet_path: str, layout_name: str, output: str, preview_dir: str | None) -> None:
    """Print SHEET.json as PDF pages: point tables, total box, conversion chart, nomogram.

    Everything printed comes from the sheet document (row texts, points, risks, bands, cautions); nothing is
    recomputed. Every page carries the title, outcome, horizon and population, the cautions, the sheet's
    short fingerprint, the model name and version, a print-date field and 'page x of y'.

    The layout sets paper, margins, the smallest type size, columns and which parts print where. Type is
    never shrunk below the layout's minimum and nothing is clipped: tables run on to further pages, and a
    layout with a page limit (the pocket card) stops with exit code 2 naming what does not fit.
    The same sheet and layout always give the same PDF bytes.

    \b
    Examples:
      scorecard render demo_output/sheet.json -o sheet.pdf --preview sheet-previews
      scorecard render demo_output/sheet.json --layout pocket-card -o card.pdf
    """
    out = output_path(output, sheet_path, binary=True)
    preview_folder(preview_dir)
    if not out.name.lower().endswith(".pdf"):
        raise UserError(f"{out}: the output must be a .pdf file; give -o NAME.pdf")
    sheet = load_sheet(sheet_path)
    layout = load_layout(layout_name)
    pdf = render_pdf(sheet, layout, short_fingerprint(sheet))
    atomic_write_bytes(out, pdf, protect=(sheet_path,))
    say(f"wrote {out} (layout {layout.name}, sheet fingerprint {short_fingerprint(sheet)})")
    if preview_dir:
        pages = write_previews(pdf, preview_dir, stem=out.stem)
        say(f"wrote {len(pages)} page preview(s) to {preview_dir}")
