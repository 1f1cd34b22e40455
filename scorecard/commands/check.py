"""`scorecard check`: the agreement report between a printed sheet and its exact model on a cohort."""

from __future__ import annotations

import itertools
import re

import click

from scorecard.audit.agreement import check_agreement
from scorecard.audit.matching import OVERRIDE_OPTION, model_matches_sheet
from scorecard.audit.paper import sheet_features
from scorecard.audit.report_pdf import report_pdf_bytes
from scorecard.commands._common import FeatureValue, approved_by_option, output_path, require_approval, say
from scorecard.errors import CheckFailed, UserError
from scorecard.jsondoc import atomic_write_bytes, atomic_write_text, pretty_text
from scorecard.model import load_model
from scorecard.sheet import CAUTIONS, load_sheet, validate_sheet_dict
from scorecard.tabular import DEFAULT_CHUNK_ROWS, iter_table, require_columns
from scorecard.suggest import did_you_mean


def guess_outcome_column(sheet: dict, columns: list[str]) -> str | None:
    """A cohort column the sheet's outcome names (e.g. 'delirium' in 'Delirium within 5 days'), never a feature."""
    words = set(re.findall(r"[a-z0-9_]+", sheet["outcome"]["event"].lower()))
    features = set(sheet_features(sheet))
    for c in columns:
        if c not in features and (c.lower() in words or c.lower() == "_".join(sorted(words))):
            return c
    return None


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("--model", "model_path", required=True, type=click.Path(), metavar="MODEL.json",
              help="The exact model the sheet was built from (its fingerprint must match the sheet's).")
@click.option("--data", "cohort_path", required=True, type=click.Path(), metavar="COHORT.csv|.parquet",
              help="Patients to compare on: one row each, the columns the sheet needs (and the outcome, if known).")
@click.option("-o", "--output", required=True, type=click.Path(), metavar="REPORT.pdf", help="The report PDF to write.")
@click.option("--json", "json_path", type=click.Path(), metavar="REPORT.json", help="Also write every figure as JSON.")
@click.option("--outcome", metavar="COLUMN",
              help="Cohort column with the observed outcome (1/0, yes/no). Default: a column named by a word of the sheet's outcome (e.g. 'delirium').")
@click.option("--bootstrap", "replicates", default=200, show_default=True, type=click.IntRange(20, 10_000),
              help="Bootstrap resamples for the interval of the AUC loss.")
@click.option("--seed", default=0, show_default=True, type=click.IntRange(min=0), help="Seed of the bootstrap (same seed, same report).")
@click.option(OVERRIDE_OPTION, "allow_other", is_flag=True,
              help="Compare with a model whose fingerprint differs from the sheet's: warns loudly and marks the report FAIL.")
@approved_by_option
@click.option("--bound", "bound_items", multiple=True, metavar="FIELD=VALUE",
              type=FeatureValue("max_auc_loss=0.01", form="FIELD=VALUE"),
              help="Judge the sheet against this bound instead of the one stored in it (e.g. max_auc_loss=0.01); repeatable. "
                   "Fields are those of the sheet's bound block (docs/sheet-document.md); null leaves one unbounded.")
@click.option("--chunk-rows", default=DEFAULT_CHUNK_ROWS, show_default=True, type=click.IntRange(1),
              help="Patients read and scored at a time; only about 14 bytes per patient are kept between chunks, so "
                   "memory stays bounded; the report does not depend on it.")
def command(sheet_path, model_path, cohort_path, output, json_path, outcome, replicates, seed, allow_other,
            approved_by, bound_items, chunk_rows) -> None:
    """Check that the paper sheet SHEET.json agrees with its exact model on a cohort, and write the report.

    \b
    Every figure is recomputed here from the sheet document (patients are scored as a person reads the
    page, see `scorecard score`), never taken from the quantizer:
      - AUC of model and sheet and the AUC loss with a bootstrap interval, against observed outcomes when
        the cohort has them, otherwise against the outcomes the model's own risks imply;
      - max, 99th percentile and mean |sheet risk - model risk|, and the share over the sheet's bound;
      - calibration of the sheet against the model, Brier scores, and the risk-band agreement matrix;
      - with observed outcomes: AUC, calibration and a calibration plot for both;
      - a histogram of the risk differences, and the 20 patients who disagree most with their printed
        rows and the model's term contributions, so you see which row causes it;
      - each bound stored in the sheet, and the worst-case certificate, marked PASS or FAIL.

    The cohort is read in chunks of --chunk-rows patients and only a compact state is kept of each patient
    (the model's log-odds, the sheet's total, the outcome), so a cohort of tens of millions is checked in
    bounded memory; every figure is computed exactly from that state, the same as on the whole table.

    Exit 0 when every check passes, 3 when one fails (the report is written either way), 2 on bad input,
    including a model that is not the one the sheet was built from.

    \b
    Example:
      scorecard check demo_output/sheet.json --model demo_output/edited.model.json --data demo_output/audit-cohort.csv \\
          -o check-report.pdf --json check-report.json
    """
    out = output_path(output, sheet_path, model_path, cohort_path, binary=True)
    json_out = output_path(json_path, sheet_path, model_path, cohort_path, option="--json") if json_path else None
    if json_out is not None and json_out.resolve() == out.resolve():
        raise UserError(f"{json_path}: --json and -o name the same file; choose two paths")
    sheet = load_sheet(sheet_path)
    approval = require_approval(sheet, sheet_path, approved_by)
    sheet, bound_source, unsigned = bound_to_judge(sheet, sheet_path, approval, bound_items)
    model = load_model(model_path)
    matches = model_matches_sheet(model, sheet, model_path, allow_other, say)
    chunks = iter_table(cohort_path, chunk_rows)
    first = next(chunks)
    require_columns(first, sheet_features(sheet), "the sheet")  # before the outcome note: a bad cohort is one line
    if outcome is None:
        outcome = guess_outcome_column(sheet, list(first.columns))
        if outcome:
            say(f"note: using column {outcome!r} as the observed outcome (named in the sheet's outcome); change it with --outcome")
    elif outcome not in first.columns:
        raise UserError(f"{cohort_path}: outcome column {outcome!r} (from --outcome) is not in the file"
                        f"{did_you_mean(outcome, list(first.columns))}")
    report = check_agreement(sheet, model, itertools.chain([first], chunks), outcome=outcome, replicates=replicates, seed=seed,
                             model_matches=matches, progress=say)
    report["bound_source"] = bound_source
    if unsigned:
        report["bound_warning"] = unsigned
    for line in report["warnings"]:
        say(line)
    inputs = (sheet_path, model_path, cohort_path)
    atomic_write_bytes(out, report_pdf_bytes(report, sheet.get("cautions") or CAUTIONS), protect=inputs)
    if json_out is not None:
        atomic_write_text(json_out, pretty_text({**report, "cautions": sheet.get("cautions") or CAUTIONS}), protect=inputs)
    for line in summary_lines(report):
        say(line)
    say(f"bound: {bound_source}")
    if unsigned:
        say(unsigned)
    say(f"report written to {out}")
    failed = [b for b in report["bounds"] if not b["pass"]]
    if failed:
        raise CheckFailed("; ".join(f"{b['name']}: {b['shown']}" for b in failed))


UNSIGNED_BOUND = ("BOUND NOT APPROVED: the bounds judged here are the sheet's own, and no signature covers them "
                  "(anyone who edits a sheet can loosen its bound and recompute its fingerprint). Check an approved "
                  "sheet with --approved-by APPROVER.pub, or give the approved bound with --bound.")


def bound_to_judge(sheet: dict, sheet_path: str, approval: dict | None, items: tuple[tuple[str, str], ...]) -> tuple[dict, str, str | None]:
    """(the sheet with the bound to judge it by, where that bound came from, the warning when only the sheet's
    own unsigned bound was there)."""
    bound = dict(sheet["bound"])
    given = {}
    for name, text in items:
        item = f"{name}={text}"
        if name not in bound:
            raise UserError(f"--bound {item}: {name!r} is not a field of the sheet's bound; use one of {', '.join(sorted(bound))}"
                            f"{did_you_mean(name, sorted(bound))}")
        try:
            value = None if text.lower() in ("null", "none") else (int(text) if isinstance(bound[name], int) and not isinstance(bound[name], bool) else float(text))
        except ValueError:
            raise UserError(f"--bound {item}: {text!r} is not a {'whole ' if isinstance(bound[name], int) else ''}number") from None
        given[name] = value
    bound.update(given)
    if given:
        validate_sheet_dict({**{k: v for k, v in sheet.items() if k != "fingerprint"}, "bound": bound}, source="--bound")
    if approval:
        source = f"approved by {approval['name']} at {approval['approved_at']} (key {approval['key_fingerprint']}, signature verified)"
    else:
        source = "the sheet's own bound, not approved (no --approved-by)"
    if given:
        rest = f"the rest {source}" if approval else "the rest the sheet's own, not approved"
        source = f"{', '.join(f'{k}={v}' for k, v in given.items())} from the command line; {rest}"
    unsigned = UNSIGNED_BOUND if not approval and set(given) != set(bound) else None
    return {**sheet, "bound": bound}, source, unsigned


def summary_lines(report: dict) -> list[str]:
    """The terminal summary: the per-patient figures first (band agreement, percentile, largest |Δrisk|), then
    the rest, each PASS or FAIL against the sheet's bound; a figure no bound covers is named as not bounded,
    never as passing."""
    lead = ("band_agreement", "percentile_risk_error", "largest_risk_error")
    judged = [(b["name"], f"{b['what']}: {b['shown']}: {'PASS' if b['pass'] else 'FAIL'}") for b in report["bounds"]]
    free = [(f["name"], f"{f['what']}: {f['shown']}: not bounded (the sheet makes no promise on it)")
            for f in report.get("not_bounded", [])]
    lines = [line for name in lead for n, line in judged + free if n == name]
    lines += [line for n, line in judged + free if n not in lead]
    if not any(not b["pass"] for b in report["bounds"]):
        lines.append(f"every bound set on this sheet passes ({len(report['bounds'])} checks)"
                     + (f"; {len(free)} figures are not bounded (above)" if free else ""))
    return lines
