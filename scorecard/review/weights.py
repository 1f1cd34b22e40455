"""How many patients sit under each bin, level or knot of a term: from a cohort, or the model's own counts.

Edits (isotonic projection, pooling levels) and the ranking by spread of risk weight a shape by where the patients
are. With a cohort the weights are counted from it; without one, the training counts stored in the model are
used; a term with neither gets equal weights, and the caller is told.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.model.document import AdditiveModel, Term
from scorecard.model.predict import axis_bins, feature_values, flag_bins, level_bins, step_bins


@dataclass
class TermWeights:
    """Patients per score entry (same shape as `term.scores`), per not-measured, and where they came from."""

    per_score: np.ndarray
    not_measured: float
    source: str  # "cohort" | "training counts" | "equal"


def term_weights(model: AdditiveModel, term: Term, cohort: pd.DataFrame | None = None) -> TermWeights:
    if cohort is not None:
        return _cohort_weights(model, term, cohort)
    shape = np.shape(term.scores)
    if term.counts is not None:
        return TermWeights(np.asarray(term.counts, dtype=float).reshape(shape), float(term.missing_count or 0.0), "training counts")
    return TermWeights(np.ones(shape), 0.0, "equal")


def _cohort_weights(model: AdditiveModel, term: Term, cohort: pd.DataFrame) -> TermWeights:
    shape = np.shape(term.scores)
    if term.kind == "pair":
        idx = []
        missing = np.zeros(len(cohort), dtype=bool)
        for name, axis in zip(term.features, term.axes):
            b = axis_bins(axis, model.feature(name), feature_values(cohort, model.feature(name)))
            missing |= b < 0
            idx.append(b)
        grid = np.zeros(shape)
        np.add.at(grid, (idx[0][~missing], idx[1][~missing]), 1.0)
        return TermWeights(grid, float(missing.sum()), "cohort")
    x = feature_values(cohort, model.feature(term.feature))
    n = shape[0]
    if term.kind == "continuous" and term.shape == "linear":
        return _knot_weights(np.asarray(term.edges, dtype=float), x)
    if term.kind == "continuous":
        idx = step_bins(term.edges, x)
    elif term.kind == "flag":
        idx = flag_bins(x)
    else:
        idx = level_bins(term.levels, x)
    seen = idx >= 0
    counts = np.bincount(idx[seen], minlength=n).astype(float)
    return TermWeights(counts, float((idx == -1).sum()), "cohort")


def _knot_weights(knots: np.ndarray, x: np.ndarray) -> TermWeights:
    """Each value splits its weight between the two knots around it, as linear interpolation does."""
    missing = np.isnan(x)
    v = np.clip(x[~missing], knots[0], knots[-1])
    right = np.clip(np.searchsorted(knots, v, side="right"), 1, len(knots) - 1)
    left = right - 1
    share = (v - knots[left]) / (knots[right] - knots[left])
    weights = np.zeros(len(knots))
    np.add.at(weights, left, 1.0 - share)
    np.add.at(weights, right, share)
    return TermWeights(weights, float(missing.sum()), "cohort")
