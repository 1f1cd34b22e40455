"""One reading rule, implemented once per side and proved equal.

The sheet side (`scorecard.sheet.printed.read_units`, decimal arithmetic; its vectorised form, which the
quantiser uses) and the audit side (`scorecard.audit.paper.round_half_up_units`, rational arithmetic) are
written independently. Here they must agree with each other, and with Python's decimal module as the outside
reference, on values at and next to every tie: exactly half way (x.5 at the printed decimals), just below and
above it (128.4999997, the binary floats either side of 128.5), and, for completed units, at and next to every
whole unit. Then the same on the demo: the quantiser's own evaluation of its chosen sheet equals the audit's
scoring of the printed sheet, patient by patient, with values at ties, fractional ages and albumin not measured.
"""

import math
from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.audit.paper import round_half_up_units, score_cohort, sheet_logodds
from scorecard.demo import generate_cohort, true_model
from scorecard.errors import UserError
from scorecard.quantize.curves import _axis_pieces, _continuous_patient_pieces
from scorecard.quantize.quantizer import Bound, build_sheet, prepare, search
from scorecard.sheet.printed import COMPLETED, ROUNDED, read_units, read_units_array


def _reference(value: float, decimals: int, reading: str) -> int:
    """Python's decimal module on the number as written: ROUND_HALF_UP on a non-negative value is half up
    (half away from zero); ROUND_FLOOR is completed units (common practice: age in completed years)."""
    d = Decimal(repr(value))
    q = Decimal(1).scaleb(-decimals)
    rounding = ROUND_FLOOR if reading == COMPLETED else ROUND_HALF_UP
    return int(d.quantize(q, rounding=rounding).scaleb(decimals))


def _neighbours(centre_text: str) -> list[float]:
    c = float(centre_text)
    return [c, math.nextafter(c, -math.inf), math.nextafter(c, math.inf), c - 3e-7, c + 3e-7, c - 1e-9, c + 1e-9,
            c - 1e-12 * max(1.0, abs(c)), c + 1e-12 * max(1.0, abs(c))]


def _all_agree(values: list[float], decimals: int, reading: str) -> None:
    audit = round_half_up_units(np.array(values), decimals, reading)
    sheet = read_units_array(np.array(values), decimals, reading)
    for v, a, s in zip(values, audit, sheet):
        scalar = read_units(v, decimals, reading)
        assert a == s == scalar, (v, decimals, reading, a, s, scalar)
        if v >= 0:
            assert scalar == _reference(v, decimals, reading), (v, decimals, reading)


@settings(max_examples=400, deadline=None)
@given(k=st.integers(-10**6, 10**6), decimals=st.integers(0, 3))
def test_both_sides_agree_at_and_next_to_every_tie(k, decimals):
    tie = str(Decimal(2 * k + 1).scaleb(-decimals) / 2)          # exactly half way, e.g. 128.5
    whole = str(Decimal(k).scaleb(-decimals))                     # a whole printed unit, e.g. 128
    for reading in (ROUNDED, COMPLETED):
        _all_agree(_neighbours(tie) + _neighbours(whole), decimals, reading)


@settings(max_examples=200, deadline=None)
@given(x=st.floats(-1e6, 1e6, allow_nan=False), decimals=st.integers(0, 4))
def test_both_sides_agree_on_any_float(x, decimals):
    for reading in (ROUNDED, COMPLETED):
        _all_agree([x], decimals, reading)


@pytest.mark.parametrize("value, decimals, reading, units", [
    (128.4999997, 0, ROUNDED, 128),   # below the tie: down, on both sides (was 129 on the sheet side)
    (128.5, 0, ROUNDED, 129),         # the tie: up
    (math.nextafter(128.5, 0), 0, ROUNDED, 128),
    (2.675, 2, ROUNDED, 268),         # written 2.675, stored 2.67499999...: the written number counts
    (-2.5, 0, ROUNDED, -2),           # half up = towards +infinity
    (36.45, 1, ROUNDED, 365),
    (79.6, 0, COMPLETED, 79),         # completed years
    (80.0, 0, COMPLETED, 80),
    (79.99999999, 0, COMPLETED, 79),
    (37.25, 1, COMPLETED, 372),
])
def test_worked_examples(value, decimals, reading, units):
    assert read_units(value, decimals, reading) == units
    assert round_half_up_units(np.array([value]), decimals, reading)[0] == units


@pytest.mark.parametrize("reading", [ROUNDED, COMPLETED])
def test_the_quantisers_evaluation_puts_every_value_on_the_printed_side_of_every_cut(reading):
    """The quantiser's piece of each patient lies on the same side of every candidate cut as the sheet's
    reading rule says, at and next to every cut's tie."""
    feature = true_model().feature("temperature")
    feature.reading = reading
    ax = _axis_pieces(feature, [36.0, 37.05, 38.0], 1, 60)
    shift = Decimal("0") if reading == COMPLETED else Decimal("0.5")
    values = []
    for c in ax["cuts"]:
        values += _neighbours(str((Decimal(int(c)) - shift).scaleb(-1)))
    x = np.array(values)
    piece = _continuous_patient_pieces(ax, x)
    above = ax["piece_cuts"][piece]  # how many candidate cuts each patient's piece lies at or above
    want = np.searchsorted(ax["cuts"].astype(float), round_half_up_units(x, 1, reading), side="right")
    assert np.array_equal(above, want)


@pytest.fixture(scope="module")
def demo_with_ties():
    """The demo's true model on 3000 invented patients, with values put at and next to printed ties: ages
    with fractions (completed years), temperatures at two decimals (ties at .x5), albumin often not measured."""
    cohort = generate_cohort(3000, seed=11)
    rng = np.random.default_rng(11)
    cohort["age"] = cohort["age"] + rng.choice([0.0, 0.5, 0.6, 0.99], len(cohort))
    cohort["temperature"] = np.round(cohort["temperature"] + rng.choice([-0.05, 0.0, 0.05, 0.04], len(cohort)), 2)
    model = true_model()
    problem = prepare(model, cohort, Bound())
    cand = search(problem)
    sheet = build_sheet(problem, cand, [], bootstrap=0)
    return model, cohort, problem, cand, sheet


def test_the_quantisers_sheet_log_odds_equal_the_audits_scoring_of_the_printed_sheet(demo_with_ties):
    model, cohort, problem, cand, sheet = demo_with_ties
    assert any(t.get("reading") == COMPLETED for t in sheet["terms"] if t["kind"] == "continuous")
    scored = score_cohort(sheet, cohort.astype(object).where(cohort.notna(), ""))
    assert np.allclose(sheet_logodds(sheet, scored.total), cand.sheet_logodds, rtol=0, atol=1e-9)
    albumin = next(t for t in scored.terms if t.name == "albumin")
    missing = cohort["albumin"].isna().to_numpy()
    assert missing.any() and all(albumin.texts[i] == "not measured" for i in albumin.index[missing])


def test_a_measurement_the_sheet_needs_is_refused_by_score_with_and_without_the_model(demo_with_ties):
    from scorecard.model import predict_logodds

    model, cohort, _, _, sheet = demo_with_ties
    patients = cohort.head(5).astype(object)
    patients.loc[patients.index[2], "sodium"] = ""
    with pytest.raises(UserError, match=r"row 3, column 'sodium': not measured, and the sheet says to measure first"):
        score_cohort(sheet, patients)
    with pytest.raises(UserError, match=r"row 3, column 'sodium': not measured"):
        predict_logodds(model, pd.DataFrame(patients))
