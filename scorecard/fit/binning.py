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


def midpoint_cuts(values: np.ndarray, weights: np.ndarray, max_bins: int) -> np.ndarray:
    """Interior cut points for at most `max_bins` bins of the measured `values`.

    Each cut is the midpoint between two adjacent distinct values, so every bin holds at least one training
    value and the step shape is defined without ambiguity. With more distinct values than bins, the cuts
    are those where the weighted cumulative share first reaches k / max_bins (quantile bins).
    """
    distinct, inverse = np.unique(values, return_inverse=True)
    if len(distinct) <= 1:
        return np.empty(0)
    if len(distinct) <= max_bins:
        after = np.arange(len(distinct) - 1)
    else:
        mass = np.bincount(inverse, weights=weights, minlength=len(distinct))
        share = np.cumsum(mass) / mass.sum()
        targets = np.arange(1, max_bins) / max_bins
        after = np.unique(np.searchsorted(share, targets - 1e-12, side="left"))
        after = after[after < len(distinct) - 1]
    cuts = (distinct[after] + distinct[after + 1]) / 2.0
    return np.unique(cuts)


def bin_numeric(name: str, values: np.ndarray, weights: np.ndarray, max_bins: int) -> FeatureBins:
    measured = ~np.isnan(values) & (weights > 0)  # a patient with weight 0 must not move a cut point
    x = values[measured]
    distinct = np.unique(x)
    if len(distinct) == 2 and distinct[0] == 0.0 and distinct[1] == 1.0:
        return FeatureBins(name=name, kind="flag", n_bins=2, edges=np.array([0.5]))
    edges = midpoint_cuts(x, weights[measured], max_bins)
    return FeatureBins(name=name, kind="continuous", n_bins=len(edges) + 1, edges=edges)


def bin_categorical(name: str, values: np.ndarray, weights: np.ndarray, min_level_count: int) -> FeatureBins:
    present = [v for v in values if v is not None]
    levels, counts = np.unique(np.array(present, dtype=object).astype(str), return_counts=True) if present else ([], [])
    levels = [str(lv) for lv in levels]
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
