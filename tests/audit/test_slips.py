"""Slip robustness (`scorecard.audit.slips`, reported by `check` and `quantize`) on hand-made sheets whose slips
are worked out by hand from the logistic formula of docs/sheet-document.md (recomputed here with `math`)."""

from __future__ import annotations

import math

import pandas as pd
import pytest

from scorecard.audit.paper import score_cohort
from scorecard.audit.slips import slip_figures
from tests.audit.handmade import model_dict, sheet_dict


def _risk(sheet: dict, total: int) -> float:
    z = sheet["scale"]["offset"] + sheet["scale"]["logodds_per_point"] * total
    return 1 / (1 + math.exp(-z))


def _age_only() -> dict:
    """The hand-made model with its age table alone: rows ≤69, 70–79, 80–89, ≥90 at 0, 2, 4, 6 points."""
    m = model_dict()
    m["terms"] = [t for t in m["terms"] if t["name"] == "age"]
    return sheet_dict(m)


def _frame(ages: list[int]) -> pd.DataFrame:
    frame = pd.DataFrame({"age": [str(a) for a in ages]})
    frame.attrs["source"] = "hand-made"
    return frame


def test_each_neighbouring_row_slip_is_the_hand_worked_risk_change():
    sheet = _age_only()
    assert [r["points"] for r in sheet["terms"][0]["rows"]] == [0, 2, 4, 6]
    figures = slip_figures(sheet, score_cohort(sheet, _frame([65, 75, 95])))
    # by hand: 65 (0 pts) can slip to 2; 75 (2) to 0 or 4; 95 (6) to 4 -> four slips
    r = {t: _risk(sheet, t) for t in range(0, 7)}
    errors = [r[2] - r[0], r[0] - r[2], r[4] - r[2], r[4] - r[6]]
    age = figures["neighbour_row"]["per_term"][0]
    assert age["slips"] == 4 and age["patients"] == 3
    assert age["mean_abs_risk_error"] == pytest.approx(sum(map(abs, errors)) / 4, rel=1e-9)
    assert age["max_abs_risk_error"] == pytest.approx(max(map(abs, errors)), rel=1e-9)
    assert age["share_harmless"] == 0
    # bands low < 10 % <= moderate < 30 % <= high: which slips cross one, worked from the same risks
    band = lambda p: 0 if p < 0.1 else (1 if p < 0.3 else 2)  # noqa: E731
    crossing = {65: band(r[2]) != band(r[0]), 75: band(r[0]) != band(r[2]) or band(r[4]) != band(r[2]), 95: band(r[4]) != band(r[6])}
    assert age["patients_changing_band"] == sum(crossing.values())
    off = figures["total_off_by_one"]
    # 65 (total 0) only +1; 75 (2) both ways; 95 (6, the highest total) only -1
    off_errors = [r[1] - r[0], r[3] - r[2], r[1] - r[2], r[5] - r[6]]
    assert off["slips"] == 4 and off["max_abs_risk_error"] == pytest.approx(max(map(abs, off_errors)), rel=1e-9)


def test_rows_with_equal_points_make_harmless_slips_and_grids_slip_to_four_cells():
    sheet = sheet_dict()  # the full hand-made sheet: a pair grid age x cognition of 2 x 2 cells
    frame = pd.DataFrame({"age": ["85", "65"], "temperature": ["37.0", "37.0"], "cognition": ["2", "9"],
                          "residence": ["home", "home"], "prior_delirium": ["0", "0"]})
    frame.attrs["source"] = "hand-made"
    figures = slip_figures(sheet, score_cohort(sheet, frame))
    pair = next(t for t in figures["neighbour_row"]["per_term"] if t["term"] == "age:cognition")
    # a 2 x 2 grid: every cell has exactly two neighbouring cells (one across each axis)
    assert pair["slips"] == 4
    grid = next(t for t in sheet["terms"] if t["kind"] == "pair")["points"]
    # (≥80, ≤3) is worth 3 and its neighbours (≤79, ≤3) and (≥80, ≥4) are worth 0: both slips change the risk;
    # (≤79, ≥4) is worth 0 and its neighbours too: both harmless
    assert grid == [[0, 0], [3, 0]]
    assert pair["share_harmless"] == pytest.approx(0.5)
