"""Edits a methodologist makes to a fitted model without retraining, each returning a new model and a record.

- remove an effect: the term contributes nothing; every other term keeps its fitted scores (they were
  fitted with this variable present, so they have not absorbed its effect, and must not be refitted without it);
- force a direction: the closest rising (or falling) shape in weighted least squares (isotonic projection,
  weights = patients per bin), which keeps the term's weighted mean;
- hold beyond a value: above (or below) a value the shape keeps the score it has at that value;
- pool levels: chosen levels of a categorical term share their patient-weighted mean score;
- declare: a feature's expected direction or its role (a care-process marker), read by the review flags.

The record's `action` names the edit in the same words as the command's options (remove_effect,
force_direction, hold, pool_levels, declare).

Functions never change the model they are given. The record says what was done in words and figures; the
command adds who, when, why and the cost.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel, Term
from scorecard.review.isotonic import isotonic_projection
from scorecard.review.weights import term_weights
from scorecard.sheet.printed import term_label

DIRECTIONS = ("increasing", "decreasing")
DECLARATIONS = {
    "increasing": ("direction", "increasing"),
    "decreasing": ("direction", "decreasing"),
    "unordered": ("direction", None),
    "care_process": ("role", "care_process"),
    "measurement": ("role", "measurement"),
}


def _round(x: float) -> float:
    return float(f"{x:.6g}")


def remove_effect(model: AdditiveModel, term_name: str) -> tuple[AdditiveModel, dict]:
    edited = model.copy()
    term = edited.term(term_name)
    before = np.asarray(term.scores, dtype=float)
    term.scores = np.zeros_like(before).tolist()
    if term.spread is not None:
        term.spread = np.zeros_like(np.asarray(term.spread, dtype=float)).tolist()
    if term.missing_score is not None:
        term.missing_score = 0.0
    largest = float(np.max(np.abs(before))) if before.size else 0.0
    # a pair is named in words where it is read (the record's "term" keeps the JSON name the option took)
    named = term_label(model, term) if term.kind == "pair" else f"term {term_name!r}"
    what = (f"removed the effect of {named}: every score set to 0 (largest removed |score| {largest:.3g} "
            "log-odds); other terms unchanged")
    return edited, {"action": "remove_effect", "term": term_name, "what": what}


def force_direction(
    model: AdditiveModel, term_name: str, direction: str, cohort: pd.DataFrame | None = None
) -> tuple[AdditiveModel, dict]:
    if direction not in DIRECTIONS:
        raise UserError(f"--force-direction {term_name}={direction}: direction must be increasing or decreasing")
    edited = model.copy()
    term = edited.term(term_name)
    if term.kind == "categorical":
        raise UserError(
            f"--force-direction {term_name}: term is categorical and its levels have no order; use --pool-levels instead"
        )
    if term.kind == "pair":
        raise UserError(f"--force-direction {term_name}: a pair term has no single direction; edit its one-feature terms instead")
    weights = term_weights(model, term, cohort)
    before = np.asarray(term.scores, dtype=float)
    after = isotonic_projection(before, weights.per_score, increasing=direction == "increasing")
    term.scores = after.tolist()
    feature = edited.feature(term.feature)
    feature.direction = direction
    moved = float(np.max(np.abs(after - before))) if before.size else 0.0
    what = (
        f"forced term {term_name!r} to be {direction}: its closest {direction} shape (weighted isotonic regression, "
        f"weights: {weights.source}); "
        f"largest change {moved:.3g} log-odds; declared {feature.name} {direction}"
    )
    record = {"action": "force_direction", "term": term_name, "direction": direction, "weights": weights.source, "what": what}
    return edited, record


HOLD_OPTIONS = {"above": "--hold-above", "below": "--hold-below"}


def hold_beyond(model: AdditiveModel, term_name: str, lo: float | None = None, hi: float | None = None) -> tuple[AdditiveModel, dict]:
    """Values below `lo` score as `lo` does and values above `hi` as `hi` does (either may be None)."""
    option = HOLD_OPTIONS["below" if hi is None else "above"]
    if lo is not None and hi is not None and not lo < hi:
        raise UserError(f"{option} {term_name}: the value held below ({lo:g}) must be under the value held above ({hi:g})")
    edited = model.copy()
    term = edited.term(term_name)
    if term.kind != "continuous":
        raise UserError(f"{option} {term_name}: only a measurement on a scale can be held beyond a value; term is {term.kind}")
    feature = edited.feature(term.feature)
    low_end, high_end = _hold_limits(term, feature.training_range)
    for side, value in (("below", lo), ("above", hi)):
        if value is not None and not low_end <= value <= high_end:
            raise UserError(
                f"{HOLD_OPTIONS[side]} {term_name}={value:g}: {value:g} is outside the training range {low_end:g} to "
                f"{high_end:g} of {feature.name}; choose a value inside it"
            )
    before = edited.copy().term(term_name)
    if term.shape == "step":
        _hold_step(term, lo, hi)
    else:
        _hold_linear(term, lo, hi)
    shift = _recentre(edited, term)
    # in words, with the numbers: the reader of the history should not have to decode "LO:HI" syntax
    held = [f"values below {lo:g} score as {lo:g}"] if lo is not None else []
    held += [f"values above {hi:g} score as {hi:g}"] if hi is not None else []
    what = f"held term {term_name!r}: " + " and ".join(held)
    if shift:
        what += f"; re-centred on the training counts (intercept moved by {shift:+.3g})"
    moved = _largest_change(before, term)
    what += f"; largest change {moved:.3g} log-odds"
    record = {"action": "hold", "term": term_name, "below": lo, "above": hi, "what": what, "intercept_shift": _round(shift)}
    return edited, record


def _hold_limits(term: Term, training_range: dict | None) -> tuple[float, float]:
    if training_range:
        return float(training_range["min"]), float(training_range["max"])
    if term.edges:
        return float(term.edges[0]), float(term.edges[-1])
    raise UserError(f"hold {term.name}: the term has a single bin and no training range; there is nothing to hold")


def _hold_step(term: Term, lo: float | None, hi: float | None) -> None:
    edges = np.asarray(term.edges, dtype=float)
    lists = [k for k in ("scores", "spread") if getattr(term, k) is not None]
    for key in lists:
        values = np.asarray(getattr(term, key), dtype=float)
        if lo is not None:
            b = int(np.searchsorted(edges, lo, side="right"))
            values[:b] = values[b]
        if hi is not None:
            b = int(np.searchsorted(edges, hi, side="right"))
            values[b + 1 :] = values[b]
        setattr(term, key, values.tolist())


def _hold_linear(term: Term, lo: float | None, hi: float | None) -> None:
    knots = list(map(float, term.edges))
    for bound in (lo, hi):
        if bound is not None and bound not in knots and knots[0] < bound < knots[-1]:
            # a knot at the bound makes "constant beyond the bound" exact for a piecewise-linear shape
            at = int(np.searchsorted(knots, bound))
            for key in ("scores", "spread"):
                vals = getattr(term, key)
                if vals is not None:
                    vals.insert(at, float(np.interp(bound, knots, vals)))
            if term.counts is not None:
                term.counts.insert(at, 0.0)
            knots.insert(at, bound)
    term.edges = knots
    k = np.asarray(knots)
    for key in ("scores", "spread"):
        vals = getattr(term, key)
        if vals is None:
            continue
        v = np.asarray(vals, dtype=float)
        if lo is not None:
            v[k < lo] = np.interp(lo, k, v)
        if hi is not None:
            v[k > hi] = np.interp(hi, k, v)
        setattr(term, key, v.tolist())


def _recentre(model: AdditiveModel, term: Term) -> float:
    """Keep the term's training-weighted mean at 0 (DESIGN: terms are centred), moving the offset to the intercept."""
    if term.counts is None:
        return 0.0
    counts = np.asarray(term.counts, dtype=float)
    scores = np.asarray(term.scores, dtype=float)
    total = counts.sum()
    weighted = float((counts * scores).sum())
    if term.missing_score is not None and term.missing_count:
        total += term.missing_count
        weighted += term.missing_count * term.missing_score
    if total <= 0:
        return 0.0
    shift = weighted / total
    if abs(shift) < 1e-12:
        return 0.0
    term.scores = (scores - shift).tolist()
    if term.missing_score is not None:
        term.missing_score = term.missing_score - shift
    model.intercept = model.intercept + shift
    return shift


def _largest_change(before: Term, after: Term) -> float:
    """Largest |change| of the term over the knots or bins of both versions (linear shapes gain knots)."""
    if after.shape == "linear":
        grid = np.union1d(before.edges, after.edges)
        return float(np.max(np.abs(np.interp(grid, after.edges, after.scores) - np.interp(grid, before.edges, before.scores))))
    return float(np.max(np.abs(np.asarray(after.scores) - np.asarray(before.scores))))


def pool_levels(
    model: AdditiveModel, term_name: str, levels: list[str], cohort: pd.DataFrame | None = None
) -> tuple[AdditiveModel, dict]:
    edited = model.copy()
    term = edited.term(term_name)
    if term.kind != "categorical":
        hint = "; a flag has only two values, use --remove-effect instead" if term.kind == "flag" else ""
        raise UserError(f"--pool-levels {term_name}: only categorical terms have levels to pool; term is {term.kind}{hint}")
    for level in levels:
        if level not in term.levels:
            raise UserError(
                f"--pool-levels {term_name}: level {level!r} is not in the term; its levels are {', '.join(term.levels)}"
            )
    if len(set(levels)) != len(levels):
        raise UserError(f"--pool-levels {term_name}: a level is listed twice")
    weights = term_weights(model, term, cohort)
    idx = [term.levels.index(lv) for lv in levels]
    w = weights.per_score[idx]
    if w.sum() <= 0:
        w = np.ones(len(idx))
    for key in ("scores", "spread"):
        vals = getattr(term, key)
        if vals is None:
            continue
        v = np.asarray(vals, dtype=float)
        v[idx] = float(np.average(v[idx], weights=w))
        setattr(term, key, v.tolist())
    score = term.scores[idx[0]]
    what = (
        f"pooled levels {', '.join(levels)} of term {term_name!r} at their patient-weighted mean score {score:.4g} "
        f"(weights: {weights.source})"
    )
    return edited, {"action": "pool_levels", "term": term_name, "levels": levels, "weights": weights.source, "what": what}


def declare(model: AdditiveModel, feature_name: str, value: str) -> tuple[AdditiveModel, dict]:
    edited = model.copy()
    try:
        feature = edited.feature(feature_name)
    except KeyError:
        known = ", ".join(f.name for f in edited.features)
        raise UserError(f"--declare {feature_name}: feature is not in the model; known features: {known}") from None
    attribute, setting = DECLARATIONS[value]
    if attribute == "direction" and setting is not None and feature.kind == "categorical":
        raise UserError(f"--declare {feature_name}={value}: a categorical feature has no order, so no direction")
    setattr(feature, attribute, setting)
    if attribute == "direction":
        what = f"declared feature {feature_name!r} " + (f"{setting} (risk should only {'rise' if setting == 'increasing' else 'fall'} with it)" if setting else "unordered (no direction)")
    else:
        what = f"declared feature {feature_name!r} a {'care-process marker' if setting == 'care_process' else 'measurement'}"
    return edited, {"action": "declare", "feature": feature_name, attribute: setting, "what": what}
