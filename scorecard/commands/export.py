"""`scorecard export`: a sheet in an open format for other systems (PMML 4.4 Scorecard)."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.export import FORMATS
from scorecard.jsondoc import atomic_write_bytes
from scorecard.sheet import load_sheet, short_fingerprint


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("--format", "fmt", required=True, type=click.Choice(sorted(FORMATS)), help="The open format to write.")
@click.option("-o", "--output", required=True, type=click.Path(), metavar="SHEET.pmml", help="The file to write.")
def command(sheet_path: str, fmt: str, output: str) -> None:
    """Write SHEET.json in an open format that other hospital systems read: a PMML 4.4 Scorecard.

    \b
    PMML is the Data Mining Group's open standard for predictive models. The Scorecard has one
    Characteristic per printed table and one Attribute per printed row (its predicate and its points);
    not-measured rows are isMissing predicates; the printed half-up rounding is built into the
    cut-points (a row printed from 70 starts at 69.5). The predicted value is the total points; the
    conversion is an output transformation (log_odds = offset + log-odds per point x total,
    risk = logistic(log_odds), band by the sheet's risk bands). The header carries the sheet's full
    fingerprint, its cautions and, for invented data, the invented-data mark. Flags are read as 0/1.

    \b
    Example:
      scorecard export demo_output/sheet.json --format pmml -o sheet.pmml
    """
    out = output_path(output, sheet_path)
    sheet = load_sheet(sheet_path)
    atomic_write_bytes(out, FORMATS[fmt](sheet), protect=(sheet_path,), text=True)  # PMML is XML text
    say(f"wrote {out} ({fmt.upper()}, sheet fingerprint {short_fingerprint(sheet)}); score a few patients with it and compare "
        "with `scorecard score` before another system relies on it")
