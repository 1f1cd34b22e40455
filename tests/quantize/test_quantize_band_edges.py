"""Band edges on the totals (issue 10, 2d): the exact 1-D search equals brute force over every edge choice, the
quantizer's sheet carries the edges it searched, and its band agreement is the one a person reading the sheet
gets (numpy, computed here from the document); the edge weights rise only near a band limit."""

import itertools
import re

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from quantize_models import sheet_total, small_model_dict
from scorecard.errors import UserError
from scorecard.model import model_from_dict, predict_logodds
from scorecard.quantize import Bound, quantize_model
from scorecard.quantize.band_edges import agreement_of_edges, best_band_edges
from scorecard.quantize.population import synthetic_frame
from scorecard.quantize.quantizer import edge_weight_factor
from scorecard.sheet import validate_sheet_dict

BANDS = [{"name": "low", "upper_risk": 0.15, "wording": "w"}, {"name": "moderate", "upper_risk": 0.3, "wording": "w"},
         {"name": "high", "upper_risk": None, "wording": "w"}]


@st.composite
def cases(draw):
    lowest = draw(st.integers(-3, 3))
    highest = lowest + draw(st.integers(0, 6))
    n_bands = draw(st.integers(1, 4))
    n = draw(st.integers(0, 25))
    totals = draw(st.lists(st.integers(lowest, highest), min_size=n, max_size=n))
    bands = draw(st.lists(st.integers(0, n_bands - 1), min_size=n, max_size=n))
    preferred = sorted(draw(st.lists(st.integers(lowest, highest + 1), min_size=n_bands - 1, max_size=n_bands - 1)))
    return lowest, highest, n_bands, np.array(totals, dtype=int), np.array(bands, dtype=int), [lowest] + preferred


@settings(max_examples=300, deadline=None)
@given(cases())
def test_the_search_equals_brute_force_over_every_edge_choice(case):
    lowest, highest, n_bands, totals, model_band, preferred = case
    every = [[lowest, *e] for e in itertools.combinations_with_replacement(range(lowest, highest + 2), n_bands - 1)]
    scored = [(agreement_of_edges(totals, model_band, e), -sum(abs(a - b) for a, b in zip(e, preferred)), e) for e in every]
    best_agreement = max(s[0] for s in scored)
    nearest = max(s[1] for s in scored if s[0] == best_agreement)
    got = best_band_edges(totals, model_band, n_bands, lowest, highest, preferred)
    assert got[0] == lowest and all(a <= b for a, b in zip(got, got[1:])) and got[-1] <= highest + 1
    assert agreement_of_edges(totals, model_band, got) == best_agreement
    # ties go to the edges nearest the preferred ones (those the printed risks give)
    assert -sum(abs(a - b) for a, b in zip(got, preferred)) == nearest


def test_a_worked_case():
    # totals 0..3; at total 1 most patients are in band 1 although its printed risk would put it in band 0
    totals = np.array([0, 0, 1, 1, 1, 2, 3, 3])
    model_band = np.array([0, 0, 1, 1, 0, 1, 2, 2])
    assert best_band_edges(totals, model_band, 3, 0, 3, preferred=[0, 2, 3]) == [0, 1, 3]
    assert agreement_of_edges(totals, model_band, [0, 1, 3]) == 7


@pytest.fixture(scope="module")
def searched():
    model = model_from_dict(small_model_dict(with_pair=False))
    bound = Bound(max_auc_loss=0.05, risk_error_share=0.3, min_band_agreement=0.8, max_percentile_risk_error=0.15,
                  max_rows=4, max_total_points=20)
    return model, quantize_model(model, bound=bound, bands=BANDS, bootstrap=0)


def test_the_sheet_carries_its_band_edges_and_its_agreement_is_what_a_reader_gets(searched):
    model, doc = searched
    assert validate_sheet_dict(doc) is None
    firsts = [b["first_total"] for b in doc["bands"]]
    assert firsts[0] == doc["total"]["min"] and firsts == sorted(firsts)
    frame = synthetic_frame(model, 20000, 0)  # the population the sheet was chosen on
    lo, _ = predict_logodds(model, frame)
    p = 1 / (1 + np.exp(-lo))
    totals = np.array([sheet_total(doc, row) for row in frame.to_dict("records")])
    model_band = np.searchsorted([0.15, 0.3], p, side="right")
    by_total = np.searchsorted(firsts[1:], totals, side="right")
    assert doc["report"]["in_sample"]["band_agreement"] == pytest.approx(np.mean(by_total == model_band), abs=1e-12)
    # the searched edges put at least as many patients in their model band as the printed risks' crossings
    risk_at = {c["total"]: c["risk"] for c in doc["conversion"]}
    by_risk = np.searchsorted([0.15, 0.3], [risk_at[t] for t in totals], side="right")
    assert np.mean(by_total == model_band) >= np.mean(by_risk == model_band)


def test_band_edges_at_the_risk_limits_leave_the_bands_to_the_printed_risk(searched):
    model, _ = searched
    doc = quantize_model(model, bound=Bound(max_auc_loss=0.05, risk_error_share=0.3, min_band_agreement=None,
                                            max_percentile_risk_error=None, max_rows=4, max_total_points=20),
                         bands=BANDS, bootstrap=0, band_edge_search=False)
    assert all("first_total" not in b for b in doc["bands"]) and validate_sheet_dict(doc) is None


def test_bad_band_edges_are_refused_by_the_document_rules(searched):
    _, doc = searched
    for change, words in ((lambda b: b[1].pop("first_total"), "on every band or on none"),
                          (lambda b: b[0].update(first_total=b[0]["first_total"] + 1), "must be the lowest total"),
                          (lambda b: b[2].update(first_total=b[1]["first_total"] - 1), "from the previous band"),
                          (lambda b: b[2].update(first_total=10_000), "one above the highest total")):
        bad = {**doc, "bands": [dict(b) for b in doc["bands"]]}
        change(bad["bands"])
        with pytest.raises(UserError, match=re.escape(words)):
            validate_sheet_dict(bad)


def test_edge_weights_rise_only_near_a_band_limit():
    z = np.log(np.array([0.15, 0.3, 0.02, 0.9]) / (1 - np.array([0.15, 0.3, 0.02, 0.9])))
    w = edge_weight_factor(z, BANDS, 2.0)
    assert w[0] == pytest.approx(3.0) and w[1] == pytest.approx(3.0) and w[2] < 1.001 and w[3] < 1.001
    assert np.all(edge_weight_factor(z, BANDS, 0.0) == 1) and np.all(edge_weight_factor(z, [], 2.0) == 1)
