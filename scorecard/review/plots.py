"""Matplotlib pages for the review: a summary page and one page per term.

Readable in black and white: lines differ by style, areas by hatching, heat-map cells carry their numbers, and
colour is never the only carrier of meaning. Every page carries the cautions and the model fingerprint.
"""

from __future__ import annotations

import textwrap

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from scorecard.invented import add_matplotlib_mark, is_invented
from scorecard.cautions import cautions
from scorecard.model.document import AdditiveModel, Term
from scorecard.model.predict import feature_values
from scorecard.review.entries import axis_labels, entry_labels
from scorecard.review.flags import Flag, FlagSettings
from scorecard.review.importance import TermImportance
from scorecard.review.weights import term_weights

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


def summary_page(
    model: AdditiveModel,
    ranking: list[TermImportance] | None,
    flags: list[Flag],
    settings: FlagSettings,
    population_note: str,
) -> tuple[Figure, list[Flag]]:
    """The ranking chart (first page only) and as many flags as fit; returns the page and the flags left over."""
    fig = new_page()
    top = 0.575 if ranking is not None else 0.90
    if ranking is not None:
        _ranking_chart(fig, ranking, flags, population_note)
        declared = declarations_text(model)
        fig.text(LEFT, top, "\n".join(textwrap.wrap(declared, 150)), fontsize=6.5, va="top")
        top -= 0.012 * (1 + len(declared) // 150) + 0.008
    return fig, _flag_list(fig, flags, settings, top, continued=ranking is None)


def declarations_text(model: AdditiveModel) -> str:
    """What the methodologist has declared, which the direction and care-process flags rely on."""
    directions = [f"{f.name} {f.direction}" for f in model.features if f.direction and f.name in model.used_features]
    care = [f.name for f in model.features if f.role == "care_process" and f.name in model.used_features]
    return (
        "Declared directions: " + (", ".join(directions) if directions else "none")
        + ". Care-process markers: " + (", ".join(care) if care else "none")
        + ". (Declare with scorecard edit --declare FEATURE=increasing|decreasing|care_process.)"
    )


def _ranking_chart(fig: Figure, ranking: list[TermImportance], flags: list[Flag], population_note: str) -> None:
    ax = fig.add_axes([LEFT + 0.15, 0.61, WIDTH - 0.15, 0.27])
    fig.text(LEFT, 0.895, f"Terms ranked by importance: mean |contribution| to the log-odds, {population_note}", fontsize=9, va="bottom")
    names = [r.term for r in ranking][::-1]
    values = [r.mean_abs for r in ranking][::-1]
    flagged = {f.term for f in flags}
    bars = ax.barh(range(len(names)), values, color="0.75", edgecolor="black", linewidth=0.6)
    for bar, name in zip(bars, names):
        if name in flagged:
            bar.set_hatch("////")
    ax.set_yticks(range(len(names)), [f"{n}  (flagged)" if n in flagged else n for n in names], fontsize=7)
    ax.set_xlabel("mean |contribution| (log-odds); hatched bars have flags", fontsize=7)
    ax.tick_params(axis="x", labelsize=7)
    for i, r in enumerate(ranking[::-1]):
        ax.text(r.mean_abs, i, f" {r.mean_abs:.3f} (largest {r.largest:.2f})", va="center", fontsize=6)
    ax.set_xlim(0, max(values + [1e-9]) * 1.45)
    ax.spines[["top", "right"]].set_visible(False)



def _flag_list(fig: Figure, flags: list[Flag], settings: FlagSettings, top: float, continued: bool) -> list[Flag]:
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
        wrapped = textwrap.wrap(f"[{flag.term}] {flag.message}", 128)
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
    importance: TermImportance,
    flags: list[Flag],
    settings: FlagSettings,
) -> Figure:
    fig = new_page()
    if term.kind == "continuous":
        _continuous(fig, model, term, cohort, settings)
    elif term.kind == "pair":
        _pair(fig, model, term, cohort, settings)
    else:
        _levels(fig, model, term, cohort, settings)
    notes = [
        f"Importance: mean |contribution| {importance.mean_abs:.3f} log-odds ({importance.source}); largest |score| {importance.largest:.2f}.",
    ]
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


def _continuous(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings) -> None:
    feature = model.feature(term.feature)
    rng = feature.training_range
    values = feature_values(cohort, feature) if cohort is not None else None
    xlo, xhi = _x_limits(term, rng, values)
    has_missing = term.missing_score is not None
    shape_ax = fig.add_axes([LEFT, 0.52, WIDTH - (0.11 if has_missing else 0), 0.36])
    dens_ax = fig.add_axes([LEFT, 0.29, WIDTH - (0.11 if has_missing else 0), 0.17], sharex=shape_ax)
    scores = np.asarray(term.scores, dtype=float)
    spread = np.asarray(term.spread, dtype=float) if term.spread is not None else None
    edges = list(term.edges or [])
    if term.shape == "linear":
        xs = np.r_[xlo, edges, xhi]
        ys = np.r_[scores[0], scores, scores[-1]]
        band = np.r_[spread[0], spread, spread[-1]] if spread is not None else None
        step = None
    else:
        xs = np.r_[xlo, edges, xhi]
        ys = np.r_[scores, scores[-1]]
        band = np.r_[spread, spread[-1]] if spread is not None else None
        step = "post"
    if band is not None:
        k = settings.band_width
        shape_ax.fill_between(xs, ys - k * band, ys + k * band, step=step, facecolor="0.88", edgecolor="0.35", hatch="////", linewidth=0.0, label=f"band: score +/- {k:g} spread")
    shape_ax.plot(xs, ys, color="black", linewidth=1.8, drawstyle="steps-post" if step else "default", label="shape (log-odds)")
    shape_ax.axhline(0.0, color="black", linewidth=0.6, linestyle=(0, (1, 2)), label="population average (0)")
    _mark_range(shape_ax, rng, xlo, xhi, label=True)
    shape_ax.set_ylabel("contribution to log-odds", fontsize=8)
    shape_ax.set_xlim(xlo, xhi)
    shape_ax.tick_params(labelsize=7, labelbottom=False)
    shape_ax.legend(fontsize=6.5, loc="best", frameon=True, framealpha=0.9)
    shape_ax.set_title(f"{term.name}: {feature.label}" + (f" ({feature.unit})" if feature.unit else ""), fontsize=11, loc="left")
    if has_missing:
        miss_ax = fig.add_axes([LEFT + WIDTH - 0.08, 0.52, 0.08, 0.36], sharey=shape_ax)
        ms = term.missing_score
        err = settings.band_width * spread.mean() if spread is not None else None
        miss_ax.errorbar([0], [ms], yerr=None if err is None else [[err], [err]], fmt="D", color="black", capsize=3)
        miss_ax.axhline(0.0, color="black", linewidth=0.6, linestyle=(0, (1, 2)))
        miss_ax.set_xticks([0], ["not\nmeasured"], fontsize=7)
        miss_ax.set_xlim(-1, 1)
        miss_ax.tick_params(labelleft=False, labelsize=7)
        miss_ax.text(0, ms, f"  {ms:+.2f}", fontsize=7, va="bottom")
    # density underneath: patients per unit of the feature, over the term's own bins when they are few enough
    # to read (so integer-valued measurements do not alias), else over 40 equal bins
    if values is not None or (term.counts is not None and term.shape == "step"):
        if values is not None:
            seen = np.clip(values[np.isfinite(values)], xlo, xhi)
            bounds = np.r_[xlo, edges, xhi] if 0 < len(edges) <= 150 and term.shape == "step" else np.linspace(xlo, xhi, 41)
            counts, _ = np.histogram(seen, bins=bounds)
            source = "cohort"
        else:
            bounds = np.r_[xlo, edges, xhi]
            counts = np.asarray(term.counts, dtype=float)
            source = "training counts"
        widths = np.diff(bounds)
        heights = np.where(widths > 0, counts / np.where(widths > 0, widths, 1), 0)
        dens_ax.bar(bounds[:-1], heights, width=widths, align="edge", color="0.8", edgecolor="black", linewidth=0.4)
        dens_ax.set_ylabel(f"patients per unit\n({source})", fontsize=7)
    elif term.counts is not None:
        dens_ax.vlines(edges, 0, term.counts, color="black", linewidth=2)
        dens_ax.set_ylabel("patients near knot\n(training counts)", fontsize=7)
    else:
        dens_ax.text(0.5, 0.5, "no cohort and no training counts: density unknown", transform=dens_ax.transAxes, ha="center", fontsize=8)
    _mark_range(dens_ax, rng, xlo, xhi, label=False)
    dens_ax.set_xlabel(f"{feature.label}" + (f" ({feature.unit})" if feature.unit else ""), fontsize=8)
    dens_ax.tick_params(labelsize=7)
    dens_ax.spines[["top", "right"]].set_visible(False)
    if has_missing:
        n_missing = term.missing_count if values is None else float(np.isnan(values).sum())
        if n_missing is not None:
            fig.text(LEFT + WIDTH - 0.04, 0.40, f"not measured:\n{n_missing:g} patients", fontsize=7, ha="center")


def _mark_range(ax, rng: dict | None, xlo: float, xhi: float, label: bool) -> None:
    if not rng:
        return
    lo, hi = rng["min"], rng["max"]
    kwargs = {"facecolor": "none", "edgecolor": "0.55", "hatch": "xx", "linewidth": 0.0}
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


def _levels(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings) -> None:
    feature = model.feature(term.feature)
    labels = entry_labels(model, term)
    scores = list(np.asarray(term.scores, dtype=float))
    spread = list(np.asarray(term.spread, dtype=float)) if term.spread is not None else None
    weights = term_weights(model, term, cohort)
    counts = list(weights.per_score)
    if term.missing_score is not None:
        labels.append("not measured")
        scores.append(term.missing_score)
        if spread is not None:
            spread.append(0.0)
        counts.append(weights.not_measured)
    x = np.arange(len(labels))
    shape_ax = fig.add_axes([LEFT, 0.52, WIDTH, 0.36])
    hatches = ["////" if s >= 0 else "\\\\\\\\" for s in scores]
    bars = shape_ax.bar(x, scores, color="0.85", edgecolor="black", linewidth=0.8)
    for bar, h in zip(bars, hatches):
        bar.set_hatch(h)
    if spread is not None:
        k = settings.band_width
        shape_ax.errorbar(x, scores, yerr=k * np.asarray(spread), fmt="none", ecolor="black", capsize=4, linewidth=1, label=f"band: score +/- {k:g} spread")
        shape_ax.legend(fontsize=7)
    for xi, s in zip(x, scores):
        shape_ax.text(xi, s, f"{s:+.2f}", ha="center", va="bottom" if s >= 0 else "top", fontsize=8)
    shape_ax.axhline(0.0, color="black", linewidth=0.8)
    shape_ax.set_xticks(x, labels, fontsize=8)
    shape_ax.set_ylabel("contribution to log-odds\n(/// raises risk, \\\\\\ lowers it)", fontsize=8)
    shape_ax.tick_params(labelsize=7)
    pad = 0.15 * (max(np.abs(scores).max(), 0.1))
    shape_ax.set_ylim(min(min(scores), 0) - pad - (settings.band_width * max(spread) if spread else 0), max(max(scores), 0) + pad + (settings.band_width * max(spread) if spread else 0))
    shape_ax.set_title(f"{term.name}: {feature.label}", fontsize=11, loc="left")
    dens_ax = fig.add_axes([LEFT, 0.29, WIDTH, 0.17])
    dens_ax.bar(x, counts, color="0.8", edgecolor="black", linewidth=0.6)
    total = sum(counts) or 1.0
    for xi, c in zip(x, counts):
        dens_ax.text(xi, c, f"{c:.0f} ({100 * c / total:.1f}%)", ha="center", va="bottom", fontsize=7)
    dens_ax.set_xticks(x, labels, fontsize=8)
    dens_ax.set_ylabel(f"patients\n({weights.source})", fontsize=7)
    dens_ax.set_ylim(0, max(counts + [1]) * 1.25)
    dens_ax.tick_params(labelsize=7)
    dens_ax.spines[["top", "right"]].set_visible(False)


# -- pair terms --------------------------------------------------------------------------------------------


def _pair(fig: Figure, model: AdditiveModel, term: Term, cohort: pd.DataFrame | None, settings: FlagSettings) -> None:
    grid = np.asarray(term.scores, dtype=float)
    rows, cols = grid.shape
    row_labels = axis_labels(model, term, 0)
    col_labels = axis_labels(model, term, 1)
    weights = term_weights(model, term, cohort)
    heat_ax = fig.add_axes([LEFT + 0.1, 0.30, WIDTH - 0.26, 0.45])
    limit = float(np.abs(grid).max()) or 1.0
    mesh = heat_ax.pcolormesh(np.arange(cols + 1), np.arange(rows + 1), grid, cmap="cividis", vmin=-limit, vmax=limit, edgecolors="white", linewidth=0.5)
    if term.spread is not None:
        # cells whose band (score +/- k spread) reaches 0 are hatched, so they read as uncertain in black and white
        band = settings.band_width * np.asarray(term.spread, dtype=float)
        unsure = (band >= np.abs(grid)) & (np.abs(grid) >= settings.large_effect)
        for i, j in zip(*np.nonzero(unsure)):
            heat_ax.add_patch(Rectangle((j, i), 1, 1, fill=False, hatch="////", edgecolor="0.6", linewidth=0))
        fig.text(LEFT, 0.86, f"Hatched cells: a large effect (|score| >= {settings.large_effect:g}) whose band (score +/- {settings.band_width:g} spread) reaches 0.", fontsize=7.5, va="bottom")
    for i in range(rows):
        for j in range(cols):
            value = grid[i, j]
            shade = mesh.cmap(mesh.norm(value))
            light = 0.299 * shade[0] + 0.587 * shade[1] + 0.114 * shade[2] > 0.5
            heat_ax.text(j + 0.5, i + 0.5, f"{value:+.2f}", ha="center", va="center", fontsize=6.5 if cols > 6 else 8, color="black" if light else "white")
    heat_ax.set_xticks(np.arange(cols) + 0.5, col_labels, fontsize=6.5, rotation=45, ha="right")
    heat_ax.set_yticks(np.arange(rows) + 0.5, row_labels, fontsize=6.5)
    f0, f1 = (model.feature(n) for n in term.features)
    heat_ax.set_xlabel(f"{f1.label}" + (f" ({f1.unit})" if f1.unit else ""), fontsize=8)
    heat_ax.set_ylabel(f"{f0.label}" + (f" ({f0.unit})" if f0.unit else ""), fontsize=8)
    cbar_ax = fig.add_axes([LEFT + WIDTH - 0.01, 0.30, 0.015, 0.45])
    fig.colorbar(mesh, cax=cbar_ax).set_label("contribution to log-odds (numbers in cells)", fontsize=7)
    cbar_ax.tick_params(labelsize=6)
    top = fig.add_axes([LEFT + 0.1, 0.76, WIDTH - 0.26, 0.09], sharex=heat_ax)
    top.bar(np.arange(cols) + 0.5, weights.per_score.sum(axis=0), width=0.9, color="0.8", edgecolor="black", linewidth=0.5)
    top.tick_params(labelbottom=False, labelsize=6)
    top.set_ylabel(f"patients\n({weights.source})", fontsize=6.5)
    top.spines[["top", "right"]].set_visible(False)
    side = fig.add_axes([LEFT + WIDTH - 0.155, 0.30, 0.09, 0.45], sharey=heat_ax)
    side.barh(np.arange(rows) + 0.5, weights.per_score.sum(axis=1), height=0.9, color="0.8", edgecolor="black", linewidth=0.5)
    side.tick_params(labelleft=False, labelsize=6)
    side.set_xlabel("patients", fontsize=6.5)
    side.spines[["top", "right"]].set_visible(False)
    fig.text(LEFT, 0.875, f"{term.name}: pair of {f0.name} and {f1.name}, added to their own terms", fontsize=11, va="bottom")
