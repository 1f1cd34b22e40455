"""`score`: patients land in the row a person reading the printed page would pick, and the arithmetic is the
sheet's own. Expected rows below were read off the hand-built sheet (tests/audit/handmade.py) by eye."""

from __future__ import annotations

import math
from decimal import ROUND_FLOOR, Decimal

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import expit

from scorecard.audit.paper import round_half_up_units, score_cohort
from scorecard.cli import main
from scorecard.errors import UserError
from scorecard.jsondoc import pretty_text
from scorecard.sheet import row_indices
from tests.audit.handmade import model_dict, sheet_dict

COLUMNS = ["age", "temperature", "cognition", "residence", "prior_delirium"]


def frame(rows: list[dict]) -> pd.DataFrame:
    f = pd.DataFrame([{c: str(r.get(c, "")) for c in COLUMNS} for r in rows], dtype=object)
    f.attrs["source"] = "cohort.csv"
    return f


def choice(scored, term: str) -> list[str]:
    t = next(t for t in scored.terms if t.name == term)
    return [t.texts[i] for i in t.index]


BASE = {"age": 75, "temperature": "37.0", "cognition": 9, "residence": "home", "prior_delirium": "no"}


@pytest.mark.parametrize("value, row", [
    ("80", "80–89"),        # exactly on a cut: lower <= value
    ("79", "70–79"),        # one printed unit below the cut
    ("81", "80–89"),        # one printed unit above
    ("79.5", "80–89"),      # more decimals than printed: 79.5 rounds half up to 80
    ("79.49", "70–79"),     # ... and 79.49 rounds to 79
    ("79.4999999", "70–79"),
    ("69.5", "70–79"),      # the example printed on the sheet: 69.5 counts as 70
    ("105", "≥ 90"),        # above the training range (max 100): the open last row
    ("40", "≤ 69"),         # below the training range (min 60): the open first row
])
def test_age_lands_in_the_printed_row(value, row):
    scored = score_cohort(sheet_dict(), frame([{**BASE, "age": value}]))
    assert choice(scored, "age") == [row]


@pytest.mark.parametrize("value, row", [
    ("37.5", "37.5–38.4"),   # on the cut
    ("37.4", "36.0–37.4"),   # one printed unit (0.1) below
    ("37.45", "37.5–38.4"),  # 37.45 rounds half up to 37.5 (binary float would say 37.4499...)
    ("37.44", "36.0–37.4"),
    ("36.45", "36.0–37.4"),  # 36.45 -> 36.5, still in 36.0-37.4
    ("35.95", "36.0–37.4"),  # 35.95 -> 36.0: on the cut
    ("35.94", "≤ 35.9"),
    ("38.45", "≥ 38.5"),
    ("", "not measured"),    # missing -> its own row
    ("NA", "not measured"),
    ("31", "≤ 35.9"),        # out of range low
])
def test_temperature_lands_in_the_printed_row(value, row):
    scored = score_cohort(sheet_dict(), frame([{**BASE, "temperature": value}]))
    assert choice(scored, "temperature") == [row]


def test_categories_flags_and_the_pair_grid():
    rows = [
        {**BASE, "residence": "care_home", "prior_delirium": "yes", "age": 85, "cognition": 3},
        {**BASE, "residence": "", "prior_delirium": "0", "age": 79, "cognition": 3},
        {**BASE, "residence": "mars", "prior_delirium": "1", "age": 80, "cognition": ""},
    ]
    scored = score_cohort(sheet_dict(), frame(rows))
    assert choice(scored, "residence") == ["Care home", "not measured", "not measured"]  # unseen -> policy 'missing'
    assert choice(scored, "prior_delirium") == ["Yes", "No", "Yes"]
    assert choice(scored, "age:cognition") == ["≥ 80 / ≤ 3", "≤ 79 / ≤ 3", "not measured"]
    pair = next(t for t in scored.terms if t.name == "age:cognition")
    assert pair.patient_points().tolist() == [3, 0, 0]
    assert any("mars" in note for note in scored.notes)


def test_a_table_without_a_not_measured_row_says_measure_first_and_score_refuses():
    # the printed rule (render prints "not measured: measure first, then score") is followed, as the model does
    rows = [BASE, {**BASE, "prior_delirium": ""}]
    with pytest.raises(UserError, match=r"row 2, column 'prior_delirium': not measured, and the sheet says to measure first"):
        score_cohort(sheet_dict(), frame(rows))


def test_unseen_level_with_policy_error_names_row_and_column():
    sheet = sheet_dict()
    next(t for t in sheet["terms"] if t["name"] == "residence")["unseen"] = "error"
    with pytest.raises(UserError, match=r"row 2, column 'residence': level 'mars'"):
        score_cohort(sheet, frame([BASE, {**BASE, "residence": "mars"}]))


def test_total_and_risk_follow_the_sheets_own_arithmetic():
    rng = np.random.default_rng(4)
    n = 400
    rows = [{"age": int(a), "temperature": f"{t:.2f}", "cognition": int(c), "residence": r, "prior_delirium": p}
            for a, t, c, r, p in zip(rng.integers(55, 105, n), rng.normal(37.2, 0.9, n), rng.integers(0, 11, n),
                                     rng.choice(["home", "care_home", "hospital", ""], n), rng.choice(["0", "1"], n))]
    sheet = sheet_dict()
    scored = score_cohort(sheet, frame(rows))
    by_hand = sum(t.patient_points() for t in scored.terms)
    assert np.array_equal(scored.total, by_hand)
    # outside reference: scipy's expit is the logistic function the sheet document defines the risk with
    scale = sheet["scale"]
    assert np.allclose(scored.risk, expit(scale["offset"] + scale["logodds_per_point"] * scored.total), rtol=0, atol=1e-9)  # risks stored at 11 digits (jsondoc)


def test_continuous_rows_agree_with_the_shared_printed_rule():
    # the sheet module's own row lookup (what quantize and render use) must land every value in the same row
    sheet = sheet_dict()
    term = next(t for t in sheet["terms"] if t["name"] == "temperature")
    values = np.round(np.random.default_rng(1).uniform(34, 40, 3000), 3)
    scored = score_cohort(sheet, frame([{**BASE, "temperature": repr(float(v))} for v in values]))
    ours = next(t for t in scored.terms if t.name == "temperature").index
    assert np.array_equal(ours, row_indices(term["rows"], values, term["decimals"]))


@settings(max_examples=300, deadline=None)
@given(whole=st.integers(0, 99999), fraction=st.integers(0, 999999), places=st.integers(0, 6), decimals=st.integers(0, 3),
       negative=st.booleans())
def test_rounding_matches_decimal_arithmetic(whole, fraction, places, decimals, negative):
    # outside reference: Python's decimal module rounding the written number exactly (half towards +infinity)
    text = f"{'-' if negative else ''}{whole}" + (f".{fraction % 10**places:0{places}d}" if places else "")
    exact = (Decimal(text).scaleb(decimals) + Decimal("0.5")).to_integral_value(rounding=ROUND_FLOOR)
    assert round_half_up_units(np.array([float(text)]), decimals)[0] == float(exact)


@pytest.mark.parametrize("text, decimals, units", [("2.675", 2, 268), ("36.45", 1, 365), ("1.005", 2, 101), ("0.285", 2, 29),
                                                   ("69.5", 0, 70), ("-0.5", 0, 0)])
def test_rounding_known_binary_traps(text, decimals, units):
    # each of these is stored in binary just below the tie (common practice knowledge: 2.675 -> 2.67499999...)
    assert round_half_up_units(np.array([float(text)]), decimals)[0] == units
    assert not math.isnan(units)


# -- the command ------------------------------------------------------------------------------------


@pytest.fixture()
def files(tmp_path):
    (tmp_path / "sheet.json").write_text(pretty_text(sheet_dict()))
    (tmp_path / "model.json").write_text(pretty_text(model_dict()))
    (tmp_path / "cohort.csv").write_text(
        "id,age,temperature,cognition,residence,prior_delirium\n"
        "a,69.5,36.45,3,home,yes\nb,79.4,,8,care_home,no\nc,101,38.49,,hospital,no\n")
    return tmp_path


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def test_score_command_writes_rows_points_total_and_risk(files):
    out = files / "scored.csv"
    result = run("score", files / "sheet.json", files / "cohort.csv", "-o", out, "--model", files / "model.json", "--keep", "id")
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out, dtype=str, keep_default_na=False)
    assert table["row:age"].tolist() == ["70–79", "70–79", "≥ 90"]
    assert table["row:temperature"].tolist() == ["36.0–37.4", "not measured", "≥ 38.5"]
    assert table["points:age"].tolist() == ["2", "2", "6"]
    points = table[[c for c in table.columns if c.startswith("points:")]].astype(int).sum(axis=1)
    assert (points == table["total"].astype(int)).all()
    assert table["sheet_risk_text"].tolist()[0] == "38%"
    assert np.allclose(table["sheet_risk"].astype(float) - table["model_risk"].astype(float), table["risk_difference"].astype(float))


def test_score_bad_inputs_are_one_line_exit_2(files):
    (files / "nocog.csv").write_text("age,temperature,residence,prior_delirium\n70,37,home,no\n")
    result = run("score", files / "sheet.json", files / "nocog.csv", "-o", files / "x.csv")
    assert result.exit_code == 2 and "'cognition'" in result.output and len(result.output.strip().splitlines()) == 1
    (files / "empty.csv").write_text(",".join(COLUMNS) + "\n")
    result = run("score", files / "sheet.json", files / "empty.csv", "-o", files / "x.csv")
    assert result.exit_code == 2 and "no data rows" in result.output
    result = run("score", files / "sheet.json", files / "cohort.csv", "-o", files / "cohort.csv")
    assert result.exit_code == 2 and "input" in result.output
    other = model_dict()
    other["intercept"] = -1.0
    (files / "other.json").write_text(pretty_text(other))
    result = run("score", files / "sheet.json", files / "cohort.csv", "-o", files / "x.csv", "--model", files / "other.json")
    assert result.exit_code == 2 and "fingerprint" in result.output and len(result.output.strip().splitlines()) == 1
    assert not (files / "x.csv").exists()


def test_wrong_units_are_warned_loudly(files):
    # temperatures in Fahrenheit: all outside the training range 35-40 °C
    (files / "fahrenheit.csv").write_text("age,temperature,cognition,residence,prior_delirium\n70,98.6,8,home,no\n80,101.2,5,home,no\n")
    result = CliRunner().invoke(main, ["score", str(files / "sheet.json"), str(files / "fahrenheit.csv"), "-o", str(files / "x.csv")])
    assert result.exit_code == 0
    assert "WARNING" in result.output and "'temperature'" in result.output and "wrong units" in result.output
