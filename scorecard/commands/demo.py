"""`scorecard demo`: the whole pipeline on the built-in, invented cohort, one function per step.

Each step runs the same command a user would type (through click's `Context.invoke`), so the demo shows
exactly what the verbs do and cannot drift from them.
"""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.commands._common import say
from scorecard.demo import OUTCOME, cohort_arrow_table, cohort_chunks, cohort_csv_text, true_model
from scorecard.demo.cohort import CHUNK_ROWS
from scorecard.demo.population import RESIDENCE_LEVELS
from scorecard.demo.true_model import COMPLETED_UNITS, FEATURE_INFO, OUTCOME_TEXT
from scorecard.invented import MARK
from scorecard.errors import UserError
from scorecard.model import save_model
from scorecard.outputs import check_target
from scorecard.render import load_layout
from scorecard.table_writer import TableWriter
from scorecard.tabular import PARQUET_SUFFIXES

COHORT_FILE = "cohort.csv"
AUDIT_COHORT_FILE = "audit-cohort.csv"
TRUE_MODEL_FILE = "true.model.json"
MAX_ROWS = 5_000_000  # the whole pipeline fits and audits in memory
MAX_COHORT_ROWS = 100_000_000  # --cohort-only streams the cohort to disk


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


def write_cohort(folder: Path, rows: int, seed: int, interaction: bool, name: str = COHORT_FILE) -> Path:
    """Step 1: an invented cohort (one row per patient, `delirium` is the outcome), as CSV or Parquet by the
    file's suffix; drawn and written a million patients at a time, so any size needs bounded memory."""
    path = folder / name
    events = 0
    with TableWriter(path) as out:
        for k, chunk in enumerate(cohort_chunks(rows, seed=seed, interaction=interaction)):
            if out.parquet:
                out.write_frame(cohort_arrow_table(chunk))
            else:
                out.write_text(cohort_csv_text(chunk, header=k == 0))
            events += int(chunk[OUTCOME].sum())
            if rows > CHUNK_ROWS:
                say(f"  {chunk['patient_id'].iloc[-1]} of {rows} patients drawn")
    say(f"wrote {rows} invented patients to {path} (seed {seed}; delirium in {events / rows:.1%})")
    return path


def cohort_file_target(output: str) -> tuple[Path, str] | None:
    """(folder, file name) when --cohort-only's -o names a .csv or .parquet file rather than a folder."""
    target = Path(output)
    if target.suffix.lower() not in (".csv", *PARQUET_SUFFIXES):
        return None
    if target.is_dir():
        raise UserError(f"{target}: is a folder; give --cohort-only a file name ending in .csv or .parquet, or a new folder")
    target = check_target(target, text=target.suffix.lower() == ".csv")  # the output-path rules, before any drawing
    return (target.parent if str(target.parent) else Path(".")), target.name


def write_true_model(folder: Path, interaction: bool, name: str = TRUE_MODEL_FILE) -> Path:
    """Step 2: the generator's true additive model as a model document (for comparing fitted models with)."""
    path = folder / name
    fingerprint = save_model(true_model(interaction), path)
    say(f"wrote the true model of the generator to {path} (fingerprint {fingerprint[:12]})")
    return path


CARE_PROCESS_FLAG = "geriatric_review"
CARE_PROCESS_REASON = (
    "geriatric_review is a care-process marker: it looks protective only because of how care was given, and "
    "must not lower anyone's points"
)
SPARSE_TAIL_REASON = (
    "hours to surgery beyond 96 and more than 12 regular medicines rest on fewer than 30 patients each (review "
    "flags): held at their last well-supported value"
)
SPARSE_TAILS_HELD_ABOVE = (("hours_to_surgery", 96.0), ("medicines", 12.0))  # as `edit --hold-above` parses them


# levels in a clinical order (own home, with family, care home: rising dependence), not by name
CLINICAL_ORDER = {"residence": RESIDENCE_LEVELS, "anaesthesia": ("spinal", "general")}


def fit_model(ctx: click.Context, folder: Path, cohort: Path) -> Path:
    """Step 3: learn an additive model from the cohort, as a methodologist without a model would."""
    from scorecard.commands.fit import command as fit

    path = folder / "fitted.model.json"
    ctx.invoke(
        fit, data_path=str(cohort), outcome=OUTCOME, exclude=("patient_id",), name="Delirium after hip fracture (demo)",
        event=OUTCOME_TEXT["event"], horizon=OUTCOME_TEXT["horizon"], population=OUTCOME_TEXT["population"],
        labels=tuple((n, label) for n, label, *_ in FEATURE_INFO),
        units=tuple((n, unit) for n, _, unit, *_ in FEATURE_INFO if unit),
        decimals=tuple((n, d) for n, _, _, d, kind, *_ in FEATURE_INFO if kind == "continuous"),
        score_at=OUTCOME_TEXT["score_at"], completed=COMPLETED_UNITS,
        orders=tuple((n, list(levels)) for n, levels in CLINICAL_ORDER.items()), invented=True,
        output=str(path),
    )
    return path


def review_model(ctx: click.Context, folder: Path, fitted: Path, cohort: Path) -> Path:
    """Step 4: mark the care-process flag for what it is, then review every shape (the flag is raised)."""
    from scorecard.commands.edit import command as edit
    from scorecard.commands.review import command as review

    declared = folder / "declared.model.json"
    ctx.invoke(edit, model_path=str(fitted), declarations=((CARE_PROCESS_FLAG, "care_process"),),
               reason="the older-people's team review is a care process, not a patient measurement",
               editor="scorecard demo", output=str(declared))
    ctx.invoke(review, model_path=str(declared), cohort_path=str(cohort), output=str(folder / "review.pdf"),
               preview_dir=str(folder / "review-previews"))
    return declared


def edit_model(ctx: click.Context, folder: Path, declared: Path, cohort: Path) -> Path:
    """Step 5: act on the review's flags without retraining (remove the care-process effect, hold the
    sparse tails), and record why and what it cost."""
    from scorecard.commands.edit import command as edit

    # one edit per decision, so each change carries only its own reason (the sheet prints it for a left-off term)
    held = folder / "held.model.json"
    ctx.invoke(edit, model_path=str(declared), holds_above=SPARSE_TAILS_HELD_ABOVE, reason=SPARSE_TAIL_REASON,
               editor="scorecard demo", cohort_path=str(cohort), outcome=OUTCOME, output=str(held))
    edited = folder / "edited.model.json"
    ctx.invoke(edit, model_path=str(held), removals=(CARE_PROCESS_FLAG,), reason=CARE_PROCESS_REASON,
               editor="scorecard demo", cohort_path=str(cohort), outcome=OUTCOME, output=str(edited))
    return edited


def make_sheet(ctx: click.Context, folder: Path, model: Path, cohort: Path) -> Path:
    """Step 6: quantise the model into integer point tables under the default accuracy bound."""
    from scorecard.commands.quantize import command as quantize

    sheet = folder / "sheet.json"
    ctx.invoke(quantize, model_path=str(model), data_path=str(cohort), bands="low<10,moderate<25,high", output=str(sheet))
    return sheet


def print_sheet(ctx: click.Context, folder: Path, sheet: Path, layout: str) -> Path:
    """Step 7: lay the sheet out as print-ready pages, with a PNG preview of every page."""
    from scorecard.commands.render import command as render

    pdf = folder / "sheet.pdf"
    ctx.invoke(render, sheet_path=str(sheet), layout_name=layout, output=str(pdf), preview_dir=str(folder / "sheet-previews"))
    return pdf


def audit_sheet(ctx: click.Context, folder: Path, sheet: Path, pdf: Path, model: Path, audit_cohort: Path) -> None:
    """Step 8: the auditor's checks: agreement on patients the model never saw, and the PDF read back."""
    from scorecard.commands.check import command as check
    from scorecard.commands.verify import command as verify

    ctx.invoke(check, sheet_path=str(sheet), model_path=str(model), cohort_path=str(audit_cohort),
               output=str(folder / "check-report.pdf"), json_path=str(folder / "check-report.json"), outcome=OUTCOME)
    ctx.invoke(verify, pdf_path=str(pdf), sheet_path=str(sheet))


@click.command()
@click.option("-o", "--output", "output", required=True, metavar="DIR",
              help="Folder to write into; created if absent. An existing non-empty folder needs --force. With "
                   "--cohort-only also a file name ending in .csv or .parquet.")
@click.option("--rows", default=40000, show_default=True, type=click.IntRange(100, MAX_COHORT_ROWS),
              help=f"Number of invented patients to fit on (the audit cohort is half as many, drawn separately); "
                   f"at most {MAX_ROWS:,} for the whole pipeline, {MAX_COHORT_ROWS:,} with --cohort-only.")
@click.option("--seed", default=0, show_default=True, type=click.IntRange(min=0),
              help="Random seed; the same rows and seed always give the same cohorts, byte for byte.")
@click.option("--without-pair", is_flag=True,
              help="Generate from the additive truth without the interaction of age with cognitive screen score.")
@click.option("--layout", default="ward-a4", show_default=True, metavar="NAME|FILE",
              help="Page layout of the printed sheet (see `scorecard render --help`).")
@click.option("--cohort-only", is_flag=True,
              help="Only write the invented cohort and the generator's true model; -o FILE.parquet (or .csv) writes "
                   "the cohort to that file and the true model beside it as FILE.true.model.json.")
@click.option("--force", is_flag=True, help="Write into a non-empty folder, replacing the demo's own files there.")
@click.pass_context
def command(ctx: click.Context, output: str, rows: int, seed: int, without_pair: bool, layout: str,
            cohort_only: bool, force: bool) -> None:
    """Run the whole pipeline on an invented cohort (nothing in it is real).

    The scenario: adults aged 60 or over having surgery for a hip fracture; the outcome is delirium within
    5 days after the operation. A seeded generator draws the patients from a known true additive model with
    U-shaped sodium and temperature, a step at 36 hours to surgery, a plateau in regular medicines, albumin
    often not measured (and not measuring it carries risk), one true pair (age with cognitive screen
    score), and a pre-operative review by the older-people's team that looks protective only because of
    how care was given (its true effect is nil).

    \b
    Writes into DIR, in pipeline order:
      cohort.csv, audit-cohort.csv   invented patients to fit on, and others to audit on
      true.model.json                the generator's true additive model
      fitted.model.json              `scorecard fit` on cohort.csv
      declared.model.json            the review flag declared a care-process marker (`scorecard edit`)
      review.pdf, review-previews/   every shape with its band, patients and default-sheet rows, and the flags
      held.model.json                sparse tails held at their last well-supported value (`scorecard edit`)
      edited.model.json              the care-process effect removed as well, each edit with its cost
      sheet.json                     integer point tables under the accuracy bound (`scorecard quantize`)
      sheet.pdf, sheet-previews/     the print-ready ward sheet and nomogram (`scorecard render`)
      check-report.pdf/.json         agreement of paper and software on the audit cohort (`scorecard check`)
    and finally reads sheet.pdf back and compares it with sheet.json cell by cell (`scorecard verify`).
    Exit 3 if a check fails its bound.

    \b
    Examples:
      scorecard demo -o demo_output
      scorecard demo -o small_demo --rows 5000 --seed 7 --layout ward-letter
      scorecard demo -o data_only --cohort-only
      scorecard demo --cohort-only --rows 20000000 -o big.parquet
    """
    interaction = not without_pair
    if cohort_only:
        into_file = cohort_file_target(output)
        if into_file:
            folder, name = into_file
            stem = name.rsplit(".", 1)[0]
            if (folder / name).exists() and not force:
                raise UserError(f"{folder / name}: exists; choose a new file with -o, or add --force to replace it")
            write_cohort(folder, rows, seed, interaction, name=name)
            write_true_model(folder, interaction, name=f"{stem}.{TRUE_MODEL_FILE}")
            return
    else:
        if rows > MAX_ROWS:
            raise UserError(f"--rows {rows}: the whole pipeline takes at most {MAX_ROWS:,} patients; ask for fewer, or "
                            "write a larger cohort with --cohort-only and fit it with `scorecard fit`")
        load_layout(layout)  # a wrong --layout is refused now, not after a minute of fitting with half the files written
    folder = prepare_output_folder(output, force)
    cohort = write_cohort(folder, rows, seed, interaction)
    write_true_model(folder, interaction)
    if cohort_only:
        return
    # a separate draw the model never sees, so the audit is not graded on the training patients
    audit_cohort = write_cohort(folder, max(rows // 2, 100), seed + 1_000_003, interaction, name=AUDIT_COHORT_FILE)
    fitted = fit_model(ctx, folder, cohort)
    declared = review_model(ctx, folder, fitted, cohort)
    edited = edit_model(ctx, folder, declared, cohort)
    sheet = make_sheet(ctx, folder, edited, cohort)
    pdf = print_sheet(ctx, folder, sheet, layout)
    audit_sheet(ctx, folder, sheet, pdf, edited, audit_cohort)
    say(f"demo complete: {pdf} (previews in {folder / 'sheet-previews'}), audit report {folder / 'check-report.pdf'}. "
        f"{MARK}: every page says so; practise with it, never score a patient with it")
