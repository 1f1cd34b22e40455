"""`scorecard review`: a printable review of every shape, with the flags a methodologist must look at."""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.commands._common import output_path, say, preview_folder
from scorecard.jsondoc import atomic_write_bytes
from scorecard.model import load_model
from scorecard.review.report import build_review, pdf_bytes, write_previews
from scorecard.review.plots import shown_name
from scorecard.tabular import read_table, require_columns


@click.command()
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--data", "cohort_path", metavar="COHORT.csv", type=click.Path(),
              help="Patients to weigh the review by (effect on the sheet, patient strips, sparse data, values outside the "
                   "training range). Without it the model's own training counts are used.")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="PDF to write.")
@click.option("--preview", "preview_dir", metavar="DIR", type=click.Path(),
              help="Also write one PNG per page into this folder (created if missing).")
@click.option("--sheet-preview/--no-sheet-preview", "sheet_preview", default=True, show_default=True,
              help="Quantise a default sheet first (as `scorecard quantize` with its default bound would) and draw "
                   "its rows and points on every term page; --no-sheet-preview skips it (faster, terms then rank by "
                   "spread of risk).")
def command(model_path: str, cohort_path: str | None, output: str, preview_dir: str | None, sheet_preview: bool) -> None:
    """Write a review PDF of MODEL.json: a summary page, then one page per term.

    \b
    The summary is a table of the terms ranked by their effect on the sheet (the points range a default sheet
    gives each, then how far each moves an average patient's risk between its 5th and 95th percentile of
    patients) and lists flags:
      - a shape that breaks the direction declared for its feature;
      - a large effect with a wide spread band, or on few patients;
      - an effect outside the training range (or in its thin outer 1% tails);
      - a protective effect of a feature marked as a care-process marker;
      - a strong score carried by a rare level.
    Each term page shows the shape on the log-odds scale with its spread band and the training range, the
    rows a default sheet would print laid over it as steps with their points, and the patients as a shaded
    strip inside the plot; a pair term is drawn as small panels, the pair's effect along one feature at each
    row of the other.

    Declare directions and care-process markers with `scorecard edit --declare`; fix shapes with the other
    `scorecard edit` options. The same inputs give the same PDF bytes. Flags are also listed on stderr.

    \b
    Example:
      scorecard review demo_output/fitted.model.json --data demo_output/cohort.csv -o review.pdf --preview review-previews
    """
    out = output_path(output, model_path, cohort_path or "", binary=True)
    previews = preview_folder(preview_dir)
    model = load_model(model_path)
    cohort = read_table(cohort_path) if cohort_path else None
    if cohort is not None:
        require_columns(cohort, model.used_features, "the model")  # refused before the progress line
    say(f"reviewing {len(model.terms)} terms of {model.name} version {model.version}...")
    if sheet_preview:
        say("quantising a default sheet to preview its rows (--no-sheet-preview skips this)...")
    figures, ranking, flags = build_review(model, cohort, cohort_name=Path(cohort_path).name if cohort_path else None,
                                           sheet_preview_wanted=sheet_preview)
    data = pdf_bytes(figures)
    if previews:
        previews.mkdir(parents=True, exist_ok=True)
        written = write_previews(figures, previews, Path(output).stem)
        say(f"wrote {len(written)} preview PNGs to {previews}")
    atomic_write_bytes(out, data, protect=(model_path,))
    for flag in flags:
        say(f"flag {flag.kind} [{shown_name(model, flag.term)}]: {flag.message}")
    say(f"wrote {len(figures)} pages ({len(flags)} flags) to {out}")
