"""Readable cut-points: where a printed row may start.

A cut is a value at the feature's display precision (a whole number of display units, 10**-decimals) on a
"nice" step: 1, 2 or 5 x 10**k display units - whole years, 2-hour steps, 5 g/L, half degrees at one decimal
(5 units of 0.1). The step is the finest one that leaves at most `max_candidates` cuts inside the training
range, so a 60-100 year range cuts on whole years and a 0-1000 range on tens. Common practice for bedside
scores: cut-points people can remember and compare against a chart without arithmetic.
"""

from __future__ import annotations

import math

import numpy as np

from scorecard.sheet.printed import COMPLETED, ROUNDED

MAX_CANDIDATES = 60


def nice_step_units(span_units: float, max_candidates: int = MAX_CANDIDATES) -> int:
    """Smallest step of 1, 2, 5 x 10**k display units giving at most `max_candidates` cuts over the span."""
    if span_units <= max_candidates:
        return 1
    k = 0
    while True:
        for m in (1, 2, 5):
            step = m * 10**k
            if span_units / step <= max_candidates:
                return step
        k += 1


def candidate_cuts(lo: float, hi: float, decimals: int, max_candidates: int = MAX_CANDIDATES) -> np.ndarray:
    """Nice cut values (in display units, integers) strictly above `lo` and at most `hi`.

    A cut c means: a measurement that prints as c or more belongs to the upper row."""
    scale = 10**decimals
    lo_u, hi_u = lo * scale, hi * scale
    step = nice_step_units(hi_u - lo_u, max_candidates)
    first = math.floor(lo_u / step) * step + step
    cuts = np.arange(first, math.floor(hi_u) + 1, step, dtype=np.int64)
    return cuts[cuts > lo_u]


def cut_boundary(cut_units: np.ndarray | int, decimals: int, reading: str = ROUNDED) -> np.ndarray:
    """Where a printed cut falls on the measured scale: values from (c - 0.5) display units round half up to
    c or more, so they belong to the upper row; read in completed units, values from c itself. Division (not
    multiplication) keeps the float the nearest one to the decimal value, the same float a CSV reader
    produces for it."""
    shift = 0.0 if reading == COMPLETED else 0.5
    return (np.asarray(cut_units, dtype=float) - shift) / 10**decimals
