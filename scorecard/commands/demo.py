"""`scorecard demo`: the built-in, invented demo, one function per step so later stages can be added in order."""

from __future__ import annotations

from pathlib import Path

import click
import pandas as pd

from scorecard.commands._common import say
from scorecard.demo import cohort_csv_text, generate_cohort, true_model
from scorecard.errors import UserError
from scorecard.jsondoc import atomic_write_text
from scorecard.model import save_model

COHORT_FILE = "cohort.csv"
TRUE_MODEL_FILE = "true.model.json"
MAX_ROWS = 5_000_000


def prepare_output_folder(path: str, force: bool) -> Path:
    """The folder the demo writes into: created if absent; an existing non-empty folder only with --force."""
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise UserError(f"{folder}: is a file, not a folder; give -o a folder name (it is created if absent)")
    if folder.is_dir() and any(folder.iterdir()) and not force:
        raise UserError(f"{folder}: folder is not empty; choose a new folder with -o, or add --force to replace the demo files in it")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise UserError(f"{folder}: cannot create the folder ({exc.strerror}); choose another -o path") from None
    return folder


def write_cohort(folder: Path, rows: int, seed: int, interaction: bool) -> tuple[Path, pd.DataFrame]:
    """Step 1: the invented cohort (one row per patient, `delirium` is the outcome)."""
    cohort = generate_cohort(rows, seed=seed, interaction=interaction)
    path = folder / COHORT_FILE
    atomic_write_text(path, cohort_csv_text(cohort))
    rate = cohort["delirium"].mean()
    say(f"wrote {rows} invented patients to {path} (seed {seed}; delirium in {rate:.1%})")
    return path, cohort


def write_true_model(folder: Path, interaction: bool) -> Path:
    """Step 2: the generator's true additive model as a model document (for comparing fitted models with)."""
    path = folder / TRUE_MODEL_FILE
    fingerprint = save_model(true_model(interaction), path)
    say(f"wrote the true model of the generator to {path} (fingerprint {fingerprint[:12]})")
    return path


@click.command()
@click.option("-o", "--output", "output", required=True, metavar="DIR",
              help="Folder to write into; created if absent. An existing non-empty folder needs --force.")
@click.option("--rows", default=5000, show_default=True, type=click.IntRange(1, MAX_ROWS),
              help="Number of invented patients.")
@click.option("--seed", default=0, show_default=True, type=click.IntRange(min=0),
              help="Random seed; the same rows and seed always give the same cohort, byte for byte.")
@click.option("--without-pair", is_flag=True,
              help="Generate from the additive truth without the age x cognition interaction.")
@click.option("--force", is_flag=True, help="Write into a non-empty folder, replacing the demo's own files there.")
def command(output: str, rows: int, seed: int, without_pair: bool, force: bool) -> None:
    """Run the built-in demo on an invented cohort (nothing in it is real).

    The scenario: adults aged 60 or over having surgery for a hip fracture; the outcome is delirium within
    5 days after the operation. A seeded generator draws the patients from a known true additive model with
    U-shaped sodium and temperature, a step at 36 hours to surgery, a plateau in regular medicines, albumin
    often not measured (and not measuring it carries risk), one true pair (age x cognitive screen), and a
    pre-operative review by the older-people's team that looks protective only because of how care was
    given (its true effect is nil).

    \b
    Writes into DIR:
      cohort.csv        one row per invented patient; `delirium` (0/1) is the outcome
      true.model.json   the generator's true additive model (a model document)
    """
    interaction = not without_pair
    folder = prepare_output_folder(output, force)
    write_cohort(folder, rows, seed, interaction)
    write_true_model(folder, interaction)
