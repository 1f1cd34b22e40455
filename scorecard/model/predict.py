"""Evaluating an additive model on patients: log-odds, risk and per-term contributions.

Semantics (DESIGN, "Semantics that must be exact"):
- a step shape puts x in bin i when edges[i-1] <= x < edges[i]; values beyond the training range fall in the
  open-ended first or last bin and are counted in the report;
- a linear shape interpolates between knots and is constant beyond the end knots;
- not measured uses the feature's policy: the term's not-measured score, the population average (0), or an error;
- a categorical level the model has not seen follows the term's `unseen` policy.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel, Feature, Term
from scorecard.tabular import category_column, flag_column, numeric_column, require_columns, source_of


@dataclass
class PredictionReport:
    """What the caller should know about the inputs: counts per feature."""

    rows: int = 0
    out_of_range: dict[str, int] = field(default_factory=dict)
    not_measured: dict[str, int] = field(default_factory=dict)
    averaged: dict[str, int] = field(default_factory=dict)
    unseen_levels: dict[str, dict[str, int]] = field(default_factory=dict)
    order: list[str] = field(default_factory=list)  # the model's features: lines come in this order

    def add(self, other: "PredictionReport") -> None:
        """Count another chunk of the same cohort in (a streamed run reports what one pass would, in the same
        order whichever chunk first met a feature)."""
        self.rows += other.rows
        self.order = self.order or list(other.order)
        rank = {name: k for k, name in enumerate(self.order)}
        for attr in ("out_of_range", "not_measured", "averaged", "unseen_levels"):
            mine, theirs = getattr(self, attr), getattr(other, attr)
            for name, n in theirs.items():
                if attr == "unseen_levels":
                    levels = mine.setdefault(name, {})
                    for level, k in n.items():
                        levels[level] = levels.get(level, 0) + k
                else:
                    mine[name] = mine.get(name, 0) + n
            setattr(self, attr, dict(sorted(mine.items(), key=lambda item: rank.get(item[0], len(rank)))))

    def lines(self) -> list[str]:
        out = []
        for name, n in self.out_of_range.items():
            out.append(f"{name}: {n} of {self.rows} values outside the training range (scored in the end bin)")
        for name, n in self.averaged.items():
            out.append(f"{name}: {n} not measured and scored at the population average (0)")
        for name, levels in self.unseen_levels.items():
            listed = ", ".join(f"{lv!r} x{c}" for lv, c in sorted(levels.items()))
            out.append(f"{name}: levels not seen in training: {listed}")
        return out


def logistic(logodds: np.ndarray) -> np.ndarray:
    """The logistic link's inverse, stable for large |log-odds|."""
    z = np.asarray(logodds, dtype=float)
    out = np.empty_like(z)
    pos = z >= 0
    out[pos] = 1.0 / (1.0 + np.exp(-z[pos]))
    ez = np.exp(z[~pos])
    out[~pos] = ez / (1.0 + ez)
    return out


def feature_values(frame: pd.DataFrame, feature: Feature) -> np.ndarray:
    """Parse one column the way the model reads it (floats with NaN, or level names with None)."""
    if feature.kind == "continuous":
        return numeric_column(frame, feature.name)
    if feature.kind == "flag":
        return flag_column(frame, feature.name)
    return category_column(frame, feature.name, feature.levels or ())


def step_bins(edges, x: np.ndarray) -> np.ndarray:
    """Bin index of each value: edges[i-1] <= x < edges[i]; NaN gives -1."""
    idx = np.searchsorted(np.asarray(edges, dtype=float), x, side="right")
    return np.where(np.isnan(x), -1, idx)


def level_bins(levels, values: np.ndarray) -> np.ndarray:
    """Index of each level; None gives -1, an unknown level -2."""
    lookup = {lv: i for i, lv in enumerate(levels)}
    codes, uniques = pd.factorize(pd.Series(values, dtype=object), use_na_sentinel=True)  # each distinct level once
    per_unique = np.array([lookup.get(v, -2) for v in uniques], dtype=np.int64)
    return np.where(codes < 0, -1, per_unique[np.clip(codes, 0, None)] if len(per_unique) else -1).astype(np.int64)


def flag_bins(values: np.ndarray) -> np.ndarray:
    return np.where(np.isnan(values), -1, values).astype(np.int64)


def axis_bins(axis: dict, feature: Feature, values: np.ndarray) -> np.ndarray:
    if feature.kind == "continuous":
        return step_bins(axis["edges"], values)
    if feature.kind == "flag":
        return flag_bins(values)
    return level_bins(axis["levels"], values)


class _Evaluator:
    """Holds parsed columns and the report while the terms of one model are evaluated."""

    def __init__(self, model: AdditiveModel, frame: pd.DataFrame):
        require_columns(frame, model.used_features)
        self.model = model
        self.source = source_of(frame)
        self.first_row = int(frame.attrs.get("first_row", 0))  # file numbering of a one-patient slice (explain)
        self.values = {name: feature_values(frame, model.feature(name)) for name in model.used_features}
        self.report = PredictionReport(rows=len(frame), order=list(model.used_features))
        for name, vals in self.values.items():
            feature = model.feature(name)
            missing = _missing_mask(vals)
            if missing.any():
                self.report.not_measured[name] = int(missing.sum())
            rng = feature.training_range
            if feature.kind == "continuous" and rng:
                with np.errstate(invalid="ignore"):
                    outside = int(((vals < rng["min"]) | (vals > rng["max"])).sum())
                if outside:
                    self.report.out_of_range[name] = outside

    def missing_contribution(self, term: Term, feature: Feature, missing: np.ndarray) -> float:
        if feature.missing == "error":
            row = int(np.flatnonzero(missing)[0])
            raise UserError(
                f"{self.source}: row {self.first_row + row + 1}, column {feature.name!r}: not measured, and the model requires it; "
                "supply the measurement or exclude the patient"
            )
        if feature.missing == "average" or term.missing_score is None:
            self.report.averaged[feature.name] = self.report.averaged.get(feature.name, 0) + int(missing.sum())
            return 0.0
        return float(term.missing_score)

    def contribution(self, term: Term) -> np.ndarray:
        if term.kind == "pair":
            return self._pair(term)
        feature = self.model.feature(term.feature)
        x = self.values[term.feature]
        scores = np.asarray(term.scores, dtype=float)
        if term.kind == "continuous" and term.shape == "linear":
            missing = np.isnan(x)
            out = np.interp(np.where(missing, term.edges[0], x), term.edges, scores)
        else:
            if term.kind == "continuous":
                idx = step_bins(term.edges, x)
            elif term.kind == "flag":
                idx = flag_bins(x)
            else:
                idx = self._levels(term, feature, x)
            missing = idx == -1
            out = scores[np.clip(idx, 0, len(scores) - 1)]
            out[idx == -3] = 0.0  # unseen level scored at the average
        if missing.any():
            out[missing] = self.missing_contribution(term, feature, missing)
        return out

    def _levels(self, term: Term, feature: Feature, values: np.ndarray) -> np.ndarray:
        idx = level_bins(term.levels, values)
        unseen = idx == -2
        if unseen.any():
            counts: dict[str, int] = {}
            for v in values[unseen]:
                counts[v] = counts.get(v, 0) + 1
            self.report.unseen_levels[feature.name] = counts
            policy = term.unseen or "error"
            if policy == "error":
                row = int(np.flatnonzero(unseen)[0])
                raise UserError(
                    f"{self.source}: row {self.first_row + row + 1}, column {feature.name!r}: level {values[row]!r} is not one the model knows "
                    f"({', '.join(term.levels)}); correct the spelling or set the term's unseen policy"
                )
            if policy == "missing" and feature.missing == "error":
                row = int(np.flatnonzero(unseen)[0])
                raise UserError(
                    f"{self.source}: row {self.first_row + row + 1}, column {feature.name!r}: level {values[row]!r} is not one the model knows, "
                    "and unknown levels count as not measured, which this model refuses; correct the level"
                )
            idx = np.where(unseen, -1 if policy == "missing" else -3, idx)
        return idx

    def _pair(self, term: Term) -> np.ndarray:
        grid = np.asarray(term.scores, dtype=float)
        idx = []
        missing = np.zeros(self.report.rows, dtype=bool)
        for name, axis in zip(term.features, term.axes):
            feature = self.model.feature(name)
            b = axis_bins(axis, feature, self.values[name])
            if feature.missing == "error" and (b == -1).any():
                self.missing_contribution(term, feature, b == -1)  # raises, naming the first row
            if feature.kind == "categorical":
                b = np.where(b == -2, -1, b)  # a level without a column of the grid adds nothing
            missing |= b < 0
            idx.append(np.clip(b, 0, None))
        out = grid[idx[0], idx[1]]
        out[missing] = term.missing_score or 0.0
        return out


def _missing_mask(values: np.ndarray) -> np.ndarray:
    if values.dtype == object:
        return pd.isna(values)  # None (not measured) in a column of levels
    return np.isnan(values)


def contributions(model: AdditiveModel, frame: pd.DataFrame) -> tuple[pd.DataFrame, PredictionReport]:
    """One column per term (log-odds contributions), in model order, plus the input report."""
    ev = _Evaluator(model, frame)
    data = {t.name: ev.contribution(t) for t in model.terms}
    return pd.DataFrame(data, index=frame.index, columns=[t.name for t in model.terms]), ev.report


def predict_logodds(model: AdditiveModel, frame: pd.DataFrame) -> tuple[np.ndarray, PredictionReport]:
    parts, report = contributions(model, frame)
    return model.intercept + parts.to_numpy().sum(axis=1), report


def predict_risk(model: AdditiveModel, frame: pd.DataFrame) -> np.ndarray:
    logodds, _ = predict_logodds(model, frame)
    return logistic(logodds)


def explain(model: AdditiveModel, frame: pd.DataFrame, row: int) -> dict:
    """One patient's terms sorted by the size of their contribution, with the baseline and the risk."""
    if not 0 <= row < len(frame):
        raise UserError(f"{source_of(frame)}: row {row + 1} does not exist; the table has {len(frame)} rows")
    patient = frame.iloc[[row]]
    patient.attrs = {**frame.attrs, "first_row": int(frame.attrs.get("first_row", 0)) + row}
    parts, _ = contributions(model, patient)
    values = parts.iloc[0]
    order = sorted(model.terms, key=lambda t: -abs(values[t.name]))
    terms = []
    for t in order:
        shown = {n: frame.iloc[row][n] for n in t.feature_names}
        terms.append({"term": t.name, "values": shown, "contribution": float(values[t.name])})
    logodds = model.intercept + float(values.sum())
    return {
        "baseline": model.intercept,
        "terms": terms,
        "logodds": logodds,
        "risk": float(logistic(np.array([logodds]))[0]),
    }

