"""Flags a reviewer must look at before a model goes on paper.

Each check is a plain function of one term (and, where it matters, the patients under it); `review_flags`
runs them all. Thresholds are in log-odds and are printed with every flag so a reader can judge them.

- non_monotone: the feature has a declared direction but the shape reverses by more than a tolerance;
- wide_band: a large effect whose spread band (score +/- 2 spread) reaches 0;
- sparse_data: a large effect resting on few patients (a run of neighbouring bins of a shape, or a cell of a
  pair grid, with fewer patients in total than the threshold);
- outside_training_range: the shape moves where no training patient was (beyond min/max), or cohort patients
  lie outside the range (they are scored at the end of the shape);
- protective_care_marker: a feature marked as a care-process marker lowers risk (associations, not causes:
  patients who got more care look safer, but withdrawing care would not make them so);
- rare_category: a strong score carried by a rare level.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.model.document import AdditiveModel, Term
from scorecard.model.predict import PredictionReport, contributions
from scorecard.review.entries import axis_labels, entry_labels, number
from scorecard.review.weights import TermWeights, term_weights

FLAG_ORDER = (
    "protective_care_marker",
    "non_monotone",
    "outside_training_range",
    "wide_band",
    "sparse_data",
    "rare_category",
)


@dataclass(frozen=True)
class FlagSettings:
    """Thresholds (log-odds unless stated). A large effect of 0.4 log-odds is an odds ratio of about 1.5."""

    large_effect: float = 0.4
    monotone_tolerance: float = 0.02
    care_tolerance: float = 0.02
    band_width: float = 2.0  # the band is score +/- band_width * spread
    sparse_patients: float = 30.0
    rare_share: float = 0.05


@dataclass(frozen=True)
class Flag:
    kind: str
    term: str
    message: str

    def to_dict(self) -> dict:
        return {"kind": self.kind, "term": self.term, "message": self.message}


def review_flags(model: AdditiveModel, cohort: pd.DataFrame | None = None, settings: FlagSettings = FlagSettings()) -> list[Flag]:
    """Every flag for every term, grouped by kind in FLAG_ORDER, terms in model order within a kind."""
    report = contributions(model, cohort)[1] if cohort is not None else None
    found: list[Flag] = []
    for term in model.terms:
        weights = term_weights(model, term, cohort)
        found += check_care_marker(model, term, settings)
        found += check_monotone(model, term, weights, settings)
        found += check_training_range(model, term, settings, report)
        found += check_band(model, term, settings)
        found += check_sparse(model, term, weights, settings)
        found += check_rare(model, term, weights, settings)
    return sorted(found, key=lambda f: FLAG_ORDER.index(f.kind))


def _count(x: float) -> str:
    """Patients as a whole number (expected counts can be fractional), one decimal below 10."""
    return f"{x:.1f}" if x < 10 else f"{x:.0f}"


def _lo(x: float) -> str:
    return f"{x:+.2f}"


def largest_reversal(scores: np.ndarray, increasing: bool) -> tuple[float, int, int]:
    """Largest fall (for increasing) or rise (for decreasing) from an earlier entry to a later one, with both positions."""
    s = np.asarray(scores, dtype=float) * (1.0 if increasing else -1.0)
    best, at_hi, at_lo = 0.0, 0, 0
    peak = 0
    for j in range(1, len(s)):
        if s[j - 1] > s[peak]:
            peak = j - 1
        if s[peak] - s[j] > best:
            best, at_hi, at_lo = float(s[peak] - s[j]), peak, j
    return best, at_hi, at_lo


def check_monotone(model: AdditiveModel, term: Term, weights: TermWeights, settings: FlagSettings) -> list[Flag]:
    if term.kind not in ("continuous", "flag"):
        return []
    feature = model.feature(term.feature)
    if feature.direction is None:
        return []
    scores = np.asarray(term.scores, dtype=float)
    labels = entry_labels(model, term)
    keep = weights.per_score > 0 if weights.source != "equal" else np.ones(len(scores), dtype=bool)
    if keep.sum() < 2:
        return []
    kept = np.flatnonzero(keep)
    size, i, j = largest_reversal(scores[kept], feature.direction == "increasing")
    if size <= settings.monotone_tolerance:
        return []
    a, b = kept[i], kept[j]
    verb = "falls" if feature.direction == "increasing" else "rises"
    return [
        Flag(
            "non_monotone",
            term.name,
            f"{feature.name} is declared {feature.direction} but the shape {verb} by {size:.2f} log-odds "
            f"(from {_lo(scores[a])} at {labels[a]} to {_lo(scores[b])} at {labels[b]}); "
            f"edit with --force-direction {term.name}={feature.direction} or revisit the declaration",
        )
    ]


def check_care_marker(model: AdditiveModel, term: Term, settings: FlagSettings) -> list[Flag]:
    marked = [n for n in term.feature_names if model.feature(n).role == "care_process"]
    if not marked:
        return []
    scores = np.asarray(term.scores, dtype=float)
    if term.kind == "flag":
        effect = scores[1] - scores[0]
        if effect >= -settings.care_tolerance:
            return []
        return [
            Flag(
                "protective_care_marker",
                term.name,
                f"{marked[0]} is marked a care-process marker and lowers risk by {-effect:.2f} log-odds when present "
                f"(odds ratio {np.exp(effect):.2f}); patients who got this care look safer, which is no reason to withhold "
                f"it from others: consider --remove-effect {term.name}",
            )
        ]
    spread = float(scores.max() - scores.min()) if scores.size else 0.0
    if spread <= settings.care_tolerance:
        return []
    where = ""
    if term.kind != "pair":
        labels = entry_labels(model, term)
        where = f"; lowest risk at {labels[int(np.argmin(scores))]}"
    return [
        Flag(
            "protective_care_marker",
            term.name,
            f"{', '.join(marked)} is marked a care-process marker yet its scores differ by {spread:.2f} log-odds{where}; "
            f"some patients look safer because of the care they got: consider --remove-effect {term.name}",
        )
    ]


def check_band(model: AdditiveModel, term: Term, settings: FlagSettings) -> list[Flag]:
    if term.spread is None:
        return []
    scores = np.asarray(term.scores, dtype=float).ravel()
    spread = np.asarray(term.spread, dtype=float).ravel()
    hit = (np.abs(scores) >= settings.large_effect) & (settings.band_width * spread >= np.abs(scores))
    if not hit.any():
        return []
    where = _where(model, term, hit)
    return [
        Flag(
            "wide_band",
            term.name,
            f"large effect with a band (score +/- {settings.band_width:g} spread) reaching 0 at {where}: "
            f"the fitted value is unstable there",
        )
    ]


def check_sparse(model: AdditiveModel, term: Term, weights: TermWeights, settings: FlagSettings) -> list[Flag]:
    if weights.source == "equal" or term.kind in ("categorical", "flag"):
        return []  # levels are handled by check_rare; without counts sparsity is unknown
    scores = np.asarray(term.scores, dtype=float)
    w = weights.per_score
    large = np.abs(scores) >= settings.large_effect
    if term.kind == "pair":
        hit = large & (w < settings.sparse_patients)
        if not hit.any():
            return []
        return [
            Flag(
                "sparse_data",
                term.name,
                f"{int(hit.sum())} cells with a large effect hold fewer than {settings.sparse_patients:g} patients each "
                f"({weights.source}; {_count(w[hit].sum())} patients in all): {_where(model, term, hit.ravel())}",
            )
        ]
    labels = entry_labels(model, term)
    out = []
    # a run of neighbouring bins with a large effect of the same sign, and the patients under the whole run
    i = 0
    while i < len(scores):
        if not large[i]:
            i += 1
            continue
        j = i
        while j + 1 < len(scores) and large[j + 1] and np.sign(scores[j + 1]) == np.sign(scores[i]):
            j += 1
        patients = float(w[i : j + 1].sum())
        if patients < settings.sparse_patients:
            peak = i + int(np.argmax(np.abs(scores[i : j + 1])))
            where = labels[i] if i == j else f"{labels[i]} through {labels[j]}"
            out.append(
                Flag(
                    "sparse_data",
                    term.name,
                    f"an effect up to {_lo(scores[peak])} log-odds at {where} rests on {_count(patients)} patients "
                    f"({weights.source}; threshold {settings.sparse_patients:g})",
                )
            )
        i = j + 1
    return out


def check_rare(model: AdditiveModel, term: Term, weights: TermWeights, settings: FlagSettings) -> list[Flag]:
    if term.kind not in ("categorical", "flag") or weights.source == "equal":
        return []
    scores = np.asarray(term.scores, dtype=float)
    w = weights.per_score
    total = w.sum() + weights.not_measured
    if total <= 0:
        return []
    share = w / total
    hit = (np.abs(scores) >= settings.large_effect) & (share < settings.rare_share)
    labels = entry_labels(model, term)
    return [
        Flag(
            "rare_category",
            term.name,
            f"level {labels[i]!r} carries {_lo(scores[i])} log-odds but only {100 * share[i]:.1f}% of patients "
            f"({_count(w[i])}, {weights.source}) have it; check it is real and consider --pool-levels",
        )
        for i in np.flatnonzero(hit)
    ]


def check_training_range(model: AdditiveModel, term: Term, settings: FlagSettings, report: PredictionReport | None) -> list[Flag]:
    out: list[Flag] = []
    if report is not None:
        for name in term.feature_names:
            n = report.out_of_range.get(name, 0)
            if n:
                out.append(
                    Flag(
                        "outside_training_range",
                        term.name,
                        f"{n} of {report.rows} cohort patients have {name} outside the training range; they are scored "
                        "at the end of the shape, where the model has not seen patients",
                    )
                )
    if term.kind != "continuous":
        return out
    feature = model.feature(term.feature)
    rng = feature.training_range
    if not rng or not term.edges:
        return out
    shape = _shape_function(term)
    lo, hi = float(rng["min"]), float(rng["max"])
    probe = np.asarray(term.edges, dtype=float)
    below, above = probe[probe < lo], probe[probe > hi]
    moves = [abs(shape(x) - shape(lo)) for x in below] + [abs(shape(x) - shape(hi)) for x in above]
    if moves and max(moves) > settings.monotone_tolerance:
        out.append(
            Flag(
                "outside_training_range",
                term.name,
                f"the shape changes by up to {max(moves):.2f} log-odds outside the training range "
                f"{number(lo, feature)} to {number(hi, feature)}, where no training patient was",
            )
        )
    return out


def _shape_function(term: Term):
    edges = np.asarray(term.edges, dtype=float)
    scores = np.asarray(term.scores, dtype=float)
    if term.shape == "linear":
        return lambda x: float(np.interp(x, edges, scores))
    return lambda x: float(scores[int(np.searchsorted(edges, x, side="right"))])


def _where(model: AdditiveModel, term: Term, hit: np.ndarray) -> str:
    scores = np.asarray(term.scores, dtype=float).ravel()
    if term.kind == "pair":
        cols = np.shape(term.scores)[1]
        rows_text, cols_text = axis_labels(model, term, 0), axis_labels(model, term, 1)
        f0, f1 = term.features
        cells = [
            f"{f0} {rows_text[i // cols]} & {f1} {cols_text[i % cols]} ({_lo(scores[i])})" for i in np.flatnonzero(hit)
        ]
    else:
        labels = entry_labels(model, term)
        cells = [f"{labels[i]} ({_lo(scores[i])})" for i in np.flatnonzero(hit)]
    shown = ", ".join(cells[:4])
    return shown + (f" and {len(cells) - 4} more" if len(cells) > 4 else "")
