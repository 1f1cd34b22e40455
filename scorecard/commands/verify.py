"""`scorecard verify`: check that a printed sheet PDF is its sheet document, unedited, and says what it says."""

from __future__ import annotations

import re

import click

from scorecard.audit.pdf_compare import compare_with_fresh_render, layout_named_in
from scorecard.audit.pdf_tables import read_pdf_bytes, read_pdf_file
from scorecard.audit.readback import verify_pages
from scorecard.commands._common import approved_by_option, require_approval, say
from scorecard.errors import CheckFailed, UserError
from scorecard.render import load_layout, render_pdf, shipped_layouts
from scorecard.sheet import load_sheet, short_fingerprint


@click.command()
@click.argument("pdf_path", metavar="SHEET.pdf", type=click.Path())
@click.option("--sheet", "sheet_path", required=True, type=click.Path(), metavar="SHEET.json",
              help="The approved sheet document the PDF must print.")
@click.option("--layout", "layout_name", metavar="NAME|FILE", default=None,
              help="The layout the PDF was rendered with. Default: the shipped layout named in the PDF's metadata; "
                   "a PDF made with a layout file needs that file here.")
@approved_by_option
def command(pdf_path: str, sheet_path: str, layout_name: str | None, approved_by: str | None) -> None:
    """Check that SHEET.pdf is SHEET.json as `scorecard render` prints it, with no edit of any kind.

    \b
    1. The sheet is rendered again (the same sheet and layout give the same bytes); equal bytes match.
    2. Otherwise every page of both is rasterised and compared pixel for pixel; each region that
       differs is listed with the table and row it lies in. The text a reader extracts must equal
       the fresh render's word for word (invisible, white, clipped or tiny text is found there).
       Refused as well: annotations (stamps, free-text notes) and form fields; pages added, missing
       or in another order; metadata (fingerprint, title, layout) that differs; an embedded font
       whose glyphs or character map differ from the renderer's.
    3. Independently of the renderer, the PDF is read back with a general-purpose PDF text
       extractor (pdfplumber) and every table is compared with the sheet document cell by cell:
       each points table, pair grid, conversion entry and band; the fingerprint, title, outcome,
       cautions, model and 'Page x of y' on every page. Each difference is listed as: page,
       table, row, what is printed and what the sheet says.

    With --approved-by APPROVER.pub the sheet document must first carry that key's approval, unchanged
    (exit 3 otherwise); the PDF then prints the approver and the signature, and is compared as above.

    Exit 0 when everything matches, 3 on any difference, 2 when the file is not a readable sheet
    PDF. A paper copy cannot be verified by this command: check by eye that it prints the
    fingerprint (and approver) of the approved sheet (docs/audit.md).

    \b
    Example:
      scorecard verify demo_output/sheet.pdf --sheet demo_output/sheet.json
    """
    sheet = load_sheet(sheet_path)
    require_approval(sheet, sheet_path, approved_by)
    mismatches, summary = verify_printed(sheet, read_pdf_file(pdf_path), str(pdf_path), layout_name)
    for m in mismatches:
        click.echo(m.line())
    if mismatches:
        raise CheckFailed(f"{len(mismatches)} difference(s) between {pdf_path} and {sheet_path}; {summary}")
    say(f"all match: {summary}")


def verify_printed(sheet: dict, data: bytes, source: str, layout_name: str | None = None):
    """(every difference between the PDF bytes and the sheet, one summary line): the fresh-render comparison
    first, then the cell-by-cell read-back."""
    pages = read_pdf_bytes(data, source)
    readback = verify_pages(sheet, pages, source=source)
    layout, layout_note = _layout(layout_name, data, source)
    fresh = render_pdf(sheet, layout, short_fingerprint(sheet))
    comparison = compare_with_fresh_render(data, fresh, read_pdf_bytes(fresh, "fresh render"), pages, source)
    mismatches = ([layout_note] if layout_note else []) + comparison.mismatches + readback.mismatches
    how = ("identical bytes to a fresh render" if comparison.identical_bytes
           else "every page pixel for pixel against a fresh render" if not comparison.mismatches
           else "a fresh render")
    summary = (f"{readback.cells_checked} printed cells on {readback.pages} page(s) compared with sheet "
               f"{short_fingerprint(sheet)}; {how} (layout {layout.name})")
    return mismatches, summary


def _layout(given: str | None, data: bytes, pdf_path: str):
    """The layout to render again, and a mismatch when the PDF's metadata names none."""
    from scorecard.audit.readback import Mismatch

    if given:
        return load_layout(given), None
    named = layout_named_in(data, str(pdf_path))
    if named is None:
        return load_layout(None), Mismatch(None, "metadata", "Subject", "(names no layout)",
                                           "points sheet FINGERPRINT (LAYOUT), as `scorecard render` writes")
    if named not in shipped_layouts():
        if re.fullmatch(r"[\w.\- ]{1,80}", named) is None:
            named = named[:80].encode("unicode_escape").decode("ascii")
        raise UserError(f"{pdf_path}: rendered with layout {named!r}, which is not a shipped layout; "
                        f"give the layout file it was rendered with: --layout FILE.toml")
    return load_layout(named), None
