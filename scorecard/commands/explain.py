"""`scorecard explain`: one patient's terms, largest contribution first, with the baseline and the risk."""

from __future__ import annotations

import json
import textwrap
import math

import click
import numpy as np
import pandas as pd

from scorecard.cautions import cautions
from scorecard.commands._common import FeatureValue
from scorecard.errors import UserError
from scorecard.model import explain, load_model
from scorecard.model.document import AdditiveModel
from scorecard.sheet.printed import term_label
from scorecard.tabular import is_missing_text, read_table
from scorecard.suggest import did_you_mean


def values_frame(model: AdditiveModel, pairs: tuple[tuple[str, str], ...]) -> pd.DataFrame:
    """A one-patient table from (feature, value) pairs; features not given are not measured."""
    given: dict[str, str] = {}
    known = {f.name for f in model.features}
    for name, value in pairs:
        pair = f"{name}={value}"
        if name not in known:
            raise UserError(f"--values {pair}: feature {name!r} is not in the model{did_you_mean(name, known)}; "
                            f"known features: {', '.join(sorted(known))}")
        if name in given:
            raise UserError(f"--values {pair}: feature {name!r} is given twice")
        given[name] = value
    required = [n for n in model.used_features if model.feature(n).missing == "error" and n not in given]
    if required:
        listed = ", ".join(required)
        raise UserError(f"--values: the model needs a value for {listed}; add --values {required[0]}=... for each")
    frame = pd.DataFrame({n: [given.get(n, "")] for n in model.used_features}, dtype=str)
    frame.attrs["source"] = "--values"
    return frame


def _notes(model: AdditiveModel, frame: pd.DataFrame, row: int, names: list[str]) -> list[str]:
    notes = []
    for name in names:
        cell = frame.iloc[[row]][name]
        feature = model.feature(name)
        if is_missing_text(cell)[0]:
            notes.append(f"{name} not measured")
            continue
        rng = feature.training_range
        if feature.kind == "continuous" and rng:
            value = float(cell.iloc[0])
            if value < rng["min"] or value > rng["max"]:
                notes.append(f"{name} outside training range {rng['min']:g}-{rng['max']:g}")
    return notes


def explanation(model: AdditiveModel, frame: pd.DataFrame, row: int) -> dict:
    """predict.explain's result with the values as text and a note on not-measured or out-of-range values."""
    result = explain(model, frame, row)
    for entry in result["terms"]:
        names = list(entry["values"])
        entry["values"] = {n: ("" if is_missing_text(frame.iloc[[row]][n])[0] else str(frame.iloc[row][n]).strip()) for n in names}
        entry["notes"] = _notes(model, frame, row, names)
    return result


TERM_WIDTH = 36  # a long label wraps onto lines of its own, so the numbers stay in one column


def table_text(model: AdditiveModel, result: dict, where: str) -> str:
    """The explanation as a table; each term is named as the pages name it (`term_label`: a pair reads
    'Age with cognitive screen score (0-10)'), the values by their column names, as --values takes them."""
    rows = []
    for entry in result["terms"]:
        shown = ", ".join(f"{n}={v if v != '' else 'not measured'}" for n, v in entry["values"].items())
        label = textwrap.wrap(term_label(model, entry["term"]), TERM_WIDTH) or [entry["term"]]
        rows.append((label, shown, entry["contribution"], "; ".join(entry["notes"])))
    w_term = max([len("term")] + [len(line) for r in rows for line in r[0]])
    w_val = min(40, max([len("value")] + [len(r[1]) for r in rows]))
    lines = [
        f"{model.name} version {model.version}: {model.outcome['event']} ({model.outcome['horizon']})",
        f"patient: {where}",
        "",
        f"{'term':<{w_term}}  {'value':<{w_val}}  {'log-odds':>9}  {'odds x':>7}  note",
        f"{'-' * w_term}  {'-' * w_val}  {'-' * 9}  {'-' * 7}  ----",
    ]
    for label, shown, contribution, note in rows:
        lines.append(f"{label[0]:<{w_term}}  {shown[:w_val]:<{w_val}}  {contribution:>+9.3f}  {math.exp(contribution):>7.2f}  {note}")
        lines += [f"  {more}" for more in label[1:]]
    lines += [
        "",
        f"{'baseline (intercept)':<{w_term + w_val + 2}}  {result['baseline']:>+9.3f}",
        f"{'total log-odds':<{w_term + w_val + 2}}  {result['logodds']:>+9.3f}",
        f"{'risk':<{w_term + w_val + 2}}  {100 * result['risk']:>8.1f}%",
        "",
        *textwrap.wrap(" ".join(cautions("this explanation", "The contributions show")), 110),
        f"Model fingerprint: {model.fingerprint}",
    ]
    return "\n".join(lines)


@click.command()
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--row", type=int, metavar="N", help="Patient to explain: data row N of --data (1 = first row under the header).")
@click.option("--data", "cohort_path", metavar="COHORT.csv", type=click.Path(), help="Cohort holding the patient.")
@click.option("--values", "pairs", multiple=True, metavar="FEATURE=VALUE",
              type=FeatureValue("age=84 --values sodium=128", empty_ok=True),
              help="Describe the patient directly instead (repeatable); features not given count as not measured, "
                   "which is refused for a feature the model cannot score when missing.")
@click.option("--json", "as_json", is_flag=True, help="Print the explanation as JSON instead of a table.")
def command(model_path: str, row: int | None, cohort_path: str | None, pairs: tuple[str, ...], as_json: bool) -> None:
    """Explain one patient's risk: every term's contribution, largest first, with the baseline and the risk.

    Contributions are on the log-odds scale (0 = the population average for that term); `odds x` is the
    factor the term multiplies the odds by. The risk is the model's exact risk, the same as `scorecard predict`.

    \b
    Examples:
      scorecard explain demo_output/edited.model.json --row 12 --data demo_output/audit-cohort.csv
      scorecard explain demo_output/edited.model.json --row 12 --data demo_output/audit-cohort.csv --json
    """
    model = load_model(model_path)
    if pairs and (row is not None or cohort_path):
        raise UserError("give either --row N with --data COHORT.csv, or --values FEATURE=VALUE, not both")
    if pairs:
        frame, index, where = values_frame(model, pairs), 0, "given with --values"
    else:
        if row is None or not cohort_path:
            raise UserError("name the patient: --row N --data COHORT.csv, or --values FEATURE=VALUE ...")
        frame = read_table(cohort_path)
        if not 1 <= row <= len(frame):
            raise UserError(f"{cohort_path}: --row {row} does not exist; the file has data rows 1 to {len(frame)}")
        index, where = row - 1, f"row {row} of {cohort_path}"
    result = explanation(model, frame, index)
    if as_json:
        doc = {"model": {"name": model.name, "version": model.version, "fingerprint": model.fingerprint}, "patient": where, **result}
        click.echo(json.dumps(doc, indent=2, sort_keys=True, default=lambda v: v.item() if isinstance(v, np.generic) else str(v)))
    else:
        click.echo(table_text(model, result, where))
