"""`scorecard compare`: what changed between two versions of a sheet (or of a model), for re-training staff."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.compare import cohort_changes, model_changes, sheet_changes
from scorecard.compare.report_pdf import compare_pdf_bytes
from scorecard.errors import UserError
from scorecard.invented import is_invented
from scorecard.jsondoc import atomic_write_bytes, atomic_write_text, pretty_text, read_json_file
from scorecard.model import load_model
from scorecard.sheet import CAUTIONS, load_sheet
from scorecard.tabular import read_table


def _kind(path: str) -> str:
    doc = read_json_file(path, "sheet or model document")
    tag = doc.get("document") if isinstance(doc, dict) else None
    if tag == "scorecard-sheet":
        return "sheet"
    if tag == "scorecard-model":
        return "model"
    raise UserError(f"{path}: is neither a sheet document (*.sheet.json) nor a model document (*.model.json); "
                    "give two sheets or two models written by scorecard")


@click.command()
@click.argument("old_path", metavar="OLD.json", type=click.Path())
@click.argument("new_path", metavar="NEW.json", type=click.Path())
@click.option("--data", "cohort_path", type=click.Path(), metavar="COHORT.csv",
              help="Sheets only: score these patients with both versions and count who changes total and band.")
@click.option("-o", "--output", type=click.Path(), metavar="CHANGES.pdf", help="The comparison as a PDF for the training team.")
@click.option("--json", "json_path", type=click.Path(), metavar="CHANGES.json", help="The comparison as JSON.")
def command(old_path: str, new_path: str, cohort_path: str | None, output: str | None, json_path: str | None) -> None:
    """Show what changed from OLD.json to NEW.json: two sheet documents, or two model documents.

    \b
    For two sheets, block by block on the values a nurse writes down (both versions' cut-points, each
    with its own half-up rounding):
      - blocks added or removed, rows re-cut, points changed (old row and points -> new row and points);
      - the conversion: every total whose printed risk or band differs; bands added, moved or re-worded;
      - the scale, the range of totals, the model each was built from, and both fingerprints;
      - with --data, the patients scored by both versions as the paper does: how many get another
        total, printed risk or band, a band-to-band table, and per block how many change points.
    For two models: terms added or removed, how far each shape moved (log-odds, probed at every edge and
    knot of either version), the intercept, feature declarations and the edits made since.

    Writes the PDF (-o) and/or JSON (--json); a one-line summary goes to stderr. Exit 0 whether or not
    anything changed; 2 on bad input.

    \b
    Example:
      scorecard compare old.sheet.json demo_output/sheet.json --data demo_output/audit-cohort.csv -o changes.pdf --json changes.json
    """
    if not output and not json_path:
        raise UserError("compare: give -o CHANGES.pdf and/or --json CHANGES.json for the comparison")
    inputs = (old_path, new_path) + ((cohort_path,) if cohort_path else ())
    out = output_path(output, *inputs) if output else None
    json_out = output_path(json_path, *inputs, option="--json") if json_path else None
    if out is not None and json_out is not None and out.resolve() == json_out.resolve():
        raise UserError(f"{json_path}: --json and -o name the same file; choose two paths")
    kinds = (_kind(old_path), _kind(new_path))
    if kinds[0] != kinds[1]:
        raise UserError(f"{new_path}: is a {kinds[1]} document but {old_path} is a {kinds[0]}; compare two sheets or two models")
    if kinds[0] == "sheet":
        old, new = load_sheet(old_path), load_sheet(new_path)
        invented = is_invented(old) or is_invented(new)
        report = sheet_changes(old, new)
        cautions = new.get("cautions") or CAUTIONS
        if cohort_path:
            report["cohort"] = cohort_changes(old, new, read_table(cohort_path))
            for line in report["cohort"]["warnings"]:
                say(line)
    else:
        if cohort_path:
            raise UserError("--data: a cohort is compared on two sheets; for two models compare their shapes only (drop --data)")
        old_model, new_model = load_model(old_path), load_model(new_path)
        invented = is_invented(old_model) or is_invented(new_model)
        report = model_changes(old_model, new_model)
        cautions = CAUTIONS
    report["paths"] = {"old": old_path, "new": new_path}
    report["invented"] = invented  # either version made from invented data marks every page (scorecard.invented)
    report["cautions"] = list(cautions)
    if out is not None:
        atomic_write_bytes(out, compare_pdf_bytes(report), protect=inputs)
    if json_out is not None:
        atomic_write_text(json_out, pretty_text(report), protect=inputs)
    s = report["summary"]
    line = ("no change: the two documents are the same" if report["identical"] else
            f"{s['added']} added, {s['removed']} removed, {s['changed']} changed, {s['unchanged']} unchanged")
    if report.get("cohort"):
        c = report["cohort"]
        line += f"; {c['total_changed']:,} of {c['n']:,} patients change total"
        if c["bands"]:
            line += f", {c['bands']['band_changed']:,} change band"
    say(f"{line}; written to {', '.join(str(p) for p in (out, json_out) if p is not None)}")
