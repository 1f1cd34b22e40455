"""`scorecard edit`: change a fitted model without retraining, and record who, when, what, why and the cost."""

from __future__ import annotations

import getpass
import os
from datetime import datetime, timezone
from pathlib import Path

import click

from scorecard.commands._common import output_path, say
from scorecard.errors import UserError
from scorecard.jsondoc import file_sha256
from scorecard.model import load_model, save_model
from scorecard.review.cost import cost_lines, edit_cost, observed_outcome
from scorecard.review.edits import (
    DIRECTIONS,
    clip_term,
    declare,
    merge_levels,
    monotone_term,
    parse_clip,
    parse_declaration,
    parse_merge,
    zero_term,
)
from scorecard.tabular import read_csv


def _edit_time() -> str:
    """UTC now, or SOURCE_DATE_EPOCH when set (common practice for reproducible outputs)."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch:
        try:
            moment = datetime.fromtimestamp(int(epoch), tz=timezone.utc)
        except ValueError:
            raise UserError(f"SOURCE_DATE_EPOCH={epoch!r}: must be whole seconds since 1970; unset it or fix it") from None
    else:
        moment = datetime.now(timezone.utc)
    return moment.replace(microsecond=0).isoformat().replace("+00:00", "Z")


def _default_editor() -> str:
    try:
        return getpass.getuser()
    except Exception:  # no login name in some containers
        return "unknown"


def _parse_monotone(text: str) -> tuple[str, str]:
    name, eq, direction = text.partition("=")
    if not eq or not name.strip() or direction.strip() not in DIRECTIONS:
        raise UserError(f"--monotone {text}: write TERM=increasing or TERM=decreasing, e.g. --monotone age=increasing")
    return name.strip(), direction.strip()


def _outcome_column(model, given: str | None) -> str | None:
    if given:
        return given
    provenance = model.provenance
    for place in (provenance, provenance.get("fit") if isinstance(provenance.get("fit"), dict) else {}):
        column = place.get("outcome_column") if isinstance(place, dict) else None
        if isinstance(column, str):
            return column
    return None


@click.command()
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--declare", "declarations", multiple=True, metavar="FEATURE=VALUE",
              help="Declare what a feature is: increasing / decreasing (risk should only rise / fall with it), "
                   "unordered (clear the direction), care_process (a treatment or care-process marker whose "
                   "apparent effect must not drive care) or measurement. Read by `scorecard review`. Repeatable.")
@click.option("--merge", "merges", multiple=True, metavar="TERM=A,B[,...]",
              help="Give these levels of a categorical term their patient-weighted mean score. Repeatable.")
@click.option("--clip", "clips", multiple=True, metavar="TERM=LO:HI",
              help="Freeze a continuous shape beyond [LO, HI]: values below LO score as LO, above HI as HI. "
                   "Either bound may be empty (TERM=:HI). Bounds must lie in the training range. Repeatable.")
@click.option("--monotone", "monotones", multiple=True, metavar="TERM=increasing|decreasing",
              help="Replace a continuous or flag shape by its closest monotone shape (weighted isotonic regression, "
                   "weights = patients per bin) and declare the direction. Repeatable.")
@click.option("--zero", "zeros", multiple=True, metavar="TERM",
              help="Set a term's scores to 0; the other terms keep their fitted scores. Repeatable.")
@click.option("--reason", default="", help="Why (free text), stored with every edit of this run.")
@click.option("--by", "editor", default=None, help="Who made the edit (default: the login name).")
@click.option("--data", "cohort_path", metavar="COHORT.csv", type=click.Path(),
              help="Patients to weigh the edits by and to measure their cost on (AUC change, calibration-in-the-large).")
@click.option("--outcome", "outcome", metavar="COLUMN",
              help="Outcome column (0/1) in --data. Default: the column the fitter recorded, if any. Without an "
                   "outcome the cost is measured against the unedited model's own risks.")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="Edited model to write.")
def command(model_path, declarations, merges, clips, monotones, zeros, reason, editor, cohort_path, outcome, output) -> None:
    """Edit MODEL.json without retraining and write the edited model.

    \b
    Edits run in this order, each on the result of the one before:
      --declare, --merge, --clip, --monotone, --zero.
    Every edit is appended to the model's provenance under `edits`: who (--by), when (UTC), what (in words
    and figures), why (--reason), the fingerprint of the model it was applied to and, with --data, its
    cost (AUC before and after; calibration-in-the-large, observed minus mean predicted risk). The cost is
    also printed. One run with several edits gives the same file as running them one at a time. The
    output's fingerprint changes with every edit; nothing is written if any edit is refused.

    \b
    Example:
      scorecard edit demo_output/fitted.model.json --declare geriatric_review=care_process \\
          --zero geriatric_review --clip medicines=:12 --reason "care-process marker; few patients above 12" \\
          --data demo_output/cohort.csv -o edited.model.json
    """
    out = output_path(output, model_path, cohort_path or "")
    if not (declarations or merges or clips or monotones or zeros):
        raise UserError("no edit given; use --declare, --merge, --clip, --monotone or --zero (see scorecard edit --help)")
    model = load_model(model_path)
    if not isinstance(model.provenance.get("edits", []), list):
        raise UserError(f"{model_path}: provenance.edits must be a list of earlier edits; fix or remove it")
    cohort = read_csv(cohort_path) if cohort_path else None
    column = _outcome_column(model, outcome) if cohort is not None else None
    if outcome and cohort is None:
        raise UserError("--outcome names a column of --data; give --data COHORT.csv too")
    observed = observed_outcome(cohort, column) if column is not None else None
    data_note = None
    if cohort_path:
        data_note = {"file": Path(cohort_path).name, "sha256": file_sha256(cohort_path), "rows": len(cohort)}

    steps = [lambda m, d=d: declare(m, *parse_declaration(d)) for d in declarations]
    steps += [lambda m, t=t: merge_levels(m, *parse_merge(t), cohort=cohort) for t in merges]
    steps += [lambda m, t=t: clip_term(m, *parse_clip(t)) for t in clips]
    steps += [lambda m, t=t: monotone_term(m, *_parse_monotone(t), cohort=cohort) for t in monotones]
    steps += [lambda m, t=t: zero_term(m, t) for t in zeros]

    who = editor if editor else _default_editor()
    when = _edit_time()
    records = []
    current = model
    for step in steps:
        edited, record = step(current)
        record = {"by": who, "at": when, **record, "reason": reason, "applied_to": current.fingerprint}
        if cohort is not None and record["action"] != "declare":
            record["data"] = data_note
            record["cost"] = edit_cost(current, edited, cohort, observed)
        records.append(record)
        # each step's model carries its own record, so `applied_to` of the next edit is the fingerprint the
        # model would have had if the edits had been run one command at a time
        edited.provenance["edits"] = list(current.provenance.get("edits", [])) + [record]
        current = edited
    history = model.provenance.get("edits", [])
    fingerprint = save_model(current, out, protect=(model_path,) + ((cohort_path,) if cohort_path else ()))

    for record in records:
        click.echo(f"{record['action']}: {record['what']}")
        if "cost" in record:
            for line in cost_lines(record["cost"]):
                click.echo(f"    {line}")
    if cohort is None and any(r["action"] != "declare" for r in records):
        click.echo("cost not measured: give --data COHORT.csv to see what the edits cost")
    if cohort is not None and len(records) > 1:
        total = edit_cost(model, current, cohort, observed)
        click.echo("all edits together:")
        for line in cost_lines(total):
            click.echo(f"    {line}")
    say(f"wrote {out} (fingerprint {fingerprint[:12]}, {_count(len(history) + len(records), 'edit')} in its history)")


def _count(n: int, noun: str) -> str:
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"
