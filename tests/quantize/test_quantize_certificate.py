"""The worst-case certificate is never exceeded: a randomised search over input combinations, scored on
the sheet exactly as a nurse would (round half up, find the row, add the points), against the model."""

import math

import numpy as np
import pandas as pd

from quantize_models import POPULATION_ONLY, sheet_total as _sheet_total
from scorecard.model import predict_logodds
from scorecard.quantize import Bound, quantize_model


def _random_patients(rng, n):
    def edgy(lo, hi, size):
        # mix of plain values, values right at half units (the rounding boundary) and far outside the range
        x = rng.uniform(lo - 15, hi + 15, size)
        half = np.floor(rng.uniform(lo, hi, size)) + 0.5
        tiny = half + rng.choice([-1e-9, 0.0, 1e-9], size)
        pick = rng.integers(0, 3, size)
        return np.where(pick == 0, x, np.where(pick == 1, half, tiny))

    albumin = edgy(20, 50, n)
    albumin[rng.random(n) < 0.2] = np.nan
    return pd.DataFrame({
        "age": edgy(60, 100, n), "sodium": edgy(120, 160, n), "albumin": albumin,
        "prior_delirium": rng.integers(0, 2, n).astype(float),
        "residence": rng.choice(["home", "family", "care_home"], n),
        "haemoglobin": np.where(rng.random(n) < 0.1, np.nan, edgy(70, 170, n)),
    })


def test_certificate_holds_for_random_and_boundary_inputs(small_model):
    doc = quantize_model(small_model, bound=Bound(max_auc_loss=0.05, max_risk_error=0.1, risk_error_share=0.3,
                                                  max_rows=4, max_total_points=20, **POPULATION_ONLY), bootstrap=0)
    cert = doc["certificate"]
    rng = np.random.default_rng(7)
    patients = _random_patients(rng, 3000)
    model_lo, _ = predict_logodds(small_model, patients)
    a, s = doc["scale"]["offset"], doc["scale"]["logodds_per_point"]
    by_total = {e["total"]: e["max_risk_error"] for e in cert["risk_error_by_total"]}
    worst = 0.0
    for i, row in enumerate(patients.to_dict("records")):
        total = _sheet_total(doc, row)
        sheet_lo = a + s * total
        gap = abs(sheet_lo - model_lo[i])
        worst = max(worst, gap)
        assert gap <= cert["max_logodds_error"] + 1e-9, (row, gap)
        risk_gap = abs(1 / (1 + math.exp(-sheet_lo)) - 1 / (1 + math.exp(-model_lo[i])))
        assert risk_gap <= by_total[total] + 1e-12
    # the bound is a real bound, not a vacuous one: random inputs get within a factor of it
    assert worst > 0.3 * cert["max_logodds_error"]
