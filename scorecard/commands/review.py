"""`scorecard review`: a printable review of every shape, with the flags a methodologist must look at."""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.commands._common import output_path, say, preview_folder
from scorecard.jsondoc import atomic_write_bytes
from scorecard.model import load_model
from scorecard.review.report import build_review, pdf_bytes, write_previews
from scorecard.tabular import read_table, require_columns


@click.command()
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--data", "cohort_path", metavar="COHORT.csv", type=click.Path(),
              help="Patients to weigh the review by (importance, densities, sparse data, values outside the "
                   "training range). Without it the model's own training counts are used.")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="PDF to write.")
@click.option("--preview", "preview_dir", metavar="DIR", type=click.Path(),
              help="Also write one PNG per page into this folder (created if missing).")
def command(model_path: str, cohort_path: str | None, output: str, preview_dir: str | None) -> None:
    """Write a review PDF of MODEL.json: a summary page, then one page per term.

    \b
    The summary ranks terms by importance (mean absolute contribution to the log-odds) and lists flags:
      - a shape that breaks the direction declared for its feature;
      - a large effect with a wide spread band, or on few patients;
      - an effect outside the training range (or in its thin outer 1% tails);
      - a protective effect of a feature marked as a care-process marker;
      - a strong score carried by a rare level.
    Each term page shows the shape on the log-odds scale with its spread band, the patients underneath and
    the training range; a pair term is a heat map with both features' patient counts.

    Declare directions and care-process markers with `scorecard edit --declare`; fix shapes with the other
    `scorecard edit` options. The same inputs give the same PDF bytes. Flags are also listed on stderr.

    \b
    Example:
      scorecard review demo_output/fitted.model.json --data demo_output/cohort.csv -o review.pdf --preview review-previews
    """
    out = output_path(output, model_path, cohort_path or "")
    previews = preview_folder(preview_dir)
    model = load_model(model_path)
    cohort = read_table(cohort_path) if cohort_path else None
    if cohort is not None:
        require_columns(cohort, model.used_features, "the model")  # refused before the progress line
    say(f"reviewing {len(model.terms)} terms of {model.name} version {model.version}...")
    figures, ranking, flags = build_review(model, cohort, cohort_name=Path(cohort_path).name if cohort_path else None)
    data = pdf_bytes(figures)
    if previews:
        previews.mkdir(parents=True, exist_ok=True)
        written = write_previews(figures, previews, Path(output).stem)
        say(f"wrote {len(written)} preview PNGs to {previews}")
    atomic_write_bytes(out, data, protect=(model_path,))
    for flag in flags:
        say(f"flag {flag.kind} [{flag.term}]: {flag.message}")
    say(f"wrote {len(figures)} pages ({len(flags)} flags) to {out}")
