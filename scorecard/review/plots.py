"""Matplotlib pages for the review: a summary page and one page per term.

- summary: a table of the terms ranked by their effect on the sheet (points on the default sheet, spread of
  risk across patients), then the flags;
- a one-feature term: its shape on the log-odds scale with the spread band, the rows a default sheet would
  print laid over it as thick grey steps with their points, and the patients as a shaded strip along the
  bottom of the same plot (darker = more patients per unit), with the patients per sheet row printed in it;
- a pair term: small multiples, the pair's contribution along one feature drawn at each row of the other
  (the default sheet's rows of it, or a few groups of its bins), each panel with its own strip and steps.
Readable in black and white: lines differ by weight, style and grey, colour carries nothing, every number a
reader needs is printed. Every page carries the cautions and the model fingerprint.
"""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from scorecard.invented import add_matplotlib_mark, is_invented
from scorecard.cautions import cautions
from scorecard.model.document import AdditiveModel, Term
from scorecard.model.predict import feature_values
from scorecard.review.entries import axis_labels, entry_labels, number
from scorecard.review.flags import Flag, FlagSettings
from scorecard.review.importance import TermEffect
from scorecard.review.preview import PreviewRows, SheetPreview, TermPreview
from scorecard.review.weights import term_weights
from scorecard.sheet.printed import reading_of, row_indices, term_label

STEPS = {"color": "0.6", "linewidth": 4.5, "solid_capstyle": "butt", "zorder": 2, "gid": "sheet-steps"}  # the default sheet's rows
STEPS_LABEL = "rows a default sheet would print (their points in boxes)"
STRIP_SHARE = 0.16  # of a plot's height, at its bottom: the patient strip
PAGE = (8.27, 11.69)  # A4 portrait, inches
LEFT, WIDTH = 0.11, 0.80
FLAG_TITLES = {
    "protective_care_marker": "Care-process marker looks protective",
    "non_monotone": "Shape breaks its declared direction",
    "outside_training_range": "Effect outside the training range",
    "wide_band": "Large effect, wide band",
    "sparse_data": "Large effect, few patients",
    "rare_category": "Strong score from a rare level",
}

CAUTIONS = " ".join(cautions("this review", "Its shapes show"))


def new_page() -> Figure:
    return Figure(figsize=PAGE)


def frame_page(fig: Figure, model: AdditiveModel, fingerprint: str, title: str, page: int, pages: int) -> None:
    """Title, outcome, cautions and fingerprint: the parts every page shares."""
    if is_invented(model):
        add_matplotlib_mark(fig, left=LEFT, width=WIDTH)
    fig.text(LEFT, 0.965, title, fontsize=15, weight="bold", va="top")
    outcome = model.outcome
    heading = f"Model review: {model.name} version {model.version}. Outcome: {outcome['event']} (horizon: {outcome['horizon']}). Population: {outcome['population']}."
    fig.text(LEFT, 0.937, "\n".join(textwrap.wrap(heading, 118)), fontsize=7.5, va="top")
    caution = "\n".join(textwrap.wrap(CAUTIONS, 120))
    fig.text(LEFT, 0.062, caution, fontsize=7, va="top", style="italic")
    fig.text(LEFT, 0.022, f"model fingerprint (SHA-256) {fingerprint}", fontsize=6.5, family="monospace", va="bottom")
    fig.text(LEFT + WIDTH, 0.022, f"page {page} of {pages}", fontsize=7, ha="right", va="bottom")


def shown_name(model: AdditiveModel, term: Term | str) -> str:
    """A term as the review prints it: a pair in words (`term_label`), a one-feature term by its name, the
    word the edit options take."""
    term = model.term(term) if isinstance(term, str) else term
    return term_label(model, term) if term.kind == "pair" else term.name


def summary_page(
    model: AdditiveModel,
    ranking: list[TermEffect] | None,
    flags: list[Flag],
    settings: FlagSettings,
    population_note: str,
    preview: SheetPreview | None = None,
) -> tuple[Figure, list[Flag]]:
    """The effect table (first page only) and as many flags as fit; returns the page and the flags left over."""
    fig = new_page()
    top = 0.90
    if ranking is not None:
        top = _effect_table(fig, model, ranking, flags, population_note, preview)
        declared = declarations_text(model)
        fig.text(LEFT, top, "\n".join(textwrap.wrap(declared, 150)), fontsize=6.5, va="top")
        top -= 0.012 * (1 + len(declared) // 150) + 0.014
    return fig, _flag_list(fig, model, flags, settings, top, continued=ranking is None)


def declarations_text(model: AdditiveModel) -> str:
    """What the methodologist has declared, which the direction and care-process flags rely on."""
    directions = [f"{f.name} {f.direction}" for f in model.features if f.direction and f.name in model.used_features]
    care = [f.name for f in model.features if f.role == "care_process" and f.name in model.used_features]
    return (
        "Declared directions: " + (", ".join(directions) if directions else "none")
        + ". Care-process markers: " + (", ".join(care) if care else "none")
        + ". (Declare with scorecard edit --declare FEATURE=increasing|decreasing|care_process.)"
    )


def preview_text(preview: SheetPreview | None, population_note: str) -> str:
    if preview is None:
        return "No default sheet was made for this review (--no-sheet-preview): terms are ranked by spread of risk."
    if not preview.ok:
        return f"No default sheet to preview: {preview.failure}. Terms are ranked by spread of risk."
    return (f"Points: the range of points (highest minus lowest) the term gets on the sheet `scorecard quantize` makes "
            f"with its default bound: {preview.printed_rows} printed rows, totals {preview.total[0]} to {preview.total[1]}, "
            f"one point = {preview.per_point:.3g} log-odds, chosen on {preview.evaluation}. A preview for the reviewer: "
            "the sheet you print is the one you quantise.")


def _effect_table(fig: Figure, model: AdditiveModel, ranking: list[TermEffect], flags: list[Flag],
                  population_note: str, preview: SheetPreview | None) -> float:
    """Terms ranked by their effect on the sheet, as a table of printed numbers; returns the y below it."""
    fig.text(LEFT, 0.895, "Terms ranked by their effect on the sheet", fontsize=10, weight="bold", va="bottom")
    intro = (preview_text(preview, population_note) + " Risk spread: how far the term alone moves an average "
             f"patient's risk between the patients at its 5th and 95th percentile ({population_note}).")
    y = 0.888
    for line in textwrap.wrap(intro, 150):
        fig.text(LEFT, y, line, fontsize=6.5, va="top")
        y -= 0.0115
    y -= 0.006
    columns = [(LEFT + 0.02, "right", "#"), (LEFT + 0.03, "left", "term"), (LEFT + 0.47, "right", "points"),
               (LEFT + 0.57, "right", "risk spread"), (LEFT + 0.73, "right", "log-odds, 5th to 95th"),
               (LEFT + WIDTH, "right", "flags")]
    for x, ha, text in columns:
        fig.text(x, y, text, fontsize=7, weight="bold", ha=ha, va="top")
    y -= 0.014
    fig.add_artist(_rule(fig, y + 0.002))
    count = {}
    for f in flags:
        count[f.term] = count.get(f.term, 0) + 1
    for rank, r in enumerate(ranking, start=1):
        name = r.label if model.term(r.term).kind == "pair" else f"{r.label} ({r.term})"
        wrapped = textwrap.wrap(name, 70) or [name]
        points = "–" if r.points_range is None else (f"0, left off" if r.left_off else f"{r.points_range}")
        cells = [str(rank), wrapped[0], points, f"{100 * r.risk_spread:.1f} pp", f"{r.low:+.2f} to {r.high:+.2f}",
                 str(count.get(r.term, "–"))]
        for (x, ha, _), text in zip(columns, cells):
            fig.text(x, y, text, fontsize=7, ha=ha, va="top")
        for more in wrapped[1:]:
            y -= 0.0115
            fig.text(columns[1][0], y, more, fontsize=7, va="top")
        y -= 0.0135
    fig.add_artist(_rule(fig, y + 0.002))
    notes = ["pp: percentage points of risk. Largest first by points, then by risk spread."]
    if any(r.left_off for r in ranking):
        notes.append("'0, left off': the default sheet does not print the term (its effect is left to the other "
                     "terms, or it was set to zero at review); the term's page says why.")
    for line in textwrap.wrap(" ".join(notes), 150):
        fig.text(LEFT, y - 0.002, line, fontsize=6.5, style="italic", va="top")
        y -= 0.0115
    return y - 0.012


def _rule(fig: Figure, y: float):
    from matplotlib.lines import Line2D

    return Line2D([LEFT, LEFT + WIDTH], [y, y], transform=fig.transFigure, color="black", linewidth=0.5)


def _flag_list(fig: Figure, model: AdditiveModel, flags: list[Flag], settings: FlagSettings, top: float, continued: bool) -> list[Flag]:
    lines: list[tuple[str, dict]] = []
    heading = f"Flags ({len(flags)})" if flags else "Flags: none raised"
    if continued:
        heading = f"Flags, continued ({len(flags)} more)"
    lines.append((heading, {"weight": "bold", "fontsize": 10}))
    lines.append(
        (
            f"Thresholds: large effect {settings.large_effect:g} log-odds; direction tolerance {settings.monotone_tolerance:g}; "
            f"band = score +/- {settings.band_width:g} spread; few patients < {settings.sparse_patients:g}; rare level < {100 * settings.rare_share:g}% of patients.",
            {"fontsize": 6.5, "style": "italic"},
        )
    )
    kind = None
    y_budget = top - 0.03 - 0.085
    used = 0.0
    shown = 0
    for flag in flags:
        block: list[tuple[str, dict]] = []
        if flag.kind != kind:
            block.append((FLAG_TITLES[flag.kind], {"weight": "bold", "fontsize": 8}))
        wrapped = textwrap.wrap(f"[{shown_name(model, flag.term)}] {flag.message}", 128)
        block += [(("- " if i == 0 else "  ") + w, {"fontsize": 7}) for i, w in enumerate(wrapped)]
        height = sum(0.0165 if s.get("weight") else 0.0125 for _, s in block)
        if used + height > y_budget:
            break
        lines += block
        used += height
        kind = flag.kind
        shown += 1
    y = top
    for text, style in lines:
        fig.text(LEFT, y, text, va="top", **style)
        y -= 0.0165 if style.get("weight") else 0.0125
    return flags[shown:]


def term_page(
    model: AdditiveModel,
    term: Term,
    cohort: pd.DataFrame | None,
    effect: TermEffect,
    flags: list[Flag],
    settings: FlagSettings,
    preview: SheetPreview | None = None,
) -> Figure:
    fig = new_page()
    shown = preview.terms.get(term.name) if preview is not None and preview.ok else None
    if term.kind == "continuous":
        _continuous(fig, model, term, cohort, settings, shown, preview)
    elif term.kind == "pair":
        _pair(fig, model, term, cohort, settings, shown, preview)
    else:
        _levels(fig, model, term, cohort, settings, shown, preview)
    notes = [_effect_note(effect, shown)]
    if shown is not None and shown.rows is not None:
        notes.append("Rows a default sheet would print: " + "; ".join(
            f"{text}: {int(p)} point{'s' if int(p) != 1 else ''}" for text, p in zip(shown.rows.texts, shown.rows.points)) + ".")
    if term.kind != "pair" and model.feature(term.feature).direction:
        notes.append(f"Declared direction: {model.feature(term.feature).direction}.")
    for n in term.feature_names:
        if model.feature(n).role == "care_process":
            notes.append(f"{n} is marked a care-process marker: its effect shows how care was given, not a cause of risk.")
    notes += [f"FLAG {FLAG_TITLES[f.kind].lower()}: {f.message}" for f in flags] or ["No flags on this term."]
    y = 0.235
    for note in notes:
        for i, line in enumerate(textwrap.wrap(note, 120)):
            fig.text(LEFT, y, line, fontsize=7.5, va="top", weight="bold" if note.startswith("FLAG") and i == 0 else "normal")
            y -= 0.014
            if y < 0.075:
                return fig
    return fig


def _effect_note(effect: TermEffect, shown: TermPreview | None) -> str:
    spread = (f"risk spread {100 * effect.risk_spread:.1f} percentage points (its contribution runs from {effect.low:+.2f} "
              f"to {effect.high:+.2f} log-odds between the 5th and 95th percentile of patients, {effect.source}); "
              f"largest |score| {effect.largest:.2f}.")
    if shown is None:
        return "Effect: " + spread
    if shown.left_off:
        return f"Effect on the sheet: left off the default sheet ({shown.left_off}); " + spread
    plural = "" if shown.points_range == 1 else "s"
    return f"Effect on the sheet: {shown.points_range} point{plural} from its lowest to its highest row on the default sheet; " + spread


def _title(feature) -> str:
    return f"{feature.label}" + (f" ({feature.unit})" if feature.unit else "")


# -- the patient strip and the sheet's steps, shared by every kind of plot --------------------------------------


def _reserve_strip(ax, lo: float, hi: float) -> tuple[float, float]:
    """Set the y range so the bottom STRIP_SHARE of the plot holds the patient strip below everything drawn
    between lo and hi; returns the strip's (bottom, top) in data units."""
    span = (hi - lo) or 1.0
    top_pad = 0.08 * span
    total = (span + top_pad) / (1 - STRIP_SHARE - 0.03)
    bottom = lo - total * (STRIP_SHARE + 0.03)
    ax.set_ylim(bottom, hi + top_pad)
    strip_top = bottom + total * STRIP_SHARE
    ax.axhline(strip_top, color="black", linewidth=0.5)
    return bottom, strip_top


def _strip(ax, bounds: np.ndarray, density: np.ndarray, strip: tuple[float, float], caption: str) -> None:
    """Patients as shading along the x axis, inside the plot: each cell grey by patients per unit (darker = more)."""
    bottom, top = strip
    peak = float(density.max()) if density.size and density.max() > 0 else 1.0
    for left, right, d in zip(bounds[:-1], bounds[1:], density):
        if right > left:
            ax.fill_between([left, right], bottom, top, color=str(1.0 - 0.75 * d / peak), linewidth=0, zorder=1, gid="patient-strip")
    ax.text(0.01, (top - bottom) * 0.92 + bottom, caption, transform=ax.get_yaxis_transform(), fontsize=6.2, va="top",
            ha="left", bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.6, "alpha": 0.85}, zorder=6)


def _row_counts(ax, spans: list[tuple[float, float]], counts: list[float], strip: tuple[float, float], xlim) -> None:
    """Patients per sheet row, printed in the strip at each row's middle."""
    bottom, top = strip
    for (a, b), n in zip(spans, counts):
        a, b = max(a, xlim[0]), min(b, xlim[1])
        if b > a:
            ax.text((a + b) / 2, bottom + 0.3 * (top - bottom), f"{n:,.0f}", ha="center", va="center", fontsize=6,
                    bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.4, "alpha": 0.85}, zorder=6)


def _points_box(ax, x: float, y: float, points: float) -> None:
    ax.text(x, y, f"{int(points)}", ha="center", va="bottom", fontsize=7, weight="bold", zorder=7,
            bbox={"facecolor": "white", "edgecolor": "black", "linewidth": 0.6, "pad": 1.2})


def sheet_steps(rows: PreviewRows, points: np.ndarray, per_point: float, shift: float, xlo: float, xhi: float,
                samples: int = 4001) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The default sheet's rows of a measured feature as a step line over [xlo, xhi]: x, the log-odds of the
    row each x is read into by the sheet's rule (`row_indices`), and that row's index. Rows change where the
    reading rule says (e.g. at 79.5 for a row '80–84' read rounded), to the grid's resolution."""
    block = rows.block
    xs = np.linspace(xlo, xhi, samples)
    idx = row_indices(block["rows"], xs, int(block["decimals"]), reading_of(block))
    return xs, np.asarray(points, dtype=float)[idx] * per_point + shift, idx


def _row_spans(xs: np.ndarray, idx: np.ndarray) -> list[tuple[int, float, float]]:
    """(row, first x, last x) of each run of one row along xs."""
    runs, start = [], 0
    for k in range(1, len(xs) + 1):
        if k == len(xs) or idx[k] != idx[start]:
            runs.append((int(idx[start]), float(xs[start]), float(xs[k - 1])))
            start = k
    return runs


# -- one-feature continuous terms -------------------------------------------------------------------


def _x_limits(term: Term, rng: dict | None, values: np.ndarray | None) -> tuple[float, float]:
    points = list(term.edges or [])
    if rng:
        points += [rng["min"], rng["max"]]
    if values is not None and np.isfinite(values).any():
        points += [float(np.nanmin(values)), float(np.nanmax(values))]
    lo, hi = (min(points), max(points)) if points else (0.0, 1.0)
    pad = 0.06 * (hi - lo or 1.0)
    return lo - pad, hi + pad


def _density(term: Term, values: np.ndarray | None, xlo: float, xhi: float):
    """Bin bounds, patients per unit in each, and the source, for the strip; None when nothing is known."""
    edges = list(term.edges or [])
    if values is not None:
        seen = np.clip(values[np.isfinite(values)], xlo, xhi)
        bounds = np.r_[xlo, edges, xhi] if 0 < len(edges) <= 150 and term.shape == "step" else np.linspace(xlo, xhi, 61)
        counts, _ = np.histogram(seen, bins=bounds)
        source = "cohort"
    elif term.counts is not None and term.shape == "step":
        bounds = np.r_[xlo, edges, xhi]
        counts = np.asarray(term.counts, dtype=float)
        source = "training counts"
    elif term.counts is not None:  # knots: each knot's patients spread over the half-way points around it
        knots = np.asarray(edges, dtype=float)
        mids = (knots[:-1] + knots[1:]) / 2
        bounds = np.r_[xlo, mids, xhi]
        counts = np.asarray(term.counts, dtype=float)
        source = "training counts near each knot"
    else:
        return None
    widths = np.diff(bounds)
    return bounds, np.where(widths > 0, counts / np.where(widths > 0, widths, 1), 0.0), np.asarray(counts, dtype=float), source


def _continuous(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings,
                shown: TermPreview | None, preview: SheetPreview | None) -> None:
    feature = model.feature(term.feature)
    rng = feature.training_range
    values = feature_values(cohort, feature) if cohort is not None else None
    xlo, xhi = _x_limits(term, rng, values)
    has_missing = term.missing_score is not None
    ax = fig.add_axes([LEFT, 0.29, WIDTH - (0.11 if has_missing else 0), 0.58])
    scores = np.asarray(term.scores, dtype=float)
    spread = np.asarray(term.spread, dtype=float) if term.spread is not None else None
    edges = list(term.edges or [])
    xs = np.r_[xlo, edges, xhi]
    if term.shape == "linear":
        ys = np.r_[scores[0], scores, scores[-1]]
        band = np.r_[spread[0], spread, spread[-1]] if spread is not None else None
        step = None
    else:
        ys = np.r_[scores, scores[-1]]
        band = np.r_[spread, spread[-1]] if spread is not None else None
        step = "post"
    k = settings.band_width
    lo, hi = [float(ys.min()), 0.0], [float(ys.max()), 0.0]
    if band is not None:
        lo.append(float((ys - k * band).min()))
        hi.append(float((ys + k * band).max()))
    steps = None
    if shown is not None and shown.rows is not None:
        sx, sy, sidx = sheet_steps(shown.rows, shown.rows.points, preview.per_point, shown.shift, xlo, xhi)
        steps = (sx, sy, sidx)
        lo.append(float(sy.min()))
        hi.append(float(sy.max()) + 0.12 * (max(hi) - min(lo) or 1.0))  # room for the points boxes
    strip = _reserve_strip(ax, min(lo), max(hi))
    if band is not None:
        ax.fill_between(xs, ys - k * band, ys + k * band, step=step, facecolor="0.92", edgecolor="0.45", hatch="////",
                        linewidth=0.0, label=f"band: score +/- {k:g} spread", zorder=1.5)
    if steps is not None:
        sx, sy, sidx = steps
        ax.plot(sx, sy, label=STEPS_LABEL, **STEPS)
        spans = _row_spans(sx, sidx)
        for row, a, b in spans:
            _points_box(ax, (a + b) / 2, sy[np.searchsorted(sx, a)] + 0.02 * (ax.get_ylim()[1] - ax.get_ylim()[0]), shown.rows.points[row])
    ax.plot(xs, ys, color="black", linewidth=1.6, drawstyle="steps-post" if step else "default", label="shape (log-odds)", zorder=3)
    ax.axhline(0.0, color="black", linewidth=0.6, linestyle=(0, (1, 2)), label="population average (0)")
    _mark_range(ax, rng, xlo, xhi, label=True)
    density = _density(term, values, xlo, xhi)
    if density is not None:
        bounds, per_unit, counts, source = density
        unit = feature.unit or "unit"
        _strip(ax, bounds, per_unit, strip, f"patients ({source}): darker = more per unit"
               + ("; numbers = patients in each sheet row" if steps is not None else f"; darkest {per_unit.max():,.4g} per {unit}"))
        if steps is not None:
            spans = _row_spans(steps[0], steps[2])
            if values is not None:
                seen = values[np.isfinite(values)]
                rows = row_indices(shown.rows.block["rows"], seen, int(shown.rows.block["decimals"]), reading_of(shown.rows.block))
                per_row = np.bincount(rows, minlength=len(shown.rows.texts))
            else:
                per_row = np.bincount(np.maximum(shown.rows.of_entry, 0), weights=np.asarray(term.counts, dtype=float),
                                      minlength=len(shown.rows.texts))
            _row_counts(ax, [(a, b) for _, a, b in spans], [per_row[r] for r, _, _ in spans], strip, (xlo, xhi))
    else:
        ax.text(0.5, (strip[0] + strip[1]) / 2, "no cohort and no training counts: patients unknown",
                transform=ax.get_yaxis_transform(), ha="center", va="center", fontsize=7)
    ax.set_ylabel("contribution to log-odds", fontsize=8)
    ax.set_xlabel(_title(feature), fontsize=8)
    ax.set_xlim(xlo, xhi)
    ax.set_yticks([t for t in ax.get_yticks() if t >= strip[1]])
    ax.tick_params(labelsize=7)
    ax.legend(fontsize=6.5, loc="upper left", bbox_to_anchor=(0.0, 1.0), frameon=True, framealpha=0.92).set_zorder(8)
    ax.set_title(f"{term.name}: {_title(feature)}", fontsize=11, loc="left")
    if has_missing:
        miss = fig.add_axes([LEFT + WIDTH - 0.08, 0.29, 0.08, 0.58], sharey=ax)
        ms = term.missing_score
        err = k * spread.mean() if spread is not None else None
        if shown is not None and shown.rows is not None and shown.rows.missing_row is not None:
            p = shown.rows.points[shown.rows.missing_row]
            y = shown.logodds(p, preview.per_point)
            miss.plot([-0.6, 0.6], [y, y], **STEPS)
            _points_box(miss, 0.45, float(y) + 0.02 * (ax.get_ylim()[1] - ax.get_ylim()[0]), p)
        miss.errorbar([0], [ms], yerr=None if err is None else [[err], [err]], fmt="D", color="black", capsize=3, zorder=4)
        miss.axhline(0.0, color="black", linewidth=0.6, linestyle=(0, (1, 2)))
        miss.axhline(strip[1], color="black", linewidth=0.5)
        miss.set_xticks([0], ["not\nmeasured"], fontsize=7)
        miss.set_xlim(-1, 1)
        miss.tick_params(labelleft=False, labelsize=7)
        miss.text(-0.9, ms, f"{ms:+.2f}", fontsize=7, va="bottom")
        n_missing = term.missing_count if values is None else float(np.isnan(values).sum())
        if n_missing is not None:
            miss.text(0, (strip[0] + strip[1]) / 2, f"{n_missing:,.0f}\npatients", fontsize=6.2, ha="center", va="center")


def _mark_range(ax, rng: dict | None, xlo: float, xhi: float, label: bool) -> None:
    if not rng:
        return
    lo, hi = rng["min"], rng["max"]
    kwargs = {"facecolor": "none", "edgecolor": "0.7", "hatch": "xx", "linewidth": 0.0, "zorder": 0.5}
    if xlo < lo:
        ax.axvspan(xlo, lo, label="outside training range" if label else None, **kwargs)
    if hi < xhi:
        ax.axvspan(hi, xhi, label=None if (xlo < lo or not label) else "outside training range", **kwargs)
    ax.axvline(lo, color="black", linestyle="--", linewidth=0.8)
    ax.axvline(hi, color="black", linestyle="--", linewidth=0.8)
    if "p01" in rng and "p99" in rng:
        for x in (rng["p01"], rng["p99"]):
            ax.axvline(x, color="black", linestyle="-.", linewidth=0.6, label="1st / 99th percentile" if (label and x == rng["p01"]) else None)


# -- categorical and flag terms ------------------------------------------------------------------------


def _levels(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings,
            shown: TermPreview | None, preview: SheetPreview | None) -> None:
    feature = model.feature(term.feature)
    labels = entry_labels(model, term)
    scores = list(np.asarray(term.scores, dtype=float))
    spread = list(np.asarray(term.spread, dtype=float)) if term.spread is not None else None
    weights = term_weights(model, term, cohort)
    counts = list(weights.per_score)
    sheet_rows = None
    if shown is not None and shown.rows is not None:
        sheet_rows = [int(r) for r in shown.rows.of_entry]
    if term.missing_score is not None:
        labels.append("not measured")
        scores.append(term.missing_score)
        if spread is not None:
            spread.append(0.0)
        counts.append(weights.not_measured)
        if sheet_rows is not None:
            sheet_rows.append(-1 if shown.rows.missing_row is None else shown.rows.missing_row)
    x = np.arange(len(labels))
    ax = fig.add_axes([LEFT, 0.29, WIDTH, 0.58])
    k = settings.band_width
    band = k * np.asarray(spread) if spread is not None else np.zeros(len(scores))
    lo = [min(scores), 0.0, float((np.asarray(scores) - band).min())]
    hi = [max(scores), 0.0, float((np.asarray(scores) + band).max())]
    sheet_y = None
    if sheet_rows is not None:
        sheet_y = [None if r < 0 else float(shown.logodds(shown.rows.points[r], preview.per_point)) for r in sheet_rows]
        known = [v for v in sheet_y if v is not None]
        lo += known
        hi += [v + 0.15 * (max(hi) - min(lo) or 1.0) for v in known]
    strip = _reserve_strip(ax, min(lo), max(hi))
    bars = ax.bar(x, scores, width=0.55, color="0.88", edgecolor="black", linewidth=0.8, zorder=3)
    for bar, s in zip(bars, scores):
        bar.set_hatch("////" if s >= 0 else "\\\\\\\\")
    if spread is not None:
        ax.errorbar(x, scores, yerr=band, fmt="none", ecolor="black", capsize=4, linewidth=1, label=f"band: score +/- {k:g} spread", zorder=4)
    for xi, s in zip(x, scores):
        ax.text(xi - 0.3, s, f"{s:+.2f}", ha="right", va="center", fontsize=7.5, zorder=6)
    if sheet_y is not None:
        for i, (xi, y) in enumerate(zip(x, sheet_y)):
            if y is None:
                continue
            ax.plot([xi - 0.42, xi + 0.42], [y, y], label=STEPS_LABEL if i == 0 else None, **{**STEPS, "zorder": 5})
            _points_box(ax, xi + 0.3, y + 0.02 * (ax.get_ylim()[1] - ax.get_ylim()[0]), shown.rows.points[sheet_rows[i]])
    ax.axhline(0.0, color="black", linewidth=0.8)
    total = sum(counts) or 1.0
    peak = max(counts + [1e-9])
    for xi, c in zip(x, counts):
        ax.fill_between([xi - 0.5, xi + 0.5], strip[0], strip[1], color=str(1.0 - 0.75 * c / peak), linewidth=0, zorder=1, gid="patient-strip")
        ax.text(xi, (strip[0] + strip[1]) / 2, f"{c:,.0f} ({100 * c / total:.1f}%)", ha="center", va="center", fontsize=7,
                bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.6, "alpha": 0.85}, zorder=6)
    ax.text(0.01, strip[1], f"patients ({weights.source}): darker = more", transform=ax.get_yaxis_transform(), fontsize=6.2,
            va="bottom", ha="left", bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.6, "alpha": 0.85}, zorder=6)
    ax.set_xticks(x, labels, fontsize=8)
    ax.set_xlim(-0.5, len(labels) - 0.5)
    ax.set_ylabel("contribution to log-odds\n(/// raises risk, \\\\\\ lowers it)", fontsize=8)
    ax.set_yticks([t for t in ax.get_yticks() if t >= strip[1]])
    ax.tick_params(labelsize=7)
    if spread is not None or sheet_y is not None:
        ax.legend(fontsize=7, loc="upper left", framealpha=0.92).set_zorder(8)
    ax.set_title(f"{term.name}: {feature.label}", fontsize=11, loc="left")


# -- pair terms: small multiples --------------------------------------------------------------------------------


def _axis_entries(model: AdditiveModel, term: Term, which: int):
    """x positions, labels and kind of one pair axis's model entries: bin bounds for a measured feature,
    level positions otherwise."""
    feature = model.feature(term.features[which])
    axis = term.axes[which]
    if feature.kind == "continuous":
        return feature, np.asarray(axis["edges"], dtype=float), None
    return feature, None, axis_labels(model, term, which)


def _groups(model: AdditiveModel, term: Term, which: int, weights: np.ndarray, shown: TermPreview | None):
    """The panels of a pair plot: groups of the other feature's entries, each with its title. The default
    sheet's rows of that feature when there is a preview, else its levels, else four runs of bins holding about
    a quarter of the patients each."""
    feature = model.feature(term.features[which])
    n = np.shape(term.scores)[which]
    if shown is not None and shown.axes is not None:
        rows = shown.axes[which]
        return [(np.flatnonzero(rows.of_entry == r), f"{feature.label}: {text}", r) for r, text in enumerate(rows.texts)
                if (rows.of_entry == r).any()]
    labels = axis_labels(model, term, which)
    if feature.kind != "continuous" or n <= 4:
        return [(np.array([i]), f"{feature.label}: {labels[i]}", None) for i in range(n)]
    per_entry = weights.sum(axis=1 - which) if weights.sum() > 0 else np.ones(n)
    cum = np.cumsum(per_entry) / per_entry.sum()
    cut = np.searchsorted(cum, [0.25, 0.5, 0.75], side="left")
    bounds = sorted(set([0] + [int(c) + 1 for c in cut if 0 <= c < n - 1] + [n]))
    edges = [number(e, feature) for e in term.axes[which]["edges"]]  # bin i is edges[i-1] <= x < edges[i]
    out = []
    for a, b in zip(bounds[:-1], bounds[1:]):
        if a == 0:
            text = f"below {edges[b - 1]}"
        elif b == n:
            text = f"{edges[a - 1]} and above"
        else:
            text = f"{edges[a - 1]} to below {edges[b - 1]}"
        out.append((np.arange(a, b), f"{feature.label}: {text}", None))
    return out


def _pair(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings,
          shown: TermPreview | None, preview: SheetPreview | None) -> None:
    grid = np.asarray(term.scores, dtype=float)
    weights = term_weights(model, term, cohort)
    cells = np.asarray(weights.per_score, dtype=float)
    kinds = [model.feature(n).kind for n in term.features]
    # along x: the measured feature with more bins (or the first); one panel per row of the other
    along = 0 if (kinds[0] == "continuous", grid.shape[0]) >= (kinds[1] == "continuous", grid.shape[1]) else 1
    other = 1 - along
    g = grid if along == 1 else grid.T  # g[panel entry, x entry]
    w = cells if along == 1 else cells.T
    groups = _groups(model, term, other, cells, shown)
    x_feature, edges, levels = _axis_entries(model, term, along)
    name = term_label(model, term)
    title = textwrap.wrap(f"{name}: the pair's own contribution, added to each feature's own term", 95)
    fig.text(LEFT, 0.908, "\n".join(title), fontsize=10, va="top")
    caption = textwrap.wrap(
        f"Each panel draws the pair's contribution along {x_feature.label} for patients in one row of "
        f"{model.feature(term.features[other]).label}: black = patient-weighted mean over the panel's bins, grey "
        "area = their lowest to highest; thick grey steps = the default sheet's points for that row, boxed "
        "(same log-odds scale in every panel); shaded strip = patients, darker = more.", 150)
    caption_top = 0.906 - 0.017 * len(title)
    fig.text(LEFT, caption_top, "\n".join(caption), fontsize=6.5, va="top")
    n_panels = len(groups)
    cols = 1 if n_panels <= 3 else 2
    nrows = int(np.ceil(n_panels / cols))
    # the first panel's own title sits above it: start the panels below the caption's last line and that title
    top, bottom_edge = min(0.835, caption_top - 0.0105 * len(caption) - 0.024), 0.27
    gap = 0.035
    height = (top - bottom_edge - gap * (nrows - 1)) / nrows
    width = (WIDTH - 0.06 * (cols - 1)) / cols
    # one y range for all panels: the curves, their group ranges and the sheet's steps
    means, lows, highs = [], [], []
    for entries, _, _ in groups:
        ww = w[entries]
        tot = ww.sum(axis=0)
        mean = np.where(tot > 0, (g[entries] * ww).sum(axis=0) / np.where(tot > 0, tot, 1), g[entries].mean(axis=0))
        means.append(mean)
        lows.append(g[entries].min(axis=0))
        highs.append(g[entries].max(axis=0))
    lo = [min(float(v.min()) for v in lows), 0.0]
    hi = [max(float(v.max()) for v in highs), 0.0]
    step_rows = None
    if shown is not None and shown.axes is not None:
        pg = shown.grid if along == 1 else shown.grid.T  # points[panel row, x row]
        step_rows = shown.axes[along]
        lo.append(float(shown.logodds(pg.min(), preview.per_point)))
        hi.append(float(shown.logodds(pg.max(), preview.per_point)))
    hi.append(max(hi) + 0.18 * (max(hi) - min(lo) or 1.0))
    xlim = None
    if edges is not None:
        rng = x_feature.training_range
        ends = [edges[0], edges[-1]] + ([rng["min"], rng["max"]] if rng else [])
        pad = 0.06 * ((max(ends) - min(ends)) or 1.0)
        xlim = (min(ends) - pad, max(ends) + pad)
    for p, (entries, title, sheet_row) in enumerate(groups):
        r, c = divmod(p, cols)
        ax = fig.add_axes([LEFT + c * (width + 0.06), top - (r + 1) * height - r * gap, width, height])
        strip = _reserve_strip(ax, min(lo), max(hi))
        patients = w[entries].sum(axis=0)
        if edges is not None:
            xs = np.r_[xlim[0], edges, xlim[1]]
            ax.fill_between(xs, np.r_[lows[p], lows[p][-1]], np.r_[highs[p], highs[p][-1]], step="post", color="0.85", linewidth=0, zorder=1.5)
            ax.plot(xs, np.r_[means[p], means[p][-1]], drawstyle="steps-post", color="black", linewidth=1.4, zorder=3)
            _strip(ax, xs, patients / np.maximum(np.diff(xs), 1e-12), strip, f"{patients.sum():,.0f} patients")
            if step_rows is not None and sheet_row is not None:
                sx, sy, sidx = sheet_steps(step_rows, pg[sheet_row], preview.per_point, shown.shift, *xlim)
                ax.plot(sx, sy, **STEPS)
                for row, a, b in _row_spans(sx, sidx):
                    _points_box(ax, (a + b) / 2, sy[np.searchsorted(sx, a)] + 0.03 * (ax.get_ylim()[1] - ax.get_ylim()[0]), pg[sheet_row][row])
            ax.set_xlim(*xlim)
            _mark_range(ax, x_feature.training_range, *xlim, label=False)
        else:
            xs = np.arange(len(levels))
            for xi in xs:
                ax.fill_between([xi - 0.3, xi + 0.3], lows[p][xi], highs[p][xi], color="0.85", linewidth=0, zorder=1.5)
                ax.plot([xi - 0.3, xi + 0.3], [means[p][xi]] * 2, color="black", linewidth=1.4, zorder=3)
            peak = max(float(patients.max()), 1e-9)
            for xi, n in zip(xs, patients):
                ax.fill_between([xi - 0.5, xi + 0.5], strip[0], strip[1], color=str(1.0 - 0.75 * n / peak), linewidth=0, zorder=1, gid="patient-strip")
                ax.text(xi, (strip[0] + strip[1]) / 2, f"{n:,.0f}", ha="center", va="center", fontsize=6, zorder=6,
                        bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.4, "alpha": 0.85})
            if step_rows is not None and sheet_row is not None:
                for xi in xs:
                    row = int(step_rows.of_entry[xi])
                    if row >= 0:
                        y = float(shown.logodds(pg[sheet_row][row], preview.per_point))
                        ax.plot([xi - 0.42, xi + 0.42], [y, y], **STEPS)
                        _points_box(ax, xi + 0.3, y + 0.03 * (ax.get_ylim()[1] - ax.get_ylim()[0]), pg[sheet_row][row])
            ax.set_xticks(xs, levels, fontsize=6.5)
            ax.set_xlim(-0.5, len(levels) - 0.5)
        ax.axhline(0.0, color="black", linewidth=0.6, linestyle=(0, (1, 2)))
        ax.set_yticks([t for t in ax.get_yticks() if t >= strip[1]])
        ax.tick_params(labelsize=6.5)
        ax.set_title(title, fontsize=8, loc="left")
        if c == 0:
            ax.set_ylabel("log-odds", fontsize=7)
        if r == nrows - 1 or p + cols >= n_panels:
            ax.set_xlabel(_title(x_feature), fontsize=7)
