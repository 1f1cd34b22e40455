"""`scorecard import`: bring a model made elsewhere into a model document (`*.model.json`)."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.model import save_model
from scorecard.tabular import read_table


def _outcome_options(func):
    """The options every import shares: what the model is called and what it predicts, for whom."""
    options = [
        click.option("-o", "--output", "output", required=True, metavar="MODEL.json", help="Model document to write."),
        click.option("--name", default=None, help="Model name printed on the sheet (default: the table's file name)."),
        click.option("--model-version", "model_version", default="1", show_default=True, help="Version string of the model."),
        click.option("--event", default=None, help="The outcome event, e.g. 'delirium'. Printed on the sheet; 'not stated' if omitted."),
        click.option("--horizon", default=None, help="Over what time, e.g. 'within 5 days after surgery'."),
        click.option("--population", default=None, help="For whom the model is valid, e.g. 'adults aged 60 or over after hip-fracture surgery'."),
        click.option("--invented-data", "invented", is_flag=True,
                     help="The model is invented (a demo, a test): its sheets and every page made from it say "
                          "INVENTED DATA - NOT FOR CLINICAL USE."),
    ]
    for option in reversed(options):
        func = option(func)
    return func


def _finish(model, out, table: str, invented: bool = False) -> None:
    model.invented_data = invented
    fingerprint = save_model(model, out, protect=(table,))
    missing = [k for k, v in model.outcome.items() if v == "not stated"]
    if missing:
        say(f"note: {', '.join(missing)} not stated; give --{' --'.join(missing)} so the sheet says what the model predicts")
    say(f"wrote {out}: {len(model.terms)} {'term' if len(model.terms) == 1 else 'terms'}, fingerprint {fingerprint[:12]}")


@click.group(name="import")
def command() -> None:
    """Bring a model made elsewhere into a model document (MODEL.json).

    \b
    Two table formats (comma-separated, header row; full description in docs/model-document.md):
      coefficients  a logistic regression: term, coefficient (+ min, max for continuous terms)
      shapes        an additive model as bins and levels: feature, lower, upper, level, score

    A fitted scikit-learn estimator is imported from Python instead:
    scorecard.model.importers.from_sklearn(estimator, X), which checks on X that the imported model's
    log-odds equal the estimator's to 1e-6.
    """


@command.command(name="coefficients")
@click.argument("table", metavar="TABLE.csv")
@_outcome_options
@click.option("--centre-on", "centre_on", metavar="COHORT.csv", default=None,
              help="Centre every term on this cohort (its mean moves into the intercept); risks do not change.")
def coefficients(table, output, name, model_version, event, horizon, population, invented, centre_on) -> None:
    """Import a logistic regression written as a coefficient table.

    \b
    Columns: term, coefficient, and for continuous terms min, max (the range the model is trusted over);
    optional label, unit, decimals, kind (continuous or flag). Other columns are ignored.
      (intercept),-4.1            one intercept row ('(intercept)', 'intercept' or 'const')
      age,0.045,60,102            continuous: a straight line over min..max, flat beyond it
      residence=own_home,0        one row per level of a categorical feature (reference level 0)
      residence=care_home,0.62
      prior_delirium,1.1          no min/max: a flag (0/1, no/yes)

    Every value must be measured when the model is used: a regression has no score for a missing value.

    \b
    Example (the table has the header row term,coefficient,min,max):
      scorecard import coefficients regression.csv --name "Delirium regression" --event "Delirium" \\
          --horizon "within 5 days after surgery" --population "adults aged 60 or over after hip-fracture surgery" \\
          --centre-on cohort.csv -o regression.model.json
    """
    from scorecard.model.importers.coefficients import import_coefficient_table

    out = output_path(output, table, *( [centre_on] if centre_on else []))
    cohort = read_table(centre_on, what="centring cohort") if centre_on else None
    model = import_coefficient_table(
        table, name=name, version=model_version, event=event, horizon=horizon, population=population, centre_on=cohort
    )
    _finish(model, out, table, invented)


@command.command(name="shapes")
@click.argument("table", metavar="TABLE.csv")
@_outcome_options
def shapes(table, output, name, model_version, event, horizon, population, invented) -> None:
    """Import an additive model written as a long-format shape table.

    \b
    Columns: feature, lower, upper, score, and level; optional label, unit, decimals.
      (intercept),,,,-1.6               the baseline log-odds
      sodium,,130,,0.55                 a bin: lower <= value < upper (empty = open-ended)
      sodium,130,135,,0.20              the next bin starts where the last one ended
      sodium,135,,,0.0
      sodium,,,not measured,0.10        the score when the value is missing
      residence,,,own_home,0.0          one row per level of a categorical feature
      residence,,,care_home,0.40
      prior_delirium,,,no,0.0           levels no and yes (or 0 and 1) make a flag
      prior_delirium,,,yes,1.1

    Gaps and overlaps between bins are refused, naming the row. Without a not-measured row, a missing value
    of that feature is refused when the model is used.

    \b
    Example (the table has the header row feature,lower,upper,level,score):
      scorecard import shapes shapes.csv --name "Delirium shapes" --event "Delirium" \\
          --horizon "within 5 days after surgery" -o shapes.model.json
    """
    from scorecard.model.importers.shape_table import import_shape_table

    out = output_path(output, table)
    model = import_shape_table(table, name=name, version=model_version, event=event, horizon=horizon, population=population)
    _finish(model, out, table, invented)
