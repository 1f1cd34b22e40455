"""Ranking terms by importance: the mean absolute contribution to a patient's log-odds.

On a cohort this is the average of |contribution| over its patients; without one it is the same average
taken over the model's training counts per bin (the population the model was centred on).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.model.document import AdditiveModel
from scorecard.model.predict import contributions
from scorecard.review.weights import term_weights


@dataclass
class TermImportance:
    term: str
    mean_abs: float  # mean |contribution| in log-odds
    largest: float  # largest |score| anywhere in the term
    source: str  # cohort | training counts | equal


def rank_terms(model: AdditiveModel, cohort: pd.DataFrame | None = None) -> list[TermImportance]:
    """Terms from most to least important (ties keep model order)."""
    out = []
    if cohort is not None:
        parts, _ = contributions(model, cohort)
    for term in model.terms:
        largest = _largest(term)
        if cohort is not None:
            mean_abs = float(np.abs(parts[term.name].to_numpy()).mean())
            source = "cohort"
        else:
            w = term_weights(model, term)
            scores = np.abs(np.asarray(term.scores, dtype=float)).ravel()
            weights = w.per_score.ravel()
            total = weights.sum()
            weighted = float((scores * weights).sum())
            if term.missing_score is not None and w.not_measured:
                total += w.not_measured
                weighted += abs(term.missing_score) * w.not_measured
            mean_abs = weighted / total if total > 0 else 0.0
            source = w.source
        out.append(TermImportance(term.name, mean_abs, largest, source))
    order = sorted(range(len(out)), key=lambda i: (-out[i].mean_abs, i))
    return [out[i] for i in order]


def _largest(term) -> float:
    values = np.abs(np.asarray(term.scores, dtype=float)).ravel()
    best = float(values.max()) if values.size else 0.0
    if term.missing_score is not None:
        best = max(best, abs(term.missing_score))
    return best
