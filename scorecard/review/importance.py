"""Ranking terms by their effect on the sheet: the points range a default sheet gives them, then the spread
of risk they make across patients.

- **points range**: highest minus lowest points the term can give on the default sheet (`preview`, made by
  the quantize stage); a term the sheet leaves off has 0;
- **spread of risk**: how far the term alone moves the risk of an average patient between the patients at its
  5th and 95th percentile: logistic(m + q95) - logistic(m + q05), where q are the weighted percentiles of the
  term's contribution over the patients (the cohort's, or without one the model's training counts per bin) and
  m is their mean log-odds. It ranks terms without a preview and breaks ties of the points range.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.model.document import AdditiveModel
from scorecard.model.predict import contributions, logistic
from scorecard.review.weights import term_weights
from scorecard.sheet.printed import term_label

LOW, HIGH = 5.0, 95.0  # the percentiles of a term's contribution the spread of risk runs between


@dataclass
class TermEffect:
    term: str
    label: str  # the printed name (a pair in words)
    points_range: int | None  # on the default sheet; None without a preview
    left_off: str | None  # why the default sheet leaves the term off
    low: float  # 5th percentile of the contribution over patients (log-odds)
    high: float  # 95th percentile
    risk_spread: float  # logistic(m + high) - logistic(m + low), a fraction
    largest: float  # largest |score| anywhere in the term
    source: str  # cohort | training counts | equal


def weighted_percentile(values: np.ndarray, weights: np.ndarray, q: float) -> float:
    """The smallest value whose cumulative weight reaches q % of the total (the inverted empirical
    distribution function, common practice); 0 when there is no weight."""
    keep = np.asarray(weights, dtype=float) > 0
    v, w = np.asarray(values, dtype=float)[keep], np.asarray(weights, dtype=float)[keep]
    if v.size == 0:
        return 0.0
    order = np.argsort(v, kind="stable")
    cum = np.cumsum(w[order])
    at = int(np.searchsorted(cum, q / 100.0 * cum[-1] * (1 - 1e-12), side="left"))
    return float(v[order][min(at, v.size - 1)])


def rank_terms(model: AdditiveModel, cohort: pd.DataFrame | None = None, preview=None) -> list[TermEffect]:
    """Terms from largest to smallest effect on the sheet (ties keep model order). `preview` is a
    `scorecard.review.preview.SheetPreview`; without one (or when it failed) terms rank by spread of risk."""
    out = []
    if cohort is not None:
        parts, _ = contributions(model, cohort)
        mean_logodds = float(model.intercept + parts.to_numpy(dtype=float).sum(axis=1).mean()) if len(parts) else model.intercept
    else:
        mean_logodds = float(model.intercept)  # every term is centred on the training counts
    for term in model.terms:
        if cohort is not None:
            values = parts[term.name].to_numpy(dtype=float)
            weights = np.ones_like(values)
            source = "cohort"
        else:
            w = term_weights(model, term)
            values = np.asarray(term.scores, dtype=float).ravel()
            weights = w.per_score.ravel()
            if term.missing_score is not None and w.not_measured:
                values = np.r_[values, term.missing_score]
                weights = np.r_[weights, w.not_measured]
            source = w.source
        low, high = weighted_percentile(values, weights, LOW), weighted_percentile(values, weights, HIGH)
        spread = float(logistic(np.array([mean_logodds + high]))[0] - logistic(np.array([mean_logodds + low]))[0])
        shown = preview.terms.get(term.name) if preview is not None and preview.ok else None
        out.append(TermEffect(term.name, term_label(model, term), None if shown is None else shown.points_range,
                              None if shown is None else shown.left_off, low, high, spread, _largest(term), source))
    order = sorted(range(len(out)), key=lambda i: (-(out[i].points_range or 0), -out[i].risk_spread, i))
    return [out[i] for i in order]


def _largest(term) -> float:
    values = np.abs(np.asarray(term.scores, dtype=float)).ravel()
    best = float(values.max()) if values.size else 0.0
    if term.missing_score is not None:
        best = max(best, abs(term.missing_score))
    return best
