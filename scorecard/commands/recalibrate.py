"""`scorecard recalibrate`: the unit's own outcomes refit a sheet's conversion; rows and points stay."""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.commands._common import output_path, say
from scorecard.errors import CheckFailed, UserError
from scorecard.jsondoc import atomic_write_text, file_sha256, pretty_text
from scorecard.model import load_model
from scorecard.recalibrate import assess, recalibrated_sheet
from scorecard.recalibrate.adequacy import SLOPE_FAR_HIGH, SLOPE_FAR_LOW
from scorecard.sheet import load_sheet, save_sheet, short_fingerprint
from scorecard.tabular import read_table


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("--data", "data_path", required=True, type=click.Path(), metavar="LOCAL.csv",
              help="The unit's own patients: the columns the sheet needs and the observed outcome.")
@click.option("--outcome", required=True, metavar="COLUMN", help="Column of LOCAL.csv with the observed outcome (1/0, yes/no; empty = unknown).")
@click.option("-o", "--output", required=True, type=click.Path(), metavar="LOCAL.sheet.json", help="The recalibrated sheet document to write.")
@click.option("--model", "model_path", type=click.Path(), metavar="MODEL.json",
              help="The sheet's exact model: when recalibration is not enough, tells re-quantising from refitting.")
@click.option("--json", "json_path", type=click.Path(), metavar="FIGURES.json", help="Also write the figures (written on refusal too).")
def command(sheet_path, data_path, outcome, output, model_path, json_path) -> None:
    """Refit only the conversion of SHEET.json on the unit's own patients: logistic recalibration.

    \b
    Every patient of LOCAL.csv with a known outcome is scored as the paper does; then
      logit P(event) = a + b x (sheet log-odds)
    is fitted by maximum likelihood. The new sheet keeps every printed row and point; its conversion is
    risk = logistic(a + b x (offset + log-odds per point x total)), its certificate is restated on the new
    scale, and it records its lineage (the original fingerprint, a and b with 95% intervals, the data
    file's SHA-256), printed on the sheet as "recalibrated from ...". It gets a new fingerprint: render
    and approve it like any new version.

    \b
    Refuses (exit 3, nothing written but --json) when a new conversion is not enough, and says what to do:
      - a block whose observed effect is reversed on these patients (its 95% interval wholly below 0):
        refit the model on the unit's patients, review the block, quantise again;
      - a calibration slope whose 95% interval lies wholly outside 0.5 to 2: refit, or with --model, when
        the exact model itself recalibrates with a slope near 1, re-quantise the model on these patients.
    Needs at least 20 events and 20 non-events (exit 2 otherwise).

    \b
    Example:
      scorecard recalibrate demo_output/sheet.json --data demo_output/audit-cohort.csv --outcome delirium -o local.sheet.json
    """
    inputs = (sheet_path, data_path) + ((model_path,) if model_path else ())
    out = output_path(output, *inputs)
    json_out = output_path(json_path, *inputs, option="--json") if json_path else None
    if json_out is not None and json_out.resolve() == out.resolve():
        raise UserError(f"{json_path}: --json and -o name the same file; choose two paths")
    sheet = load_sheet(sheet_path)
    model = None
    if model_path:
        model = load_model(model_path)
        if model.fingerprint != sheet["model"]["fingerprint"]:
            raise UserError(f"{model_path}: model fingerprint {model.fingerprint[:12]} is not the one the sheet was built from "
                            f"({sheet['model']['fingerprint'][:12]}); give the sheet's own model with --model, or leave --model out")
    frame = read_table(data_path)
    figures = assess(sheet, frame, outcome, model)
    for line in figures["warnings"]:
        say(line)
    if json_out is not None:
        atomic_write_text(json_out, pretty_text(figures), protect=inputs)
    say(f"{figures['n']:,} patients with a known outcome ({figures['events']:,} events, {figures['event_rate']:.1%}); "
        f"mean risk on the sheet {figures['mean_sheet_risk']:.1%}")
    say(f"recalibration: intercept {figures['intercept']:+.3f} (95% CI {figures['intercept_ci'][0]:+.3f} to {figures['intercept_ci'][1]:+.3f}), "
        f"slope {figures['slope']:.3f} (95% CI {figures['slope_ci'][0]:.3f} to {figures['slope_ci'][1]:.3f})")
    if not figures["converged"]:
        raise CheckFailed(f"{data_path}: the recalibration did not converge (the outcome is separated by the totals); "
                          "recalibration is not enough: refit the model on the unit's patients")
    if not figures["enough"]:
        raise CheckFailed("recalibration is not enough: " + "; ".join(figures["reasons"]) + ". Instead: " + "; ".join(figures["advice"]))
    data = {"file": Path(data_path).name, "sha256": file_sha256(data_path), "rows": int(len(frame))}
    new = recalibrated_sheet(sheet, figures, data)
    fingerprint = save_sheet(new, out, protect=inputs)
    say(f"slope within {SLOPE_FAR_LOW:g} to {SLOPE_FAR_HIGH:g} and no reversed block: wrote {out} (fingerprint {fingerprint[:12]}, "
        f"recalibrated from {short_fingerprint(sheet)}); render it and have it approved before it replaces the ward copy")
