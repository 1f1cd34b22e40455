"""`scorecard score`: apply the printed sheet to every patient, exactly as a person scores on paper."""

from __future__ import annotations

import click

from scorecard.audit.matching import OVERRIDE_OPTION, model_matches_sheet
from scorecard.audit.paper import SheetReading, score_cohort
from scorecard.audit.table import scored_columns, scored_table
from scorecard.csv_cells import csv_text
from scorecard.commands._common import approved_by_option, output_path, require_approval, say
from scorecard.errors import UserError
from scorecard.model import load_model, predict_logodds, logistic
from scorecard.sheet import load_sheet
from scorecard.table_writer import TableWriter
from scorecard.tabular import DEFAULT_CHUNK_ROWS, iter_table
from scorecard.suggest import did_you_mean


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.argument("cohort_path", metavar="COHORT.csv|.parquet", type=click.Path())
@click.option("-o", "--output", required=True, type=click.Path(), metavar="SCORED.csv|.parquet",
              help="CSV (or Parquet, for a name ending in .parquet) to write, one row per patient, cohort order.")
@click.option("--model", "model_path", type=click.Path(), metavar="MODEL.json",
              help="Also write the exact model's risk and the difference sheet - model. Must be the sheet's own model.")
@click.option("--keep", multiple=True, metavar="COLUMN", help="Copy this cohort column into the output (e.g. a patient id); repeatable.")
@click.option(OVERRIDE_OPTION, "allow_other", is_flag=True, help="Accept a model whose fingerprint differs from the sheet's (warns loudly).")
@approved_by_option
@click.option("--chunk-rows", default=DEFAULT_CHUNK_ROWS, show_default=True, type=click.IntRange(1),
              help="Patients read, scored and written at a time: memory stays bounded whatever the cohort's size; "
                   "the output does not depend on it.")
def command(sheet_path: str, cohort_path: str, output: str, model_path: str | None, keep: tuple[str, ...], allow_other: bool,
            approved_by: str | None, chunk_rows: int) -> None:
    """Score every patient in COHORT (.csv or .parquet) with the printed sheet SHEET.json, the way a nurse does on paper.

    \b
    For each block of the sheet:
      - a measurement is rounded half up to the decimals printed for it, exactly as written (36.45 at one
        decimal is 36.5, 128.4999997 at none is 128), or cut down where its table says 'completed'
        (79.6 completed years is 79); then it belongs to the printed row with lower <= value < upper;
      - a category finds the row listing it, a yes/no item its Yes or No row, an empty cell the
        "not measured" row; where a table has none the sheet says measure first, and a patient without
        that measurement is refused (row and column named), as `--model` refuses them;
      - a pair grid is read at the row of the first item and the column of the second.
    The points are added and the total is looked up in the conversion table.

    Writes, per patient: `row:<term>` (the printed row text) and `points:<term>` for every block, `total`,
    `sheet_risk` (fraction) and `sheet_risk_text` (as printed), `band` when the sheet has bands, and with
    --model also `model_risk` and `risk_difference`. Values outside a training range are scored in the end
    row; when most values of an item are outside, a loud warning suggests wrong units. The cohort is read in
    chunks of --chunk-rows patients, so a cohort of any size is scored in bounded memory.

    \b
    Example:
      scorecard score demo_output/sheet.json demo_output/audit-cohort.csv --model demo_output/edited.model.json --keep patient_id -o scored.csv
    """
    out = output_path(output, sheet_path, cohort_path, model_path or "")
    sheet = load_sheet(sheet_path)
    require_approval(sheet, sheet_path, approved_by)
    model = None
    if model_path:
        model = load_model(model_path)
        model_matches_sheet(model, sheet, model_path, allow_other, say)
    protect = (sheet_path, cohort_path) + ((model_path,) if model_path else ())
    reading, patients = SheetReading(), 0
    with TableWriter(out, protect=protect) as writer:
        for k, cohort in enumerate(iter_table(cohort_path, chunk_rows)):
            if k == 0:
                for name in keep:
                    if name not in cohort.columns:
                        raise UserError(f"{cohort_path}: --keep column {name!r} is not in the file{did_you_mean(name, list(cohort.columns))}")
            scored = score_cohort(sheet, cohort)
            reading.add(scored.reading)
            model_risk = logistic(predict_logodds(model, cohort)[0]) if model is not None else None
            kept = cohort[list(keep)] if keep else None
            if writer.parquet:
                writer.write_frame(scored_table(scored, sheet, kept, model_risk))
            else:
                writer.write_text(csv_text(scored_columns(scored, sheet, kept, model_risk), header=k == 0))
            patients += scored.n
    for line in reading.warnings():
        say(line)
    for line in reading.notes():
        say(f"note: {line}")
    say(f"wrote {patients} scored patients to {out}")
