"""`scorecard quantize`: turn a model into a sheet document of integer points under an accuracy bound."""

from __future__ import annotations

import click

from scorecard.commands._common import output_path, say
from scorecard.model import load_model
from scorecard.quantize import Bound, parse_bands, quantize_model
from scorecard.sheet import save_sheet, short_fingerprint
from scorecard.tabular import read_csv

_DEFAULT = Bound()


@click.command()
@click.argument("model_path", metavar="MODEL.json", type=click.Path())
@click.option("--data", "data_path", metavar="COHORT.csv", type=click.Path(),
              help="Patients to choose and measure the sheet on. Default: a synthetic population of 20000 drawn "
                   "from the model's own training bin counts (features independent).")
@click.option("--max-auc-loss", type=float, default=_DEFAULT.max_auc_loss, show_default=True,
              help="Largest allowed drop in AUC from the model to the sheet.")
@click.option("--max-risk-error", type=float, default=_DEFAULT.max_risk_error, show_default=True,
              help="A patient's risk counts as misstated when the sheet is further than this from the model "
                   "(a fraction: 0.10 = 10 percentage points).")
@click.option("--risk-error-share", type=float, default=_DEFAULT.risk_error_share, show_default=True,
              help="Largest allowed share of patients misstated by more than --max-risk-error.")
@click.option("--max-rows", type=int, default=_DEFAULT.max_rows, show_default=True,
              help="Most rows for one measured feature (and per axis of a pair grid).")
@click.option("--max-total-points", type=int, default=_DEFAULT.max_total_points, show_default=True,
              help="Largest allowed range of the total score (highest minus lowest total).")
@click.option("--max-row-error", type=float, default=_DEFAULT.max_row_error, show_default=True,
              help="Cap, in log-odds, on how far a row may sit from the model's curve anywhere in the training "
                   "range (before rounding); raised automatically to what --max-rows rows can achieve.")
@click.option("--bands", metavar="SPEC", help='Risk bands, e.g. "low<5,moderate<20,high" (percent; the last is open). '
              "Each band's wording is a placeholder for your unit's agreed action.")
@click.option("--allow-negative", is_flag=True, help="Keep signed points (default: every table starts at 0 points).")
@click.option("--merge-equal-levels", is_flag=True, help="Print categories that got the same points as one row.")
@click.option("--title", help="Page title (default: 'Risk of <event>').")
@click.option("--bootstrap", type=click.IntRange(0, 10000), default=200, show_default=True,
              help="Bootstrap resamples for the ΔAUC interval (0 = none).")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="Sheet document to write (*.sheet.json).")
def command(model_path, data_path, max_auc_loss, max_risk_error, risk_error_share, max_rows, max_total_points,
            max_row_error, bands, allow_negative, merge_equal_levels, title, bootstrap, output) -> None:
    """Quantise MODEL.json into integer point tables that meet an accuracy bound.

    Finds the simplest sheet (fewest printed rows, then the smallest range of total points) whose ΔAUC is at
    most --max-auc-loss and on which at most --risk-error-share of patients have their risk misstated by
    more than --max-risk-error. Cut-points are readable values at each feature's printed precision; rows
    are chosen by dynamic programming on risk-weighted error, row values refitted jointly, points rounded
    and improved by single-row moves. The sheet document holds every printed row, the conversion from
    each total to risk, the figures achieved, the worst-case certificate and the sheet fingerprint.

    Exit 3 when no sheet within --max-rows and --max-total-points meets the bound (the message gives the
    best achievable figures and what to relax); exit 2 for bad options or files. See docs/quantization.md.

    \b
    Examples:
      scorecard quantize demo_output/edited.model.json --data demo_output/cohort.csv --bands "low<10,moderate<25,high" -o sheet.json
      scorecard quantize demo_output/edited.model.json --data demo_output/cohort.csv --max-auc-loss 0.005 --max-rows 10 -o strict.sheet.json
    """
    out = output_path(output, model_path, *( [data_path] if data_path else []))
    bound = Bound(max_auc_loss=max_auc_loss, max_risk_error=max_risk_error, risk_error_share=risk_error_share,
                  max_rows=max_rows, max_total_points=max_total_points, max_row_error=max_row_error)
    bound.check()
    band_list = parse_bands(bands)
    model = load_model(model_path)
    data = read_csv(data_path) if data_path else None
    doc = quantize_model(model, data=data, bound=bound, bands=band_list, allow_negative=allow_negative,
                         merge_equal_levels=merge_equal_levels, bootstrap=bootstrap, title=title, progress=say)
    save_sheet(doc, out, protect=(model_path, data_path) if data_path else (model_path,))
    a = doc["achieved"]
    # spelled out: "points" on a sheet are sheet points, so risk differences are always "percentage points"
    say(f"sheet: {doc['report']['printed_rows']} printed rows, total points {doc['total']['min']} to {doc['total']['max']}, "
        f"one point = {doc['scale']['logodds_per_point']:.3g} log-odds")
    say(f"achieved: AUC loss {a['auc_loss']:.4f} (bound {bound.max_auc_loss:g}); "
        f"{a['share_over_risk_error']:.1%} of patients misstated by more than {bound.max_risk_error * 100:g} percentage points "
        f"(bound {bound.risk_error_share:.0%}); |sheet risk - model risk|: 99th percentile {a['p99_abs_risk_error'] * 100:.1f}, "
        f"mean {a['mean_abs_risk_error'] * 100:.1f} percentage points")
    say(f"certificate: inside the training ranges no patient is further than {doc['certificate']['max_logodds_error']:.2f} "
        f"log-odds ({doc['certificate']['max_risk_error'] * 100:.1f} percentage points of risk) from the model")
    extra = doc["report"]["readability"]["extra_error_share"]
    say(f"readable cut-points cost {extra:+.0%} error before rounding (vs cuts anywhere between model bins)")
    for d in doc["dropped_terms"]:
        say(f"dropped {d['name']}: {d['reason']}")
    say(f"wrote {out} (fingerprint {short_fingerprint(doc)})")
