"""`scorecard exercise`: a hand-scoring competency exercise for a sheet, with its answer key."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.errors import UserError
from scorecard.exercise import answer_key, draw_vignettes, exercise_pdf_bytes, key_csv_text, template_csv_text
from scorecard.jsondoc import atomic_write_bytes, atomic_write_text
from scorecard.sheet import CAUTIONS, load_sheet, short_fingerprint


@click.command()
@click.argument("sheet_path", metavar="SHEET.json", type=click.Path())
@click.option("-n", "count", default=20, show_default=True, type=click.IntRange(1, 500), help="Number of patient vignettes.")
@click.option("-o", "--output", required=True, type=click.Path(), metavar="EXERCISE.pdf", help="The exercise PDF (cards, then the key pages).")
@click.option("--key", "key_path", required=True, type=click.Path(), metavar="KEY.csv", help="The answer key as CSV, for `scorecard mark`.")
@click.option("--template", "template_path", type=click.Path(), metavar="ANSWERS.csv", help="Also write an empty answers table to fill in.")
@click.option("--seed", default=0, show_default=True, type=click.IntRange(min=0), help="Same seed, same vignettes.")
def command(sheet_path, count, output, key_path, template_path, seed) -> None:
    """Make a hand-scoring exercise for SHEET.json: patient cards to score on paper, and the answer key.

    \b
    The vignettes together use every printed row at least once, and include the cases people get wrong:
      - values on printed boundaries (each cut, and the last value below it);
      - a value written with one more decimal than printed, which rounds half up across a cut;
      - a value outside the training range (scored in the end row), a missing value ("not measured"),
        and a category no row lists (the "Other" row), where the sheet has those rows.
    Each card lists the patient's values with units and an answer grid: a box per table, the total, the
    risk and the band. The key (on the last pages of the PDF, and KEY.csv: id, the values under the
    model's feature names, total_points, risk, band, then per table the row and points) is computed by the
    audit's own paper scoring, the rule of `scorecard score`. Same seed, same exercise; a sheet made from
    invented data marks every page so.

    \b
    Example:
      scorecard exercise demo_output/sheet.json -n 20 -o exercise.pdf --key key.csv --template answers.csv --seed 1
    """
    outs = [output_path(output, sheet_path, binary=True), output_path(key_path, sheet_path, option="--key")]
    if template_path:
        outs.append(output_path(template_path, sheet_path, option="--template"))
    if len({p.resolve() for p in outs}) < len(outs):
        raise UserError(f"{key_path}: -o, --key and --template must name different files")
    sheet = load_sheet(sheet_path)
    features, vignettes = draw_vignettes(sheet, count, seed)
    key = answer_key(sheet, features, vignettes)
    pdf = exercise_pdf_bytes(key, sheet.get("cautions") or CAUTIONS)
    atomic_write_bytes(outs[0], pdf, protect=(sheet_path,))
    atomic_write_text(outs[1], key_csv_text(key), protect=(sheet_path,))
    if template_path:
        atomic_write_text(outs[2], template_csv_text(key), protect=(sheet_path,))
    say(f"wrote {count} vignettes for sheet {short_fingerprint(sheet)} to {outs[0]} and the key to {outs[1]}"
        + (f"; answers table to fill in: {outs[2]}" if template_path else ""))
