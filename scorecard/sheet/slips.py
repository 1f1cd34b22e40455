"""Slip robustness: how much a bedside slip would move a patient's risk, from the sheet and each patient's rows.

Two slips a nurse makes (common practice in hand-scoring audits: the eye lands one line off; an addition off by
one):

- **neighbouring row**: for every patient with the item measured, the row just above and just below the right
  one in print order (the not-measured row is not a neighbour; in a pair grid the cells above, below, left and
  right), each read instead of the right row, one at a time, the other tables unchanged;
- **total off by one**: the total one higher and one lower (where the conversion table prints it).

For each slip the risk error is risk(slipped total) − risk(right total), read from the conversion table. Per
table and overall: the mean, 95th percentile and largest |risk error| over every (patient, slip), the share of
slips that change nothing (same points), and how many patients would change band by at least one such slip.

`quantize` applies this to the patients its sheet was judged on and to the candidate sheets it chooses among.
The audit recomputes the same figures independently of the quantizer, from counts per (row, total) so that a
streamed cohort adds up (`scorecard.audit.slips.SlipTally`); tests/quantize/test_quantize_slips.py proves the
two equal on the same patients, as with the measurement rounding rule's two homes.
"""

from __future__ import annotations

from typing import Protocol, Sequence

import numpy as np

from scorecard.sheet.printed import total_band_indices


class Choices(Protocol):
    """One printed table as the patients met it: `points` of each choice (rows in print order, then not
    measured; for a pair grid cells i * n1 + j, then not measured) and each patient's choice `index`."""

    name: str
    label: str
    points: np.ndarray
    index: np.ndarray


def row_neighbours(term: dict, n_choices: int) -> list[list[int]]:
    """Neighbouring printed rows (indices into the term's choices) of each choice of a single-row table."""
    printed = [i for i, r in enumerate(term["rows"]) if not r.get("missing")]
    out: list[list[int]] = [[] for _ in range(n_choices)]
    for k, i in enumerate(printed):
        out[i] = [printed[j] for j in (k - 1, k + 1) if 0 <= j < len(printed)]
    return out


def cell_neighbours(term: dict, n_choices: int) -> list[list[int]]:
    """Neighbouring cells of each cell of a pair grid (choices are cells i * n1 + j, then not measured)."""
    n0, n1 = len(term["axes"][0]["rows"]), len(term["axes"][1]["rows"])
    missing0 = {i for i, r in enumerate(term["axes"][0]["rows"]) if r.get("missing")}
    missing1 = {j for j, r in enumerate(term["axes"][1]["rows"]) if r.get("missing")}
    out: list[list[int]] = [[] for _ in range(n_choices)]
    for i in range(n0):
        for j in range(n1):
            if i in missing0 or j in missing1:
                continue
            out[i * n1 + j] = [a * n1 + b for a, b in ((i - 1, j), (i + 1, j), (i, j - 1), (i, j + 1))
                               if 0 <= a < n0 and 0 <= b < n1 and a not in missing0 and b not in missing1]
    return out


def _summary(errors: np.ndarray, band_moved: np.ndarray, patients: int) -> dict:
    a = np.abs(errors)
    return {
        "slips": int(a.size),
        "mean_abs_risk_error": float(a.mean()) if a.size else 0.0,
        "p95_abs_risk_error": float(np.percentile(a, 95)) if a.size else 0.0,
        "max_abs_risk_error": float(a.max()) if a.size else 0.0,
        "share_harmless": float((a == 0).mean()) if a.size else 1.0,
        "patients": int(patients),
        "patients_changing_band": int(band_moved.sum()),
    }


def slip_figures(sheet: dict, total: np.ndarray, terms: Sequence[Choices]) -> dict:
    """The slip figures of a sheet (its `terms`, `conversion` and `bands`) for patients with these totals and
    choices, one per printed term in order (see the module docstring); also the check's JSON."""
    table = sorted(sheet["conversion"], key=lambda c: c["total"])
    first = int(table[0]["total"])
    risk = np.array([float(c["risk"]) for c in table])
    total = np.asarray(total, dtype=np.int64)
    last = first + len(risk) - 1
    has_bands = bool(sheet.get("bands"))
    n = len(total)
    right_risk = risk[total - first]
    right_band = total_band_indices(sheet, total) if has_bands else None

    def risk_at(totals: np.ndarray) -> np.ndarray:
        return risk[np.clip(totals, first, last) - first]

    per_term, all_errors, all_moved = [], [], np.zeros(n, dtype=bool)
    for term, choices in zip(sheet["terms"], terms):
        neighbours = (cell_neighbours if term["kind"] == "pair" else row_neighbours)(term, len(choices.points))
        errors, moved = [], np.zeros(n, dtype=bool)
        measured = np.zeros(n, dtype=bool)
        for side in range(4):
            other = np.array([nb[side] if side < len(nb) else -1 for nb in neighbours], dtype=np.int64)
            target = other[choices.index]
            hit = target >= 0
            measured |= hit
            if not hit.any():
                continue
            slipped = total[hit] - choices.points[choices.index[hit]] + choices.points[target[hit]]
            e = risk_at(slipped) - right_risk[hit]
            errors.append(e)
            if has_bands:
                moved[np.flatnonzero(hit)[total_band_indices(sheet, slipped) != right_band[hit]]] = True
        e = np.concatenate(errors) if errors else np.empty(0)
        per_term.append({"term": choices.name, "label": choices.label, **_summary(e, moved, int(measured.sum()))})
        all_errors.append(e)
        all_moved |= moved
    overall = _summary(np.concatenate(all_errors) if all_errors else np.empty(0), all_moved, n)
    off_errors, off_moved = [], np.zeros(n, dtype=bool)
    for step in (-1, 1):
        hit = (total + step >= first) & (total + step <= last)
        e = risk_at(total[hit] + step) - right_risk[hit]
        off_errors.append(e)
        if has_bands:
            off_moved[np.flatnonzero(hit)[total_band_indices(sheet, total[hit] + step) != right_band[hit]]] = True
    return {
        "what": "risk error (risk of the slipped total - risk of the right total) for one slip at a time",
        "neighbour_row": {"per_term": per_term, "overall": overall},
        "total_off_by_one": _summary(np.concatenate(off_errors), off_moved, n),
        "bands": has_bands,
    }
