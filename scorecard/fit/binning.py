"""Turning each feature's values into small integer bin codes, computed once before any boosting.

Every feature gets `n_bins` ordinary bins plus one "not measured" bin (code `n_bins`), so a histogram of a
feature always has `n_bins + 1` slots. The bins are exactly the ones written to the model document, so the
fitted step shape and the printed one agree:
- continuous: cut points are midpoints between adjacent distinct training values; with more distinct values
  than `max_bins`, only the midpoints nearest the weighted quantiles are kept (quantile bins, common practice
  in histogram gradient boosting). A value falls in bin i when edges[i-1] <= x < edges[i];
- flag (values 0/1 only): two bins, no and yes, split at 0.5;
- categorical: one bin per level (levels sorted by name); levels seen fewer than `min_level_count` times are
  pooled into one shared bin, so a rare level cannot earn a score of its own from a handful of patients.

Bins are made from a `ValueSummary` of each column (its distinct values with row counts and summed weights),
not from the rows: summaries of separate blocks of rows merge exactly into the summary of all of them, so the
Dask engine, which summarises each partition on the cluster, draws exactly the in-memory bins.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

UNSEEN = -1  # code of a categorical level the fitted bins do not know (scored at the average, 0)


@dataclass
class FeatureBins:
    """How one feature's values map to bin codes."""

    name: str
    kind: str  # continuous | flag | categorical
    n_bins: int  # ordinary bins; the not-measured bin is code n_bins
    edges: np.ndarray | None = None  # continuous / flag: interior cut points
    levels: list[str] | None = None  # categorical: every level seen, sorted
    level_bin: np.ndarray | None = None  # categorical: bin of each level (pooled rare levels share one)

    @property
    def n_slots(self) -> int:
        return self.n_bins + 1

    @property
    def missing_code(self) -> int:
        return self.n_bins

    def codes(self, values: np.ndarray) -> np.ndarray:
        """Bin code of every value: not measured -> n_bins, unknown level -> UNSEEN."""
        if self.kind == "categorical":
            lookup = {lv: int(b) for lv, b in zip(self.levels, self.level_bin)}
            series = pd.Series(values, dtype=object)
            codes = series.map(lookup).to_numpy(dtype=float)
            codes = np.where(np.isnan(codes), UNSEEN, codes).astype(np.intp)
            codes[series.isna().to_numpy()] = self.n_bins
            return codes
        x = np.asarray(values, dtype=float)
        missing = np.isnan(x)
        codes = np.searchsorted(self.edges, np.where(missing, 0.0, x), side="right").astype(np.intp)
        codes[missing] = self.n_bins
        return codes


@dataclass
class ValueSummary:
    """A column's distinct measured values (sorted; numbers, or level text) with, per value, the rows holding
    it, the rows holding it with a positive weight, and their summed weight. Enough for the bins, the training
    range and the decimals, and additive over blocks of rows."""

    values: np.ndarray
    rows: np.ndarray
    positive: np.ndarray
    weight: np.ndarray

    @classmethod
    def of(cls, values: np.ndarray, weights: np.ndarray) -> "ValueSummary":
        """Summary of a numeric column (NaN = not measured) or a level column (None = not measured)."""
        if values.dtype == object:
            present = np.array([v is not None for v in values], dtype=bool)
            kept = np.asarray(values[present], dtype=object).astype(str)
        else:
            present = ~np.isnan(values)
            kept = values[present]
        distinct, inverse = np.unique(kept, return_inverse=True)
        w = weights[present]
        n = len(distinct)
        return cls(distinct, np.bincount(inverse, minlength=n), np.bincount(inverse, weights=(w > 0).astype(float), minlength=n),
                   np.bincount(inverse, weights=w, minlength=n))

    @staticmethod
    def merge(parts: list["ValueSummary"]) -> "ValueSummary":
        """One summary of the rows of all `parts` (weights added up in the parts' order)."""
        distinct, inverse = np.unique(np.concatenate([p.values for p in parts]), return_inverse=True)
        n = len(distinct)

        def add(field):
            return np.bincount(inverse, weights=np.concatenate([getattr(p, field) for p in parts]).astype(float), minlength=n)

        return ValueSummary(distinct, add("rows").astype(np.int64), add("positive"), add("weight"))

    def value_at(self, index: int):
        """The value at 0-based position `index` of the column sorted (not-measured rows left out)."""
        return self.values[int(np.searchsorted(np.cumsum(self.rows), index, side="right"))]

    def quantile(self, q: float) -> float:
        """Linear-interpolation sample quantile of the measured rows (Hyndman & Fan 1996 type 7, numpy's
        default), computed from the counts alone: position (n - 1) q between its two neighbouring values."""
        n = int(self.rows.sum())
        virtual = (n - 1) * q
        below = int(np.floor(virtual))
        gamma = virtual - below
        a, b = float(self.value_at(below)), float(self.value_at(min(below + 1, n - 1)))
        diff = b - a
        return b - diff * (1 - gamma) if gamma >= 0.5 else a + diff * gamma  # numpy's two-sided lerp


def midpoint_cuts(values: np.ndarray, weights: np.ndarray, max_bins: int) -> np.ndarray:
    """Interior cut points for at most `max_bins` bins of the measured `values` (see `cuts_between`)."""
    distinct, inverse = np.unique(values, return_inverse=True)
    return cuts_between(distinct, np.bincount(inverse, weights=weights, minlength=len(distinct)), max_bins)


def cuts_between(distinct: np.ndarray, mass: np.ndarray, max_bins: int) -> np.ndarray:
    """Interior cut points for at most `max_bins` bins of sorted distinct values with weights `mass`.

    Each cut is the midpoint between two adjacent distinct values, so every bin holds at least one training
    value and the step shape is defined without ambiguity. With more distinct values than bins, the cuts
    are those where the weighted cumulative share first reaches k / max_bins (quantile bins).
    """
    if len(distinct) <= 1:
        return np.empty(0)
    if len(distinct) <= max_bins:
        after = np.arange(len(distinct) - 1)
    else:
        share = np.cumsum(mass) / mass.sum()
        targets = np.arange(1, max_bins) / max_bins
        after = np.unique(np.searchsorted(share, targets - 1e-12, side="left"))
        after = after[after < len(distinct) - 1]
    cuts = (distinct[after] + distinct[after + 1]) / 2.0
    return np.unique(cuts)


def bin_numeric(name: str, values: np.ndarray, weights: np.ndarray, max_bins: int) -> FeatureBins:
    return numeric_bins(name, ValueSummary.of(values, weights), max_bins)


def numeric_bins(name: str, summary: ValueSummary, max_bins: int) -> FeatureBins:
    used = summary.positive > 0  # a patient with weight 0 must not move a cut point
    distinct = summary.values[used]
    if len(distinct) == 2 and distinct[0] == 0.0 and distinct[1] == 1.0:
        return FeatureBins(name=name, kind="flag", n_bins=2, edges=np.array([0.5]))
    edges = cuts_between(distinct, summary.weight[used], max_bins)
    return FeatureBins(name=name, kind="continuous", n_bins=len(edges) + 1, edges=edges)


def bin_categorical(name: str, values: np.ndarray, weights: np.ndarray, min_level_count: int) -> FeatureBins:
    return categorical_bins(name, ValueSummary.of(values, weights), min_level_count)


def categorical_bins(name: str, summary: ValueSummary, min_level_count: int) -> FeatureBins:
    levels = [str(lv) for lv in summary.values]
    counts = summary.rows
    rare = [i for i, c in enumerate(counts) if c < min_level_count]
    level_bin = np.zeros(len(levels), dtype=np.intp)
    next_bin = 0
    for i in range(len(levels)):
        if i in rare and len(rare) > 1:
            continue
        level_bin[i] = next_bin
        next_bin += 1
    if len(rare) > 1:  # one shared bin for all rare levels
        level_bin[rare] = next_bin
        next_bin += 1
    return FeatureBins(name=name, kind="categorical", n_bins=max(next_bin, 1), levels=levels, level_bin=level_bin)


def coarse_bins(fine: FeatureBins, counts: np.ndarray, max_bins: int) -> tuple[np.ndarray, np.ndarray | None]:
    """Group a feature's fine bins into at most `max_bins` coarse bins for pair grids.

    Returns (fine slot -> coarse bin, with -1 for the not-measured slot) and, for continuous features, the
    coarse cut points, which are a subset of the fine ones so that moving a pair's row averages into the
    one-feature term is exact.
    """
    n = fine.n_bins
    if fine.kind != "continuous" or n <= max_bins:
        mapping = np.append(np.arange(n), -1)
        return mapping, (None if fine.edges is None else fine.edges.copy())
    share = np.cumsum(counts[:n]) / max(counts[:n].sum(), 1e-300)
    targets = np.arange(1, max_bins) / max_bins
    after = np.unique(np.searchsorted(share, targets - 1e-12, side="left"))
    after = after[after < n - 1]  # cut after fine bin `after` = fine edge index `after`
    mapping = np.searchsorted(after, np.arange(n), side="left")
    return np.append(mapping, -1), fine.edges[after]


def bin_positions(bins: FeatureBins, summary: ValueSummary) -> np.ndarray | None:
    """Each measured bin's weighted mean training value, standardised (weighted mean 0, sd 1 over the
    patients): the abscissa of a straight-line step (`trees.linear_step`). None for a categorical feature
    (no order to draw a line along) or one with a single occupied bin."""
    if bins.kind == "categorical" or len(summary.values) == 0:
        return None
    x = summary.values.astype(float)
    w = summary.weight
    codes = np.searchsorted(bins.edges, x, side="right")
    weight = np.bincount(codes, weights=w, minlength=bins.n_bins)
    total = np.bincount(codes, weights=w * x, minlength=bins.n_bins)
    mean = np.divide(total, weight, out=np.zeros(bins.n_bins), where=weight > 0)
    centre = np.sum(w * x) / np.sum(w)
    sd = np.sqrt(np.sum(w * (x - centre) ** 2) / np.sum(w))
    if not sd > 0:
        return None
    # an empty bin has no patients, so its position (0) moves no loss; it only gets the line's value at 0
    position = (mean - centre) / sd
    return np.where(weight > 0, position, 0.0)
