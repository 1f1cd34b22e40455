"""The totals where one risk band ends and the next begins, chosen for band agreement (issue 10, 2d).

On paper a patient's band is read from the total, so the sheet's bands are runs of consecutive totals: band b
holds the totals t with first_total[b] <= t < first_total[b + 1] (a band may be empty). Reading the band off
each total's printed risk puts the edge where the conversion crosses the band's risk limit; but the patients
with one total have a spread of exact-model risks, and the edge that puts most of them in their model band
can lie a total away. Band agreement is a sum over totals of the patients at that total whose model band is
the total's band, and the total's band never falls as the total rises, so the best edges are found exactly by
dynamic programming over (total, band) (a 1-D segmentation with ordered labels; Bellman 1961), O(totals x
bands^2). Among edge choices with equal agreement the one closest to the risk-limit edges is kept, so the
edges move only when that gains patients.
"""

from __future__ import annotations

import numpy as np


def best_band_edges(totals: np.ndarray, model_band: np.ndarray, n_bands: int, lowest: int, highest: int,
                    preferred: list[int] | None = None) -> list[int]:
    """first_total of every band (first_total[0] = lowest; highest + 1 marks an empty last band) maximising the
    number of patients whose band by total equals `model_band`; ties go to the smallest total distance from
    `preferred` (same form; e.g. the edges the printed risks give)."""
    totals = np.asarray(totals, dtype=np.int64)
    model_band = np.asarray(model_band, dtype=np.int64)
    width = highest - lowest + 1
    if n_bands < 1 or width < 1:
        raise ValueError("need at least one band and one total")
    inside = (totals >= lowest) & (totals <= highest)
    counts = np.zeros((width, n_bands), dtype=np.int64)
    np.add.at(counts, (totals[inside] - lowest, np.clip(model_band[inside], 0, n_bands - 1)), 1)
    pref = list(preferred) if preferred is not None else [lowest] * n_bands
    pref = [min(max(int(e), lowest), highest + 1) for e in pref]

    def moved(t: int, a: int, b: int) -> int:
        """Distance cost of bands a+1..b starting at total t."""
        return sum(abs(t - pref[k]) for k in range(a + 1, b + 1))

    # value[b] = (agreement, -distance) of the best labelling of totals so far with the current total in band b;
    # back[i][b] = band of total i-1 on that best labelling
    neg = (-1, 0)
    value = [(int(counts[0, b]), -moved(lowest, 0, b)) for b in range(n_bands)]
    back = [[0] * n_bands]
    for i in range(1, width):
        t = lowest + i
        new, arg = [], []
        for b in range(n_bands):
            best, best_a = neg, -1
            for a in range(b + 1):
                agree, dist = value[a]
                cand = (agree + int(counts[i, b]), dist - moved(t, a, b))
                if best_a < 0 or cand > best:
                    best, best_a = cand, a
            new.append(best)
            arg.append(best_a)
        value = new
        back.append(arg)
    ends = [(value[b][0], value[b][1] - moved(highest + 1, b, n_bands - 1)) for b in range(n_bands)]
    b = max(range(n_bands), key=lambda k: (ends[k], -k))
    labels = [0] * width
    for i in range(width - 1, -1, -1):
        labels[i] = b
        b = back[i][b]
    first = [lowest] + [highest + 1] * (n_bands - 1)
    for k in range(1, n_bands):
        starts = [lowest + i for i, lab in enumerate(labels) if lab >= k]
        first[k] = starts[0] if starts else highest + 1
    return first


def agreement_of_edges(totals: np.ndarray, model_band: np.ndarray, first_total: list[int]) -> int:
    """Patients whose band by total (these edges) is their model band."""
    band = np.searchsorted(np.asarray(first_total[1:], dtype=np.int64), np.asarray(totals, dtype=np.int64), side="right")
    return int(np.sum(band == np.asarray(model_band)))
