"""`scorecard mark`: staff answers to a hand-scoring exercise marked against its key."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.exercise import mark_answers
from scorecard.jsondoc import atomic_write_text, pretty_text
from scorecard.tabular import read_csv
from scorecard.sheet.printed import pair_name


def _lines(marks: dict) -> list[str]:
    out = [f"{marks['right']} of {marks['marked']} vignettes right (sheet {marks['sheet_fingerprint'][:12]})"]
    for v in marks["vignettes"]:
        if v["right"]:
            out.append(f"  {v['id']}: right (total {v['total']}, {v['expected_risk']})")
            continue
        why = [f"{m['table']} {m['given']} instead of {m['expected']} (row {m['read_row_instead_of']}; "
               f"risk error {m['risk_error'] * 100:+.1f} percentage points)" for m in v["misread"]] + v["slips"]
        err = "" if v["risk_error"] is None else f"; risk error of the answer {v['risk_error'] * 100:+.1f} percentage points"
        out.append(f"  {v['id']}: WRONG: total {v['total']} for {v['expected_total']}{err}; " + "; ".join(why))
    if marks["not_answered"]:
        out.append(f"  not answered: {', '.join(marks['not_answered'])}")
    out.append("per table: misread / answered, mean and largest |risk error| caused (percentage points)")
    for t in marks["per_table"]:
        out.append(f"  {_in_words(t['table'])}: {t['misread']} / {t['answered']}, {t['mean_abs_risk_error'] * 100:.1f}, {t['largest_abs_risk_error'] * 100:.1f}")
    out.append(f"slips: {marks['addition_slips']} in adding, {marks['conversion_slips']} reading the conversion, {marks['band_slips']} in the band")
    return out


@click.command()
@click.argument("key_path", metavar="KEY.csv", type=click.Path())
@click.argument("answers_path", metavar="ANSWERS.csv", type=click.Path())
@click.option("-o", "--output", type=click.Path(), metavar="MARKS.json", help="Also write every mark as JSON.")
def command(key_path, answers_path, output) -> None:
    """Mark staff answers ANSWERS.csv against the exercise key KEY.csv (from `scorecard exercise --key`).

    \b
    ANSWERS.csv has one row per vignette answered: id, total_points, and optionally risk (as printed),
    band, and points:<table> per table (the template from `scorecard exercise --template`). For each
    vignette: right or wrong; each table whose points differ from the key (which table was misread) with
    the risk error that slip alone causes; a slip in adding the boxes; a risk not the one the conversion
    table prints for the answer's total; a wrong band. Then per table: how often it was misread and the
    mean and largest risk error it caused. Risks use the key's own conversion rule, so no sheet is needed.

    \b
    Example:
      scorecard mark key.csv answers.csv -o marks.json
    """
    out = output_path(output, key_path, answers_path) if output else None
    key = read_csv(key_path, what="exercise key")
    answers = read_csv(answers_path, what="answers")
    marks = mark_answers(key, answers)
    for line in _lines(marks):
        click.echo(line)
    if out is not None:
        atomic_write_text(out, pretty_text(marks), protect=(key_path, answers_path))
        say(f"marks written to {out}")


def _in_words(table: str) -> str:
    """A pair table named in words (the key holds column names only, not the sheet's labels)."""
    parts = table.split(" x ")
    return pair_name([p.replace("_", " ") for p in parts]) if len(parts) == 2 else table

