"""Slip robustness on the cohort the audit scored: the slips and figures `scorecard.sheet.slips` defines (a
neighbouring row read instead of the right one; a total off by one), counted for `check`.

A slip's error depends only on the row a patient is in and their total, so the figures are computed from a
`SlipTally`: per table, the number of patients at each (row, total), plus the count of patients whom some
neighbouring-row slip moves to another band. Tallies of the chunks of a streamed cohort add up, and integer
counts make every figure the same as on the whole cohort at once.

The audit's own count, independent of the quantizer's (`scorecard.sheet.slips`, whose neighbour rule both use), proved equal to it by
tests/quantize/test_quantize_slips.py.
"""

from __future__ import annotations

import numpy as np

from scorecard.audit.paper import ScoredCohort, conversion_arrays, total_band_index
from scorecard.audit.statistics import weighted_percentiles
from scorecard.sheet.slips import cell_neighbours, row_neighbours  # which rows a slip reads: the sheet's rule


def _summary(errors: np.ndarray, weights: np.ndarray, moved: int, patients: int) -> dict:
    """The figures of `weights[k]` slips of error `errors[k]` each."""
    a = np.abs(errors)
    w = np.asarray(weights, dtype=np.int64)
    slips = int(w.sum())
    if slips == 0:
        return {"slips": 0, "mean_abs_risk_error": 0.0, "p95_abs_risk_error": 0.0, "max_abs_risk_error": 0.0,
                "share_harmless": 1.0, "patients": int(patients), "patients_changing_band": int(moved)}
    return {
        "slips": slips,
        "mean_abs_risk_error": float(np.dot(a, w) / slips),
        "p95_abs_risk_error": float(weighted_percentiles(a, w, 95)),
        "max_abs_risk_error": float(a[w > 0].max()),
        "share_harmless": float(w[a == 0].sum() / slips),
        "patients": int(patients),
        "patients_changing_band": int(moved),
    }


class SlipTally:
    """Patients per (choice, total) for every table of a sheet, and how many some neighbouring-row slip moves
    to another band; `add` a scored chunk at a time, then `figures()`."""

    def __init__(self, sheet: dict):
        self.sheet = sheet
        self.first, self.risk, _ = conversion_arrays(sheet)
        self.has_bands = bool(sheet.get("bands"))
        nt = len(self.risk)
        self.band = total_band_index(sheet, self.first + np.arange(nt)) if self.has_bands else np.zeros(nt, dtype=np.int64)
        self.points, self.neighbours, self.counts, self.moves = [], [], [], []
        for term in sheet["terms"]:
            if term["kind"] == "pair":
                n0, n1 = len(term["axes"][0]["rows"]), len(term["axes"][1]["rows"])
                points = np.append(np.asarray(term["points"], dtype=np.int64).reshape(-1), int(term["missing_points"]))
                neighbours = cell_neighbours(term, n0 * n1 + 1)
            else:  # every printed row, then the 0-point 'not listed' choice scoring may add (paper.NOT_LISTED_TEXT)
                points = np.array([int(r["points"]) for r in term["rows"]] + [0], dtype=np.int64)
                neighbours = row_neighbours(term, len(term["rows"]) + 1)
            self.points.append(points)
            self.neighbours.append(neighbours)
            self.counts.append(np.zeros((len(points), nt), dtype=np.int64))
            self.moves.append(self._moves(points, neighbours))
        self.patients_moved = 0
        self.n = 0

    def _slipped(self, points: np.ndarray, choice: int, other: int) -> np.ndarray:
        """Conversion-table position of every total after reading row `other` instead of `choice`."""
        totals = np.arange(len(self.risk)) + self.first - points[choice] + points[other]
        return np.clip(totals, self.first, self.first + len(self.risk) - 1) - self.first

    def _moves(self, points: np.ndarray, neighbours: list[list[int]]) -> np.ndarray:
        """Per (choice, total): does a slip to some neighbour change the band?"""
        moves = np.zeros((len(points), len(self.risk)), dtype=bool)
        if self.has_bands:
            for c, others in enumerate(neighbours):
                for o in others:
                    moves[c] |= self.band[self._slipped(points, c, o)] != self.band
        return moves

    def add(self, scored: ScoredCohort) -> "SlipTally":
        at = scored.total - self.first
        nt = len(self.risk)
        moved = np.zeros(scored.n, dtype=bool)
        for choices, counts, moves in zip(scored.terms, self.counts, self.moves):
            counts += np.bincount(choices.index * nt + at, minlength=counts.size).reshape(counts.shape)
            moved |= moves[choices.index, at]
        self.patients_moved += int(moved.sum())
        self.n += scored.n
        return self

    def figures(self) -> dict:
        """The slip figures (see the module docstring); also the check's JSON."""
        nt = len(self.risk)
        per_term, all_errors, all_weights = [], [], []
        for term, points, neighbours, counts, moves in zip(self.sheet["terms"], self.points, self.neighbours, self.counts, self.moves):
            errors, weights = [], []
            for c, others in enumerate(neighbours):
                for o in others:
                    errors.append(self.risk[self._slipped(points, c, o)] - self.risk)
                    weights.append(counts[c])
            e = np.concatenate(errors) if errors else np.empty(0)
            w = np.concatenate(weights) if weights else np.empty(0, dtype=np.int64)
            measured = int(sum(counts[c].sum() for c, others in enumerate(neighbours) if others))
            per_term.append({"term": term["name"], "label": term["label"], **_summary(e, w, int(counts[moves].sum()), measured)})
            all_errors.append(e)
            all_weights.append(w)
        overall = _summary(np.concatenate(all_errors) if all_errors else np.empty(0),
                           np.concatenate(all_weights) if all_weights else np.empty(0, dtype=np.int64), self.patients_moved, self.n)
        by_total = self.counts[0].sum(axis=0) if self.counts else np.zeros(nt, dtype=np.int64)
        positions = np.arange(nt)
        off_errors, off_weights, off_moved = [], [], np.zeros(nt, dtype=bool)
        for step in (-1, 1):
            ok = (positions + step >= 0) & (positions + step < nt)
            off_errors.append(self.risk[positions[ok] + step] - self.risk[ok])
            off_weights.append(by_total[ok])
            if self.has_bands:
                off_moved[ok] |= self.band[positions[ok] + step] != self.band[ok]
        return {
            "what": "risk error (risk of the slipped total - risk of the right total) for one slip at a time",
            "neighbour_row": {"per_term": per_term, "overall": overall},
            "total_off_by_one": _summary(np.concatenate(off_errors), np.concatenate(off_weights), int(by_total[off_moved].sum()), self.n),
            "bands": self.has_bands,
        }


def slip_figures(sheet: dict, scored: ScoredCohort) -> dict:
    """The slip figures of a sheet on one scored cohort (`SlipTally` of it)."""
    return SlipTally(sheet).add(scored).figures()
