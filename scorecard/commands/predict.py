"""`scorecard predict`: the exact model's log-odds and risk for every patient (the software score)."""

from __future__ import annotations

import click
import numpy as np

from scorecard.commands._common import output_path, say
from scorecard.csv_cells import frame_csv_text
from scorecard.errors import UserError
from scorecard.model import PredictionReport, contributions, load_model, logistic
from scorecard.table_writer import TableWriter
from scorecard.tabular import DEFAULT_CHUNK_ROWS, iter_table
from scorecard.suggest import did_you_mean


@click.command()
@click.argument("model_path", metavar="MODEL.json")
@click.argument("cohort_path", metavar="COHORT.csv|.parquet")
@click.option("-o", "--output", "output", required=True, metavar="RISKS.csv|.parquet",
              help="CSV (or Parquet, for a name ending in .parquet) to write, one row per patient.")
@click.option("--contributions", "with_parts", is_flag=True, help="Add one column per term: its log-odds contribution.")
@click.option("--keep", multiple=True, metavar="COLUMN", help="Copy this cohort column into the output (e.g. a patient id); repeatable.")
@click.option("--chunk-rows", default=DEFAULT_CHUNK_ROWS, show_default=True, type=click.IntRange(1),
              help="Patients read, scored and written at a time: memory stays bounded whatever the cohort's size; "
                   "the output does not depend on it.")
def command(model_path: str, cohort_path: str, output: str, with_parts: bool, keep: tuple[str, ...], chunk_rows: int) -> None:
    """Compute the exact model's log-odds and risk for every patient in COHORT (.csv or .parquet).

    Writes `logodds` and `risk` columns (risk as a fraction, 0-1), in cohort order. This is the software
    score the printed sheet is later checked against. Values outside the training range are scored in the
    end bin and counted on stderr; not-measured values follow each feature's policy. The cohort is read in
    chunks of --chunk-rows patients, so a cohort of any size is scored in bounded memory.

    \b
    Example:
      scorecard predict demo_output/edited.model.json demo_output/audit-cohort.csv -o risks.csv --keep patient_id --contributions
    """
    out = output_path(output, model_path, cohort_path)
    model = load_model(model_path)
    report = PredictionReport()
    with TableWriter(out, protect=(model_path, cohort_path)) as writer:
        for k, cohort in enumerate(iter_table(cohort_path, chunk_rows)):
            if k == 0:
                for name in keep:
                    if name not in cohort.columns:
                        raise UserError(f"{cohort_path}: --keep column {name!r} is not in the file{did_you_mean(name, list(cohort.columns))}")
            table, chunk_report = _risk_table(model, cohort, keep, with_parts, cohort_path)
            report.add(chunk_report)
            if writer.parquet:
                writer.write_frame(table)
            else:
                writer.write_text(frame_csv_text(table, header=k == 0))
    for line in report.lines():
        say(f"note: {line}")
    say(f"wrote {report.rows} patients to {out}")


def _risk_table(model, cohort, keep, with_parts: bool, cohort_path: str):
    """One chunk's output rows and its input report."""
    parts, report = contributions(model, cohort)
    logodds = model.intercept + parts.to_numpy().sum(axis=1)
    if not np.isfinite(logodds).all():  # cannot happen within the document's bounds; never write inf as a risk
        row = int(cohort.attrs.get("first_row", 0)) + int(np.flatnonzero(~np.isfinite(logodds))[0]) + 1
        raise UserError(f"{cohort_path}: row {row}: the model's log-odds are not a finite number; check the model document")
    table = cohort[list(keep)].copy()
    table["logodds"] = logodds
    table["risk"] = logistic(logodds)
    if with_parts:
        for name in parts.columns:
            table[f"term:{name}"] = parts[name].to_numpy()
    return table, report
