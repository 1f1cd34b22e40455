"""`quantize` meets every per-patient bound that is set, and refuses (exit 3, naming the option) when it
cannot; figures checked against numpy percentiles of the risks computed here from the sheet document."""

import numpy as np
import pytest

from quantize_models import sheet_total, small_model_dict
from scorecard.errors import CheckFailed
from scorecard.model import model_from_dict, predict_logodds
from scorecard.quantize import Bound, quantize_model
from scorecard.quantize.population import synthetic_frame

BANDS = [{"name": "low", "upper_risk": 0.15, "wording": "w"}, {"name": "moderate", "upper_risk": 0.3, "wording": "w"},
         {"name": "high", "upper_risk": None, "wording": "w"}]


def _sheet_risk(doc, frame):
    """Each patient's risk read from the sheet as a person would: row by row, then the conversion table."""
    risk_at = {c["total"]: c["risk"] for c in doc["conversion"]}
    return np.array([risk_at[sheet_total(doc, row)] for row in frame.to_dict("records")])


@pytest.fixture(scope="module")
def model():
    return model_from_dict(small_model_dict(with_pair=False))


def test_every_per_patient_bound_set_is_met(model):
    bound = Bound(max_auc_loss=0.05, risk_error_share=0.3, min_band_agreement=0.85, max_percentile_risk_error=0.12,
                  max_largest_risk_error=0.25, max_rows=6, max_total_points=40)
    doc = quantize_model(model, bound=bound, bands=BANDS, bootstrap=0)
    frame = synthetic_frame(model, 20000, 0)  # the population the sheet is judged on
    lo, _ = predict_logodds(model, frame)
    p = 1 / (1 + np.exp(-lo))
    err = np.abs(_sheet_risk(doc, frame) - p)
    assert np.percentile(err, 95) <= 0.12 + 1e-9  # numpy percentile, the outside reference
    assert err.max() <= 0.25 + 1e-9
    band = lambda r: np.searchsorted([0.15, 0.3], r, side="right")  # noqa: E731
    # a reader's band is read off the total, at the band edges the sheet prints (first_total of each band)
    totals = np.array([sheet_total(doc, row) for row in frame.to_dict("records")])
    on_sheet = np.searchsorted([b["first_total"] for b in doc["bands"][1:]], totals, side="right")
    assert np.mean(on_sheet == band(p)) >= 0.85
    assert doc["bound"]["min_band_agreement"] == 0.85 and doc["bound"]["max_largest_risk_error"] == 0.25


def test_without_bands_band_agreement_is_not_bounded(model):
    doc = quantize_model(model, bound=Bound(max_auc_loss=0.05, risk_error_share=0.3), bootstrap=0)
    assert doc["bound"]["min_band_agreement"] is None and doc["achieved"]["band_agreement"] is None


def test_an_unreachable_largest_error_is_refused_naming_the_option(model):
    with pytest.raises(CheckFailed) as failed:
        quantize_model(model, bound=Bound(max_auc_loss=0.05, risk_error_share=0.3, max_largest_risk_error=0.001,
                                          max_rows=2, max_total_points=10), bootstrap=0)
    assert "largest |Δrisk|" in str(failed.value) and "--max-largest-risk-error" in str(failed.value)


def test_the_bounds_bind(model):
    # without them the simplest sheet of this model is further off: the bounds above change the sheet
    from quantize_models import POPULATION_ONLY
    doc = quantize_model(model, bound=Bound(max_auc_loss=0.05, risk_error_share=0.3, max_rows=6, max_total_points=40,
                                            **POPULATION_ONLY), bands=BANDS, bootstrap=0)
    a = doc["achieved"]
    assert a["max_abs_risk_error"] > 0.25 and a["p95_abs_risk_error"] > 0.12 and a["band_agreement"] < 0.85
