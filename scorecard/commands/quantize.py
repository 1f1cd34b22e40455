"""`scorecard quantize`: turn a model into a sheet document of integer points under an accuracy bound."""

from __future__ import annotations

import math
from dataclasses import replace

import click

from scorecard.commands._common import BadValue, FeatureValue, FiniteRange, output_path, say
from scorecard.errors import CheckFailed, UserError
from scorecard.jsondoc import atomic_write_bytes
from scorecard.model import load_model
from scorecard.quantize import Bound, parse_bands, quantize_model
from scorecard.sheet import save_sheet, short_fingerprint
from scorecard.tabular import read_table

_DEFAULT = Bound()


class OptionalFraction(click.ParamType):
    """A fraction from 0 to 1, or `none` for a bound that is not set (its figure is then reported as not bounded)."""

    name = "FRACTION|none"

    def convert(self, value, param, ctx):
        if value is None or isinstance(value, float):
            return value
        text = str(value).strip().lower()
        if text in ("none", "off", "no"):
            return None
        try:
            return float(text)
        except ValueError:
            self.fail(f"{value!r} is not a fraction; give e.g. 0.05 (5 percentage points) or none", param, ctx)


def _shown(value) -> str:
    return "none" if value is None else f"{value:g}"


def summary_lines(doc: dict) -> list[str]:
    """What the sheet achieves, per-patient figures first, each against its bound or marked not bounded.
    Spelled out: "points" on a sheet are sheet points, so risk differences are always "percentage points"."""
    a, b, cert = doc["achieved"], doc["bound"], doc["certificate"]
    pp = lambda v: f"{v * 100:.1f} percentage points"  # noqa: E731

    def judged(text: str, value, limit, shown: str, at_least: bool = False) -> str:
        if limit is None:
            return f"  {text}: not bounded"
        ok = value >= limit if at_least else value <= limit
        return f"  {text} ({'at least' if at_least else 'bound'} {shown}): {'meets' if ok else 'MISSES'}"

    def share(limit) -> str:
        return "" if limit is None else f"{limit:.0%}"

    def points(limit) -> str:
        return "" if limit is None else f"{limit * 100:g} percentage points"

    lines = [f"sheet: {doc['report']['printed_rows']} printed rows, total points {doc['total']['min']} to {doc['total']['max']}, "
             f"one point = {doc['scale']['logodds_per_point']:.3g} log-odds",
             f"achieved on {doc['provenance']['evaluation']}:"]
    if a.get("band_agreement") is not None:
        lines.append(judged(f"same risk band as the exact model for {a['band_agreement']:.1%} of patients", a["band_agreement"],
                            b.get("min_band_agreement"), share(b.get("min_band_agreement")), at_least=True))
    q = b.get("risk_error_percentile", 95)
    at_q = a.get("percentile_abs_risk_error", a["p95_abs_risk_error"])
    lines.append(judged(f"{q:g}th percentile |sheet risk - model risk| {pp(at_q)}", at_q, b.get("max_percentile_risk_error"),
                        points(b.get("max_percentile_risk_error"))))
    lines.append(judged(f"largest |sheet risk - model risk| {pp(a['max_abs_risk_error'])}", a["max_abs_risk_error"],
                        b.get("max_largest_risk_error"), points(b.get("max_largest_risk_error"))))
    lines.append(judged(f"AUC loss {a['auc_loss']:.4f}", a["auc_loss"], b["max_auc_loss"], f"{b['max_auc_loss']:g}"))
    lines.append(judged(f"{a['share_over_risk_error']:.1%} of patients misstated by more than {b['max_risk_error'] * 100:g} "
                        "percentage points", a["share_over_risk_error"], b["risk_error_share"], share(b["risk_error_share"])))
    lines.append(f"  99th percentile {pp(a['p99_abs_risk_error'])}, mean {pp(a['mean_abs_risk_error'])}: not bounded")
    lines.append(judged(f"certificate (worst case over every combination of inputs) {cert['max_logodds_error']:.2f} log-odds, "
                        f"up to {pp(cert['max_risk_error'])} of risk at some total", cert["max_risk_error"],
                        b.get("max_certificate_risk_error"), points(b.get("max_certificate_risk_error"))))
    return lines


def frontier_lines(doc: dict) -> list[str]:
    """The frontier of alternative sheets as a table for the terminal (also in the sheet's report.frontier)."""
    rows = doc["report"].get("frontier") or []
    if not rows:
        return []
    where = rows[0]["measured_on"]
    out = [f"alternative sheets (measured on {where}; * = meets every bound set, + = beyond --max-total-points):",
           "  rows  total points  ΔAUC   band    p95  largest  mean (the last three in percentage points)"]
    for f in rows:
        band = "  –  " if f["band_agreement"] is None else f"{f['band_agreement']:.3f}"
        mark = ("*" if f["meets_bound"] else " ") + (" " if f["within_limits"] else "+")
        out.append(f"{mark}{f['printed_rows']:4d}  {f['total_points']:12d}  {f['auc_loss']:.4f}  {band}  {f['p95_abs_risk_error'] * 100:5.1f}"
                   f"  {f['max_abs_risk_error'] * 100:7.1f}  {f['mean_abs_risk_error'] * 100:5.2f}")
    return out


def frontier_png_bytes(doc: dict) -> bytes:
    """p95 and largest |Δrisk| against printed rows, one line per total-points limit (matplotlib, Agg)."""
    import io

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    rows = doc["report"].get("frontier") or []
    fig, axes = plt.subplots(1, 2, figsize=(9, 3.6), dpi=110)
    for target in sorted({f["total_points"] for f in rows}):
        sel = sorted((f for f in rows if f["total_points"] == target), key=lambda f: f["printed_rows"])
        x = [f["printed_rows"] for f in sel]
        axes[0].plot(x, [f["p95_abs_risk_error"] * 100 for f in sel], marker="o", label=f"up to {target} points")
        axes[1].plot(x, [f["max_abs_risk_error"] * 100 for f in sel], marker="o", label=f"up to {target} points")
    b = doc["bound"]
    for ax, key, title in ((axes[0], "max_percentile_risk_error", f"{b.get('risk_error_percentile', 95):g}th percentile |Δrisk|"),
                           (axes[1], "max_largest_risk_error", "largest |Δrisk|")):
        if b.get(key) is not None:
            ax.axhline(b[key] * 100, color="grey", linestyle="--", linewidth=0.8, label="bound")
        ax.set_xlabel("printed rows")
        ax.set_ylabel("percentage points")
        ax.set_title(title, fontsize=10)
    axes[0].legend(fontsize=7)
    fig.suptitle(f"Alternative sheets, measured on {rows[0]['measured_on'] if rows else 'no patients'} "
                 f"(sheet {short_fingerprint(doc)}; decision support only)", fontsize=9)
    fig.tight_layout()
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", metadata={"Software": None})
    plt.close(fig)
    return buffer.getvalue()


def _unit_and_decimals(text: str) -> tuple[str, int | None]:
    """UNIT or UNIT:DECIMALS of --display-unit."""
    unit, colon, places = text.partition(":")
    if not unit.strip():
        raise BadValue("write FEATURE=UNIT or FEATURE=UNIT:DECIMALS")
    if colon and (not places.strip().isdigit() or int(places) > 6):
        raise BadValue("decimals must be a whole number from 0 to 6")
    return unit.strip(), (int(places) if colon else None)


def _positive_number(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise BadValue(f"{text!r} is not a number of grams per mole") from None
    if not (value > 0 and math.isfinite(value)):
        raise BadValue("the molar mass must be a positive number of grams per mole")
    return value


def display_model(model, data, display_units: tuple[tuple[str, tuple[str, int | None]], ...],
                  molar_masses: tuple[tuple[str, float], ...]):
    """The model (and the cohort's columns) in the display units asked for, and each feature's conversion."""
    from scorecard.model.units import conversion, convert_values, in_display_unit
    from scorecard.suggest import did_you_mean
    from scorecard.tabular import numeric_column

    known = [f.name for f in model.features if f.kind == "continuous"]
    masses = dict(molar_masses)
    conversions = {}
    for name, (unit, decimals) in display_units:
        item = f"{name}={unit}" + ("" if decimals is None else f":{decimals}")
        if name not in known:
            raise UserError(f"--display-unit {item}: {name!r} is not a measured feature of the model"
                            f"{did_you_mean(name, known)}; measured features: {', '.join(known)}")
        feature = model.feature(name)
        if not feature.unit:
            raise UserError(f"--display-unit {item}: the model gives {name!r} no unit to convert from; set it at fit (--unit)")
        conv = conversion(feature.unit, unit, masses.get(name), where=f"--display-unit {item}")
        model = in_display_unit(model, name, conv, decimals)
        conversions[name] = {k: conv[k] for k in ("from_unit", "scale", "offset")}
        conversions[name]["from_unit"] = feature.unit
        if data is not None and name in data.columns:
            data = data.copy()
            data[name] = convert_values(numeric_column(data, name), conv)
    return model, data, conversions


def in_model_units(doc: dict, model, conversions: dict) -> dict:
    """The sheet belongs to the model as written; its tables say how a value reaches their display unit."""
    if conversions:
        doc["model"] = {"name": model.name, "version": model.version, "fingerprint": model.fingerprint}
        for term in doc["terms"]:
            blocks = term["axes"] if term["kind"] == "pair" else [term]
            for block in blocks:
                if block.get("feature") in conversions and block["kind"] == "continuous":
                    block["display_conversion"] = conversions[block["feature"]]
    return doc


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
@click.option("--min-band-agreement", type=OptionalFraction(), default=_shown(_DEFAULT.min_band_agreement), show_default=True,
              help="Smallest allowed share of patients whose band on the sheet is the band the exact model gives them "
                   "(used when --bands is given; none = not bounded).")
@click.option("--risk-error-percentile", type=FiniteRange(0, 100, min_open=True), default=_DEFAULT.risk_error_percentile,
              show_default=True, help="Which percentile of |sheet risk - model risk| --max-percentile-risk-error bounds (95 = p95).")
@click.option("--max-percentile-risk-error", type=OptionalFraction(), default=_shown(_DEFAULT.max_percentile_risk_error),
              show_default=True, help="Largest allowed value of that percentile of |sheet risk - model risk| "
                                      "(0.05 = 5 percentage points; none = not bounded).")
@click.option("--max-largest-risk-error", type=OptionalFraction(), default=_shown(_DEFAULT.max_largest_risk_error),
              show_default=True, help="Largest allowed |sheet risk - model risk| of any patient judged on (none = not bounded).")
@click.option("--max-certificate-risk-error", type=OptionalFraction(), default=_shown(_DEFAULT.max_certificate_risk_error),
              show_default=True, help="Largest allowed worst case of the certificate (any inputs, any total); none = not "
                                      "bounded, and the certificate is then reported as such, never as a pass.")
@click.option("--max-rows", type=int, default=_DEFAULT.max_rows, show_default=True,
              help="Most rows for one measured feature (and per axis of a pair grid).")
@click.option("--max-total-points", type=int, default=_DEFAULT.max_total_points, show_default=True,
              help="Largest allowed range of the total score (highest minus lowest total).")
@click.option("--max-row-error", type=float, default=_DEFAULT.max_row_error, show_default=True,
              help="Cap, in log-odds, on how far a row may sit from the model's curve anywhere in the training "
                   "range (before rounding); raised automatically to what --max-rows rows can achieve.")
@click.option("--bands", metavar="SPEC", help='Risk bands, e.g. "low<5,moderate<20,high" (percent; the last is open). '
              "Each band's wording is a placeholder for your unit's agreed action.")
@click.option("--band-edges", type=click.Choice(["searched", "at-risk-limits"]), default="searched", show_default=True,
              help="Where one band ends and the next begins: at the totals that put the most patients in their exact-model "
                   "band (searched), or where the printed risk crosses each band's limit.")
@click.option("--band-edge-weight", type=FiniteRange(0, 100), default=None,
              help="Extra weight, in the row search and rounding, on patients whose model risk is near a band limit "
                   "(0 = none; default: docs/quantization.md).")
@click.option("--allow-negative", is_flag=True, help="Keep signed points (default: every table starts at 0 points).")
@click.option("--merge-equal-levels", is_flag=True, help="Print categories that got the same points as one row.")
@click.option("--title", help="Page title (default: 'Risk of <event>').")
@click.option("--bootstrap", type=click.IntRange(0, 10000), default=200, show_default=True,
              help="Bootstrap resamples for the ΔAUC interval (0 = none).")
@click.option("--frontier-plot", "frontier_png", metavar="FILE.png", type=click.Path(),
              help="Also draw the frontier of alternative sheets (rows and points against per-patient error) as a PNG.")
@click.option("--write-nearest", "nearest_path", metavar="FILE.json", type=click.Path(),
              help="When no sheet within the limits meets the bound (exit 3), write the nearest sheet that does "
                   "(more total points) to this file; it still exits 3, since the limits asked for were not met.")
@click.option("--display-unit", "display_units", multiple=True, metavar="FEATURE=UNIT[:DECIMALS]",
              type=FeatureValue("temperature=degF (or haemoglobin=g/dL:1)", _unit_and_decimals, form="FEATURE=UNIT or FEATURE=UNIT:DECIMALS"),
              help="Print FEATURE in the ward's own unit, e.g. temperature=degF, haemoglobin=g/dL:1; cut-points are "
                   "found in that unit and score converts the cohort's values exactly before reading them "
                   "(factors from pint; repeatable).")
@click.option("--molar-mass", "molar_masses", multiple=True, metavar="FEATURE=G_PER_MOL",
              type=FeatureValue("glucose=180.16", _positive_number, form="FEATURE=G_PER_MOL"),
              help="Molar mass for a concentration shown as mass, e.g. glucose=180.16 for mmol/L -> mg/dL.")
@click.option("-o", "--output", "output", required=True, type=click.Path(), help="Sheet document to write (*.sheet.json).")
def command(model_path, data_path, max_auc_loss, max_risk_error, risk_error_share, min_band_agreement, risk_error_percentile,
            max_percentile_risk_error, max_largest_risk_error, max_certificate_risk_error, max_rows, max_total_points,
            max_row_error, bands, band_edges, band_edge_weight, allow_negative, merge_equal_levels, title, bootstrap, frontier_png, nearest_path,
            display_units, molar_masses,
            output) -> None:
    """Quantise MODEL.json into integer point tables that meet an accuracy bound.

    Finds the simplest sheet (fewest printed rows, then the smallest range of total points) that meets every
    bound set: band agreement, a percentile and the largest |sheet risk - model risk| per patient, ΔAUC and
    the share misstated by more than --max-risk-error. Rows are given where they lower the per-patient error
    most (backfitting: each term re-segmented by dynamic programming against what the other terms leave),
    at readable cut-points; points are rounded and improved by row moves. With --data a third of the cohort
    is held out and the sheet must meet the bound there too; the figures stored and printed are the held-out
    ones. Prints a frontier of alternative sheets. The sheet document holds every printed row, the
    conversion from each total to risk (with the spread of model risk per total), the figures achieved, the
    worst-case certificate and the sheet fingerprint.

    Exit 3 when no sheet within --max-rows and --max-total-points meets the bound (the message gives the
    best achievable figures, what to relax and the nearest passing sheet, which --write-nearest writes);
    exit 2 for bad options or files. See docs/quantization.md.

    \b
    Examples:
      scorecard quantize demo_output/edited.model.json --data demo_output/cohort.csv --bands "low<10,moderate<25,high" -o sheet.json
      scorecard quantize demo_output/edited.model.json --data demo_output/cohort.csv --max-auc-loss 0.005 --max-rows 10 -o strict.sheet.json
    """
    out = output_path(output, model_path, *( [data_path] if data_path else []))
    bound = Bound(max_auc_loss=max_auc_loss, max_risk_error=max_risk_error, risk_error_share=risk_error_share,
                  max_rows=max_rows, max_total_points=max_total_points, max_row_error=max_row_error,
                  min_band_agreement=min_band_agreement, risk_error_percentile=risk_error_percentile,
                  max_percentile_risk_error=max_percentile_risk_error, max_largest_risk_error=max_largest_risk_error,
                  max_certificate_risk_error=max_certificate_risk_error)
    bound.check()
    band_list = parse_bands(bands)
    model = load_model(model_path)
    data = read_table(data_path) if data_path else None
    shown, data, conversions = display_model(model, data, display_units, molar_masses)
    protect = (model_path, data_path) if data_path else (model_path,)
    near = output_path(nearest_path, *protect, option="--write-nearest") if nearest_path else None
    png = output_path(frontier_png, *protect, option="--frontier-plot", binary=True) if frontier_png else None
    options = dict(data=data, bands=band_list, allow_negative=allow_negative, merge_equal_levels=merge_equal_levels,
                   bootstrap=bootstrap, title=title, band_edge_search=band_edges == "searched",
                   band_edge_weight=band_edge_weight)
    try:
        doc = in_model_units(quantize_model(shown, bound=bound, progress=say, **options), model, conversions)
    except CheckFailed as failed:
        nearest = getattr(failed, "nearest", None)
        if near is not None and nearest is not None:
            relaxed = replace(bound, max_total_points=int(nearest["total_points"]))
            other = in_model_units(quantize_model(shown, bound=relaxed, progress=None, **options), model, conversions)
            save_sheet(other, near, protect=protect)
            say(f"wrote the nearest sheet that meets the bound ({other['report']['printed_rows']} rows, total points "
                f"{other['total']['min']} to {other['total']['max']}) to {near} (fingerprint {short_fingerprint(other)})")
        elif near is not None:
            say("no nearer sheet meets the bound within 100 total points; nothing written to --write-nearest")
        raise
    for name, conv in conversions.items():
        say(f"{name}: printed in {shown.feature(name).unit} (= {conv['scale']} x {conv['from_unit']} + {conv['offset']}); "
            "cut-points found in that unit")
    save_sheet(doc, out, protect=protect)
    for line in summary_lines(doc):
        say(line)
    for line in frontier_lines(doc):
        say(line)
    if png is not None:
        atomic_write_bytes(png, frontier_png_bytes(doc))
        say(f"wrote the frontier plot to {png}")
    extra = doc["report"]["readability"]["extra_error_share"]
    say(f"readable cut-points cost {extra:+.0%} error before rounding (vs cuts anywhere between model bins)")
    for d in doc["dropped_terms"]:
        say(f"dropped {d.get('label') or d['name']}: {d['reason']}")
    slips = doc["report"].get("slips")
    if slips:  # scorecard.audit.slips, as `check` reports it
        row, off = slips["neighbour_row"]["overall"], slips["total_off_by_one"]
        say(f"slips: reading a neighbouring row misstates risk by {row['mean_abs_risk_error'] * 100:.1f} percentage points on "
            f"average (largest {row['max_abs_risk_error'] * 100:.1f}); a total off by one by {off['mean_abs_risk_error'] * 100:.1f}")
    say(f"wrote {out} (fingerprint {short_fingerprint(doc)})")
