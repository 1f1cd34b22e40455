"""`scorecard fit`: learn an additive risk model from a patient table and write it as a model document."""

from __future__ import annotations

from pathlib import Path

import click
import numpy as np
import pandas as pd

from scorecard.commands._common import FeatureValue, FiniteRange, level_list, output_path, say
from scorecard.errors import UserError
from scorecard.jsondoc import file_sha256
from scorecard.model import save_model
from scorecard.model.declare import declare_completed, declare_level_order
from scorecard.sheet.printed import term_label
from scorecard.suggest import did_you_mean
from scorecard.fit.columns import feature_column, looks_like_identifier, outcome_values, uninformative_reason
from scorecard.tabular import numeric_column, read_table
from scorecard.fit import defaults

def _names(values: tuple[str, ...]) -> list[str]:
    """Repeatable options that also accept comma-separated lists."""
    out: list[str] = []
    for v in values:
        out.extend(p.strip() for p in v.split(",") if p.strip())
    return out


def _settings(pairs: tuple[tuple[str, object], ...], option: str, known: list[str]) -> dict:
    """FEATURE=VALUE pairs (parsed by FeatureValue) as a dict, each name a feature being fitted."""
    out = {}
    for name, value in pairs:
        if name not in known:
            raise UserError(f"{option} {name}=...: {name!r} is not a feature being fitted{did_you_mean(name, known)}; "
                            f"features: {', '.join(known)}")
        out[name] = value
    return out


def _decimals(text: str) -> int:
    n = int(text)
    if not 0 <= n <= 6:
        raise ValueError(text)
    return n


def _pairs_option(text: str):
    if text.strip().lower() == "auto":
        return "auto"
    try:
        n = int(text)
    except ValueError:
        raise UserError(f"--pairs {text!r}: give a whole number of pairs (0 for none) or 'auto'") from None
    if n < 0:
        raise UserError(f"--pairs {text!r}: give a whole number of pairs (0 for none) or 'auto'")
    return n


# options of earlier releases: a user typing one is told the new name (scorecard/cli.py)
RENAMED_OPTIONS = {"--bags": "--repeats", "--max-bins": "--bins", "--validation-fraction": "--held-out-share",
                   "--l2-regularization": "--shrinkage"}


def _auto_or_number(option: str, text: str, kind, low: float, high: float, what: str, low_open=False, high_open=False):
    """'auto', or a number within [low, high] (open ends as asked), else a one-line error naming the option."""
    if text.strip().lower() == "auto":
        return "auto"
    try:
        value = kind(text)
    except ValueError:
        value = None
    if value is None or not np.isfinite(value) or (value <= low if low_open else value < low) or (value >= high if high_open else value > high):
        raise UserError(f"{option} {text!r}: give {what}, or 'auto'")
    return value


def _dask_engine(scheduler: str | None, workers: int):
    """The Dask cluster to fit on; one-line errors when dask is missing or the scheduler cannot be reached."""
    try:
        from scorecard.fit.dask_engine import DaskEngine
    except ImportError as exc:
        raise UserError(str(exc)) from None
    try:
        return DaskEngine(scheduler=scheduler, workers=workers, timeout=10)
    except (OSError, ValueError, TypeError) as exc:  # refused, timed out, or not an address
        detail = " ".join(str(exc).split())[:160]
        if not scheduler:
            raise UserError(f"--engine dask: cannot start a local Dask cluster ({detail}); give --scheduler ADDRESS "
                            "of a running one, or fit in memory without --engine") from None
        raise UserError(f"--scheduler: cannot reach the Dask scheduler at {scheduler!r} ({detail}); give a running "
                        "scheduler's address such as tcp://host:8786, or leave --scheduler out to start a local cluster") from None


@click.command()
@click.argument("data_path", metavar="DATA.csv", type=click.Path())
@click.option("--outcome", required=True, metavar="COLUMN", help="The 0/1 (or yes/no) outcome column: 1 = the event happened.")
@click.option("--features", "features", multiple=True, metavar="NAMES", help="Columns to use (comma-separated or repeated). Default: every column but the outcome, --weights and --exclude.")
@click.option("--exclude", multiple=True, metavar="NAMES", help="Columns never to use, such as a patient id (comma-separated or repeated).")
@click.option("--categorical", multiple=True, metavar="NAMES", help="Columns to treat as categories even if they hold numbers (text columns always are).")
@click.option("--weights", "weights_column", metavar="COLUMN", help="Column of non-negative patient weights (sample weights).")
@click.option("--pairs", "pairs_text", default="auto", show_default=True, metavar="N|auto", help="Number of two-feature terms; 'auto' keeps those that pass a held-out interaction test and gain at least --pair-min-gain (at most --max-pairs).")
@click.option("--max-pairs", default=defaults.MAX_PAIRS, show_default=True, type=click.IntRange(0, 20), help="Most pairs 'auto' may keep.")
@click.option("--pair-min-gain", default=defaults.PAIR_MIN_GAIN, show_default=True, type=FiniteRange(0),
              help="Held-out log-likelihood gain (nats per patient) a pair needs for 'auto': a pair can pass the test and still be too small to matter on a sheet.")
@click.option("--repeats", "repeats_text", default="auto", show_default=True, metavar="N|auto",
              help="Repeat fits, each on its own held-out split; shapes are their mean, spread bands their standard deviation. 'auto': " + defaults.auto_rule(defaults.repeats_for) + ".")
@click.option("--seed", default=0, show_default=True, type=click.IntRange(0), help="Seed of the repeats' splits; the same seed and data give the same bytes.")
@click.option("--learning-rate", default=defaults.LEARNING_RATE, show_default=True, type=FiniteRange(0, 1, min_open=True), help="Scale of each boosting step.")
@click.option("--held-out-share", "held_out_text", default="auto", show_default=True, metavar="SHARE|auto",
              help="Share of patients each repeat holds out to decide when to stop, from 0 to below 1. 'auto': " + defaults.auto_rule(defaults.held_out_share_for) + ".")
@click.option("--shrinkage", "shrinkage_text", default="auto", show_default=True, metavar="VALUE|auto",
              help=f"Added to every leaf's sum of hessians: pulls leaves of few patients toward zero (0 or more). 'auto': chosen from "
                   f"{', '.join(f'{v:g}' for v in defaults.SHRINKAGE_CHOICES)} (or a straight line per feature with steps on top, at {defaults.SHRINKAGE:g}) by held-out deviance under {defaults.CHOOSE_SHRINKAGE_BELOW:,} patients, else {defaults.SHRINKAGE:g}.")
@click.option("--min-leaf", default=defaults.MIN_LEAF_PATIENTS, show_default=True, type=FiniteRange(1), help="Fewest patients in any leaf of any step (raise it for small cohorts).")
@click.option("--bins", default=defaults.BINS, show_default=True, type=click.IntRange(2, 1024), help="Most bins per continuous feature.")
@click.option("--name", default=None, help="Model name (default: the data file's name).")
@click.option("--event", default=None, help="What the outcome is, printed on the sheet (default: the outcome column's name).")
@click.option("--horizon", default="not stated", show_default=True, help="Over what time the event is counted, e.g. '5 days after surgery'.")
@click.option("--population", default="not stated", show_default=True, help="Who the model is for, e.g. 'adults aged 60 or over after hip-fracture surgery'.")
@click.option("--label", "labels", multiple=True, metavar="FEATURE=TEXT", type=FeatureValue('"sodium=Sodium (blood)"'), help="Printed label of a feature (repeatable).")
@click.option("--unit", "units", multiple=True, metavar="FEATURE=UNIT", type=FeatureValue("sodium=mmol/L"), help="Unit of a feature, e.g. sodium=mmol/L (repeatable).")
@click.option("--decimals", "decimals", multiple=True, metavar="FEATURE=N",
              type=FeatureValue("temperature=1 (a whole number from 0 to 6)", _decimals), help="Decimals to print for a feature (repeatable; default: as recorded).")
@click.option("--score-at", "score_at", default=None, metavar="TEXT",
              help="When to score, printed on the sheet: the moment every feature is known, e.g. "
                   "'once the operation is scheduled, before surgery'.")
@click.option("--completed", "completed", multiple=True, metavar="NAMES",
              help="Features recorded in completed units (age in completed years: 79.6 counts as 79); the sheet's "
                   "table says so and `score` reads them that way (comma-separated or repeated).")
@click.option("--order", "orders", multiple=True, metavar="FEATURE=LEVEL,LEVEL,...",
              type=FeatureValue("residence=own_home,with_family,care_home", level_list),
              help="The clinical order of a categorical feature's levels, printed in that order (default: by name); "
                   "list every level once (repeatable).")
@click.option("--invented-data", "invented", is_flag=True,
              help="The data is invented (a demo, a test): the model, its sheets and every page made from them say "
                   "INVENTED DATA - NOT FOR CLINICAL USE.")
@click.option("--jobs", default=None, type=click.IntRange(1), help="Processes for the repeats (default: all usable cores); the result does not depend on it.")
@click.option("--engine", type=click.Choice(["memory", "dask"]), default="memory", show_default=True,
              help="Where the per-row work runs: in this process, or on a Dask cluster (needs the [dask] extra); "
                   "the same data and seed give the same model either way.")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="--engine dask: the running Dask scheduler to use, e.g. tcp://10.0.0.5:8786 (default: start a "
                   "local cluster of --workers processes).")
@click.option("--workers", default=None, type=click.IntRange(1, 64),
              help="--engine dask without --scheduler: worker processes of the local cluster (default 2).")
@click.option("-o", "--output", required=True, type=click.Path(), help="Model document to write (*.model.json).")
def command(data_path, outcome, features, exclude, categorical, weights_column, pairs_text, max_pairs, pair_min_gain,
            repeats_text, seed, learning_rate, held_out_text, shrinkage_text, min_leaf, bins, name, event, horizon, population,
            labels, units, decimals, score_at, completed, orders, invented, jobs, engine, scheduler, workers, output):
    """Fit an additive risk model to DATA.csv and write it as a model document.

    \b
    The method (see docs/fitting.md): every feature gets a shape curve, grown by cyclic gradient boosting
    of tiny trees with a low learning rate and early stopping; this is repeated on --repeats different
    held-out splits and averaged (the spread between repeats is stored as each shape's band); pairs of
    features are ranked by the FAST interaction test and those that pass a held-out test and gain enough
    are added as purified grids; every term is centred to population mean zero. The defaults were chosen
    by a study (docs/fitting.md); 'auto' settings follow the number of patients.

    \b
    Cells: numbers with a decimal point, 0/1 or yes/no flags, or text categories. Empty cells (or NA,
    'not measured') mean not measured; a feature measured for only some patients gets a not-measured score.
    A constant or never-measured column is skipped with a warning. Progress goes to stderr.

    \b
    Example:
      scorecard fit cohort.csv --outcome delirium --exclude patient_id \\
          --event "delirium" --horizon "5 days after surgery" --unit sodium=mmol/L -o delirium.model.json
    """
    out = output_path(output, data_path)
    pairs = _pairs_option(pairs_text)  # before reading: a typo in an option should not wait for the data
    repeats = _auto_or_number("--repeats", repeats_text, int, 1, 1000, "a whole number from 1 to 1000")
    held_out_share = _auto_or_number("--held-out-share", held_out_text, float, 0, 1, "a share from 0 to below 1", high_open=True)
    shrinkage = _auto_or_number("--shrinkage", shrinkage_text, float, 0, 1e6, "a number of 0 or more")
    if engine != "dask" and (scheduler or workers):
        raise UserError(f"{'--scheduler' if scheduler else '--workers'} applies to --engine dask only; add --engine dask or leave it out")
    if scheduler and workers:
        raise UserError("--workers sizes the local cluster started without --scheduler; a running scheduler has its own workers")
    cluster = _dask_engine(scheduler, workers or 2) if engine == "dask" else None  # a bad address fails before the read
    frame = read_table(data_path, "patient data")
    source = str(data_path)
    columns = list(frame.columns)
    if outcome not in columns:
        raise UserError(f"{source}: outcome column {outcome!r} is not in the file{did_you_mean(outcome, columns)}; "
                        f"columns: {', '.join(columns)}")
    chosen, excluded, as_categories = _names(features), _names(exclude), _names(categorical)
    for option, listed in (("--features", chosen), ("--exclude", excluded), ("--categorical", as_categories)):
        unknown = [c for c in listed if c not in columns]
        if unknown:
            raise UserError(f"{source}: {option} names column {unknown[0]!r}, which is not in the file"
                            f"{did_you_mean(unknown[0], columns)}; columns: {', '.join(columns)}")
    if weights_column and weights_column not in columns:
        raise UserError(f"{source}: --weights column {weights_column!r} is not in the file{did_you_mean(weights_column, columns)}")
    if outcome in chosen:
        raise UserError(f"{source}: --features lists the outcome column {outcome!r}; a model cannot use its own outcome")
    if not chosen:
        chosen = [c for c in columns if c not in (outcome, weights_column) and c not in excluded]
    else:
        chosen = [c for c in chosen if c not in excluded]
    y = outcome_values(frame, outcome, source)
    weights = None
    if weights_column:
        weights = numeric_column(frame, weights_column)
        bad = np.isnan(weights) | (weights < 0)
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise UserError(f"{source}: row {row + 1}, column {weights_column!r}: a weight must be a number >= 0")

    data, kinds = {}, {}
    for column in chosen:
        values, kind = feature_column(frame, column, column in as_categories)
        why = uninformative_reason(values)
        if why:
            say(f"warning: skipping feature {column!r}: {why}")
            continue
        if looks_like_identifier(values):
            say(f"warning: every patient has a different value of {column!r}; if it is an identifier, leave it out with --exclude {column}")
        data[column], kinds[column] = values, kind
    if not data:
        raise UserError(f"{source}: no usable feature left to fit; check --features and the columns' contents")
    kept = list(data)
    unit_of = _settings(units, "--unit", kept)
    decimals_of = _settings(decimals, "--decimals", kept)
    label_of = _settings(labels, "--label", kept)
    order_of = _settings(orders, "--order", kept)
    completed_names = _names(completed)
    for column in completed_names:
        if column not in kept:
            raise UserError(f"--completed {column}: {column!r} is not a feature being fitted{did_you_mean(column, kept)}; "
                            f"features: {', '.join(kept)}")
    say(f"read {len(frame)} patients, {int(y.sum())} events, {len(kept)} features from {source}")

    from scorecard.fit import AdditiveRiskClassifier

    table = pd.DataFrame({c: pd.Series(v, dtype=object if v.dtype == object else float) for c, v in data.items()})
    estimator = AdditiveRiskClassifier(
        learning_rate=learning_rate, repeats=repeats, held_out_share=held_out_share, shrinkage=shrinkage, pairs=pairs,
        max_pairs=max_pairs, pair_min_gain=pair_min_gain, bins=bins, min_leaf_patients=min_leaf, categorical_features=[c for c in kept if kinds[c] == "categorical"],
        n_jobs=jobs, random_state=seed, verbose=1,
    )
    try:
        if cluster is None:
            estimator.fit(table, y, sample_weight=weights)
        else:
            with cluster:
                say(f"fitting on the Dask cluster at {cluster.client.scheduler.address} ({len(cluster.workers)} workers)")
                estimator.fit(table, y, sample_weight=weights, engine=cluster)
    except ValueError as exc:  # e.g. all weights zero
        raise UserError(f"{source}: cannot fit: {exc}") from None
    model = estimator.to_model(
        name=name or Path(data_path).stem,
        event=event or outcome,
        horizon=horizon,
        population=population,
        labels=label_of,
        units=unit_of,
        decimals=decimals_of,
        provenance={"source": {"file": Path(data_path).name, "sha256": file_sha256(data_path), "outcome": outcome,
                               "weights": weights_column}},
    )
    if score_at is not None:
        if not score_at.strip():
            raise UserError("--score-at: give the moment to score in words, e.g. --score-at 'on admission'")
        model.outcome["score_at"] = score_at.strip()
    for column in completed_names:
        declare_completed(model, column)
    for column, order in order_of.items():
        declare_level_order(model, column, order)
    model.invented_data = invented
    validation = model.provenance.get("validation", {})
    if "out_of_bag_auc" in validation:
        say(f"held-out AUC {validation['out_of_bag_auc']:.3f} on {validation['out_of_bag_rows']} patients "
            "(each predicted by the repeats that held it out)")
    fingerprint = save_model(model, out, protect=(data_path,))
    pairs_kept = [term_label(model, t) for t in model.terms if t.kind == "pair"]
    say(f"wrote {out}: {len(model.terms) - len(pairs_kept)} shapes, pairs: {'; '.join(pairs_kept) or 'none'}; fingerprint {fingerprint[:12]}")


command.renamed_options = RENAMED_OPTIONS
