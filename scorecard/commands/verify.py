"""`scorecard verify`: read a printed sheet PDF back and compare it with its sheet document, cell by cell."""

from __future__ import annotations

import click

from scorecard.audit.readback import verify_pdf
from scorecard.commands._common import say
from scorecard.errors import CheckFailed
from scorecard.sheet import load_sheet, short_fingerprint


@click.command()
@click.argument("pdf_path", metavar="SHEET.pdf", type=click.Path())
@click.option("--sheet", "sheet_path", required=True, type=click.Path(), metavar="SHEET.json",
              help="The approved sheet document the PDF must print.")
def command(pdf_path: str, sheet_path: str) -> None:
    """Check that the printed PDF says exactly what the sheet document says.

    \b
    The PDF is read back with a general-purpose PDF text extractor (pdfplumber), the way any reader
    would, and every table is rebuilt from the words and rules on the page:
      - each points table: its heading, every printed row text and its points, in order;
      - each pair grid: its column headings, row texts and every cell, and the not-measured cell;
      - the conversion table: every total with its printed risk and band, in order;
      - the band table: each band's first and last total and risk;
      - the sheet's short fingerprint on every page, and no other sheet's fingerprint anywhere;
      - the title, outcome, horizon, population, model and cautions on every page, the rounding
        rule wherever it is printed, and each item's training range.
    Every difference is listed as: page, table, row, what is printed and what the sheet says.

    Exit 0 when everything matches, 3 on any mismatch (a PDF of another sheet version, or any changed
    number), 2 when the file is not a readable sheet PDF.

    \b
    Example:
      scorecard verify demo_output/sheet.pdf --sheet demo_output/sheet.json
    """
    sheet = load_sheet(sheet_path)
    result = verify_pdf(sheet, pdf_path)
    for m in result.mismatches:
        click.echo(m.line())
    summary = f"{result.cells_checked} printed cells on {result.pages} page(s) compared with sheet {short_fingerprint(sheet)}"
    if result.mismatches:
        raise CheckFailed(f"{len(result.mismatches)} mismatch(es) between {pdf_path} and {sheet_path}; {summary}")
    say(f"all match: {summary}")
