"""The evaluation population the sheet is chosen on and measured against.

With a cohort (`--data`) every patient counts once. Without one, a synthetic population is drawn from the
model's own training bin counts: each feature independently (the model document stores no joint
distribution; for pair terms this is the independence product of the two features' counts), a bin by its
count, a value uniform inside the bin (end bins clipped to the training range), "not measured" by the
term's not-measured count. Seeded, so the same model always gives the same population.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.model import AdditiveModel, contributions, logistic
from scorecard.model.document import Feature

SYNTHETIC_SIZE = 20000


@dataclass
class Population:
    frame: pd.DataFrame  # one column per feature, as the model reads them
    parts: pd.DataFrame  # exact log-odds contribution of each term per patient
    logodds: np.ndarray  # exact model log-odds
    description: str

    @property
    def risk(self) -> np.ndarray:
        return logistic(self.logodds)

    @property
    def size(self) -> int:
        return len(self.logodds)


def evaluation_population(model: AdditiveModel, data: pd.DataFrame | None = None, size: int = SYNTHETIC_SIZE,
                          seed: int = 0, description: str | None = None) -> Population:
    """The cohort as given, or a seeded synthetic population drawn from the model's bin counts."""
    if data is None:
        frame = synthetic_frame(model, size, seed)
        description = description or (
            f"synthetic population of {size} drawn from the model's training bin counts "
            f"(features independent, seed {seed})"
        )
    else:
        frame = data
        description = description or f"cohort of {len(data)} patients"
    parts, _ = contributions(model, frame)
    logodds = model.intercept + parts.to_numpy().sum(axis=1)
    return Population(frame=frame, parts=parts, logodds=logodds, description=description)


def _single_term(model: AdditiveModel, name: str):
    for t in model.terms:
        if t.kind != "pair" and t.feature == name:
            return t
    return None


def _pair_marginal(model: AdditiveModel, name: str):
    """(axis, counts) for a feature used only inside a pair term."""
    for t in model.terms:
        if t.kind == "pair" and name in t.features:
            j = t.features.index(name)
            counts = np.asarray(t.counts, dtype=float) if t.counts is not None else None
            if counts is not None:
                counts = counts.sum(axis=1 - j)
            return t.axes[j], counts
    return None, None


def synthetic_frame(model: AdditiveModel, size: int, seed: int) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    columns = {}
    for name in model.used_features:
        feature = model.feature(name)
        term = _single_term(model, name)
        if term is not None:
            cells = term.edges if feature.kind == "continuous" else term.levels
            counts = term.counts
            missing_count = term.missing_count
        else:
            axis, counts = _pair_marginal(model, name)
            cells = axis.get("edges") if feature.kind == "continuous" else axis.get("levels")
            missing_count = None
        columns[name] = _draw(feature, cells, counts, missing_count, size, rng)
    return pd.DataFrame(columns)


def _probabilities(counts, n_cells: int) -> np.ndarray:
    if counts is None or float(np.sum(counts)) <= 0:
        return np.full(n_cells, 1.0 / n_cells)
    c = np.asarray(counts, dtype=float)
    return c / c.sum()


def _draw(feature: Feature, cells, counts, missing_count, size: int, rng: np.random.Generator) -> np.ndarray:
    missing_share = 0.0
    if feature.missing != "error" and missing_count and counts is not None:
        missing_share = float(missing_count) / (float(np.sum(counts)) + float(missing_count))
    missing = rng.random(size) < missing_share
    if feature.kind == "continuous":
        edges = np.asarray(cells or [], dtype=float)
        rng_ = feature.training_range or {}
        lo = float(rng_.get("min", edges[0] - 1 if len(edges) else 0.0))
        hi = float(rng_.get("max", edges[-1] + 1 if len(edges) else 1.0))
        bounds = np.concatenate([[min(lo, edges[0]) if len(edges) else lo], edges, [max(hi, edges[-1]) if len(edges) else hi]])
        probs = _probabilities(counts, len(bounds) - 1)
        which = rng.choice(len(probs), size=size, p=probs)
        left, right = bounds[which], bounds[which + 1]
        values = left + (right - left) * rng.random(size)
        # a patient's recorded value is at the printed precision, as on a chart
        values = np.round(values, feature.decimals)
        values = np.clip(values, lo, hi)
        return np.where(missing, np.nan, values)
    if feature.kind == "flag":
        probs = _probabilities(counts, 2)
        values = (rng.random(size) < probs[1]).astype(float)
        return np.where(missing, np.nan, values)
    levels = list(cells)
    probs = _probabilities(counts, len(levels))
    which = rng.choice(len(levels), size=size, p=probs)
    out = np.array([levels[i] for i in which], dtype=object)
    out[missing] = None
    return out


