"""`scorecard edit`: change a fitted model without retraining, and record who, when, what, why and the cost."""

from __future__ import annotations

import getpass
import math
import os
from datetime import datetime, timezone
from pathlib import Path

import click

from scorecard.commands._common import BadValue, FeatureValue, level_list, output_path, say
from scorecard.errors import UserError
from scorecard.jsondoc import file_sha256
from scorecard.model import load_model, save_model
from scorecard.review.cost import cost_lines, edit_cost, observed_outcome
from scorecard.review.history import apply_edits
from scorecard.review.edits import (
    DECLARATIONS,
    DIRECTIONS,
    declare,
    force_direction,
    hold_beyond,
    pool_levels,
    remove_effect,
)
from scorecard.tabular import read_table


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


def _choice(allowed, reason: str):
    def cast(text: str) -> str:
        if text not in allowed:
            raise BadValue(reason)
        return text
    return cast


def _two_or_more_levels(text: str) -> list[str]:
    levels = level_list(text)
    if len(levels) < 2:
        raise BadValue("write TERM=LEVEL,LEVEL[,...] with at least two levels")
    return levels


def _finite_number(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise BadValue(f"{text!r} is not a number") from None
    if not math.isfinite(value):
        raise BadValue("the value must be a finite number")
    return value


# the option names of earlier releases, answered with the new name instead of click's bare "no such option"
RENAMED = {
    "--zero": "--remove-effect TERM",
    "--monotone": "--force-direction TERM=increasing|decreasing",
    "--clip": "--hold-above TERM=VALUE and/or --hold-below TERM=VALUE",
    "--merge": "--pool-levels TERM=A,B[,...]",
}


class EditCommand(click.Command):
    """`edit` with a did-you-mean for its renamed options."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        try:
            return super().parse_args(ctx, args)
        except click.NoSuchOption as exc:
            new = RENAMED.get(exc.option_name)
            if new is None:
                raise
            raise click.UsageError(f"no such option {exc.option_name}; did you mean {new}? (the edit options are "
                                   "--declare, --pool-levels, --hold-below, --hold-above, --force-direction, "
                                   "--remove-effect)", ctx) from None


def _outcome_column(model, given: str | None) -> str | None:
    if given:
        return given
    provenance = model.provenance
    for place in (provenance, provenance.get("fit") if isinstance(provenance.get("fit"), dict) else {}):
        column = place.get("outcome_column") if isinstance(place, dict) else None
        if isinstance(column, str):
            return column
    return None


@click.command(cls=EditCommand)
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--declare", "declarations", multiple=True, metavar="FEATURE=VALUE",
              type=FeatureValue("geriatric_review=care_process", _choice(DECLARATIONS, "write FEATURE=VALUE with VALUE one of "
                                                                            + ", ".join(DECLARATIONS))),
              help="Declare what a feature is: increasing / decreasing (risk should only rise / fall with it), "
                   "unordered (clear the direction), care_process (a treatment or care-process marker whose "
                   "apparent effect must not drive care) or measurement. Read by `scorecard review`. Repeatable.")
@click.option("--pool-levels", "pools", multiple=True, metavar="TERM=A,B[,...]",
              type=FeatureValue("residence=home,sheltered", _two_or_more_levels, form="TERM=LEVEL,LEVEL[,...]"),
              help="Pool these levels of a categorical term: they share their patient-weighted mean score. Repeatable.")
@click.option("--hold-below", "holds_below", multiple=True, metavar="TERM=VALUE",
              type=FeatureValue("sodium=125", _finite_number, form="TERM=VALUE"),
              help="Below VALUE the term keeps the score it has at VALUE (e.g. sodium=125: a sodium of 118 scores "
                   "as 125 does). VALUE must lie in the training range. Repeatable.")
@click.option("--hold-above", "holds_above", multiple=True, metavar="TERM=VALUE",
              type=FeatureValue("medicines=12", _finite_number, form="TERM=VALUE"),
              help="Above VALUE the term keeps the score it has at VALUE (e.g. medicines=12). VALUE must lie in "
                   "the training range. Repeatable.")
@click.option("--force-direction", "directions", multiple=True, metavar="TERM=increasing|decreasing",
              type=FeatureValue("age=increasing", _choice(DIRECTIONS, "write TERM=increasing or TERM=decreasing"),
                                form="TERM=increasing or TERM=decreasing"),
              help="Make risk only rise (or only fall) with a measurement or flag: its closest such shape "
                   "(weighted isotonic regression, weights = patients per bin); also declares the direction. Repeatable.")
@click.option("--remove-effect", "removals", multiple=True, metavar="TERM",
              help="Remove a term's effect: its scores become 0; the other terms keep their fitted scores. Repeatable.")
@click.option("--reason", default="", help="Why (free text), stored with every edit of this run.")
@click.option("--by", "editor", default=None, help="Who made the edit (default: the login name).")
@click.option("--data", "cohort_path", metavar="COHORT.csv", type=click.Path(),
              help="Patients to weigh the edits by and to measure their cost on (AUC change, calibration-in-the-large).")
@click.option("--outcome", "outcome", metavar="COLUMN",
              help="Outcome column (0/1) in --data. Default: the column the fitter recorded, if any. Without an "
                   "outcome the cost is measured against the unedited model's own risks.")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="Edited model to write.")
def command(model_path, declarations, pools, holds_below, holds_above, directions, removals, reason, editor, cohort_path, outcome, output) -> None:
    """Edit MODEL.json without retraining and write the edited model.

    \b
    Edits run in this order, each on the result of the one before:
      --declare, --pool-levels, --hold-below, --hold-above, --force-direction, --remove-effect.
    Every edit is appended to the model's provenance under `edits`: who (--by), when (UTC), what (in words
    and figures), why (--reason), the fingerprint of the model it was applied to and, with --data, its
    cost (AUC before and after; calibration-in-the-large, observed minus mean predicted risk). The cost is
    also printed. One run with several edits gives the same file as running them one at a time. The
    output's fingerprint changes with every edit; nothing is written if any edit is refused.

    \b
    Example:
      scorecard edit demo_output/fitted.model.json --declare geriatric_review=care_process \\
          --remove-effect geriatric_review --hold-above medicines=12 \\
          --reason "care-process marker; few patients above 12" \\
          --data demo_output/cohort.csv -o edited.model.json
    """
    out = output_path(output, model_path, cohort_path or "")
    if not (declarations or pools or holds_below or holds_above or directions or removals):
        raise UserError("no edit given; use --declare, --pool-levels, --hold-below, --hold-above, --force-direction "
                        "or --remove-effect (see scorecard edit --help)")
    model = load_model(model_path)
    if not isinstance(model.provenance.get("edits", []), list):
        raise UserError(f"{model_path}: provenance.edits must be a list of earlier edits; fix or remove it")
    cohort = read_table(cohort_path) if cohort_path else None
    column = _outcome_column(model, outcome) if cohort is not None else None
    if outcome and cohort is None:
        raise UserError("--outcome names a column of --data; give --data COHORT.csv too")
    observed = observed_outcome(cohort, column) if column is not None else None
    data_note = None
    if cohort_path:
        data_note = {"file": Path(cohort_path).name, "sha256": file_sha256(cohort_path), "rows": len(cohort)}

    steps = [lambda m, d=d: declare(m, *d) for d in declarations]
    steps += [lambda m, t=t: pool_levels(m, *t, cohort=cohort) for t in pools]
    steps += [lambda m, h=h: hold_beyond(m, h[0], lo=h[1]) for h in holds_below]
    steps += [lambda m, h=h: hold_beyond(m, h[0], hi=h[1]) for h in holds_above]
    steps += [lambda m, t=t: force_direction(m, *t, cohort=cohort) for t in directions]
    steps += [lambda m, t=t: remove_effect(m, t) for t in removals]

    current, records = apply_edits(model, steps, by=editor if editor else _default_editor(), at=_edit_time(),
                                   reason=reason, cohort=cohort, observed=observed, data_note=data_note)
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
