"""Printed ranges, risk texts and the row-lookup rule."""

import math
from decimal import Decimal

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.sheet import range_text, risk_text, round_half_up, round_half_up_array, row_index, row_indices


@pytest.mark.parametrize(
    "lower,upper,decimals,text",
    [
        (None, 70, 0, "≤ 69"),
        (70, 80, 0, "70–79"),
        (80, None, 0, "≥ 80"),
        (None, 32.5, 1, "≤ 32.4"),
        (36.5, 37.5, 1, "36.5–37.4"),
        (3, 4, 0, "3"),
        (-2, 1, 0, "-2–0"),
        (0.1, 0.25, 2, "0.10–0.24"),
        (None, None, 0, "any measured value"),
    ],
)
def test_range_text(lower, upper, decimals, text):
    assert range_text(lower, upper, decimals) == text


@pytest.mark.parametrize(
    "risk,text",
    [
        (0.0004, "<0.1%"), (0.0005, "0.1%"), (0.0123, "1.2%"), (0.075, "7.5%"), (0.0994, "9.9%"),
        (0.0996, "10%"), (0.235, "24%"), (0.994, "99%"), (0.996, "99.6%"), (0.9995, ">99.9%"), (0.0, "<0.1%"), (1.0, ">99.9%"),
    ],
)
def test_risk_text(risk, text):
    # thresholds: one decimal below 10 %, whole percent above, never 0 % or 100 % (docs/sheet-document.md)
    assert risk_text(risk) == text


def test_round_half_up_like_a_person_writes_it():
    assert round_half_up(69.5, 0) == 70
    assert round_half_up(69.49, 0) == 69
    assert round_half_up(2.675, 2) == 268  # binary float would give 267
    assert round_half_up(-2.5, 0) == -2  # half up = towards +infinity
    assert round_half_up(37.25, 1) == 373


@settings(max_examples=150, deadline=None)
@given(st.lists(st.integers(min_value=-300, max_value=300), min_size=1, max_size=6, unique=True),
       st.integers(min_value=0, max_value=3),
       st.lists(st.floats(min_value=-30, max_value=30, allow_nan=False), min_size=1, max_size=40))
def test_printed_rows_cover_every_value_once(cut_units, decimals, values):
    """Property: every printed value at the sheet's precision is in exactly one row, and the row's text
    (read as a person would: from..to) contains it - no gap, no overlap."""
    cuts = sorted(cut_units)
    step = Decimal(1).scaleb(-decimals)
    bounds = [None] + [float(Decimal(c) * step) for c in cuts] + [None]
    rows = [{"lower": bounds[i], "upper": bounds[i + 1]} for i in range(len(bounds) - 1)]
    texts = [range_text(r["lower"], r["upper"], decimals) for r in rows]
    lo_u, hi_u = cuts[0] - 3, cuts[-1] + 3
    for u in range(lo_u, hi_u + 1):
        v = float(Decimal(u) * step)
        inside = [i for i, t in enumerate(texts) if _text_contains(t, u, decimals)]
        assert len(inside) == 1, (u, texts)
        assert row_index(rows, v, decimals) == inside[0]
    # any raw measurement: the vectorised lookup agrees with the scalar rule
    got = row_indices(rows, np.array(values), decimals)
    want = [row_index(rows, v, decimals) for v in values]
    assert got.tolist() == want


def _text_contains(text: str, u: int, decimals: int) -> bool:
    def to_units(s):
        return int((Decimal(s).scaleb(decimals)).to_integral_value())

    if text.startswith("≤ "):
        return u <= to_units(text[2:])
    if text.startswith("≥ "):
        return u >= to_units(text[2:])
    if "–" in text[1:]:
        k = text.index("–", 1)
        return to_units(text[:k]) <= u <= to_units(text[k + 1:])
    return u == to_units(text)


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=-1e4, max_value=1e4, allow_nan=False), st.integers(min_value=0, max_value=3))
def test_vectorised_rounding_matches_decimal(value, decimals):
    # reference: Python's decimal module (standard library), value as written (shortest repr)
    scaled = Decimal(repr(value)).scaleb(decimals)
    want = math.floor(scaled + Decimal("0.5"))
    assert round_half_up(value, decimals) == want
    got = round_half_up_array(np.array([value]), decimals)[0]
    # the array rule agrees whenever the value has at most decimals + 6 places
    if Decimal(repr(value)).as_tuple().exponent >= -(decimals + 6):
        assert got == want


def test_missing_value_goes_to_missing_row():
    rows = [{"lower": None, "upper": 5}, {"lower": 5, "upper": None}, {"missing": True}]
    assert row_index(rows, None, 0) == 2
    assert row_indices(rows, np.array([np.nan, 4.5, 4.49]), 0).tolist() == [2, 1, 0]
    assert row_index(rows[:2], float("nan"), 0) == -1


@pytest.mark.parametrize(
    "labels,name",
    [
        # the wording asked for in issue 13 (a pair named in words: each label joined by "with")
        (["Age", "Cognitive screen score (0–10)"], "Age with cognitive screen score (0–10)"),
        (["Age", "ASA grade"], "Age with ASA grade"),  # an abbreviation keeps its capitals
        (["Age", "pH"], "Age with pH"),
        (["Lives (before admission)", "Delirium before"], "Lives (before admission) with delirium before"),
    ],
)
def test_a_pair_is_named_in_words(labels, name):
    from scorecard.sheet.printed import pair_effect_name, pair_name

    assert pair_name(labels) == name
    assert pair_effect_name(labels).startswith(name + ", ") and " x " not in pair_name(labels)


def test_model_terms_are_named_by_their_labels(tmp_path):
    from scorecard.demo import true_model
    from scorecard.sheet.printed import term_label

    model = true_model()
    pair = next(t for t in model.terms if t.kind == "pair")
    labels = [model.feature(n).label for n in pair.features]
    assert term_label(model, pair) == term_label(model, pair.name) == f"{labels[0]} with {labels[1][0].lower()}{labels[1][1:]}"
    single = next(t for t in model.terms if t.kind != "pair")
    assert term_label(model, single) == model.feature(single.feature).label
