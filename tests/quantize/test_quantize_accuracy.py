"""Figures agree with scikit-learn's metrics and a statsmodels logistic fit on the same arrays."""

import numpy as np
import pytest
import statsmodels.api as sm
from sklearn.metrics import brier_score_loss, roc_auc_score

from scorecard.model import logistic
from scorecard.quantize.accuracy import doubled, expected_auc, full_figures, recalibration


@pytest.fixture
def arrays():
    rng = np.random.default_rng(3)
    model_lo = rng.normal(-1.2, 1.1, 3000)
    sheet_lo = 0.4 * np.round((model_lo + rng.normal(0, 0.2, 3000)) / 0.4)  # ties, like integer totals
    return model_lo, sheet_lo


def test_auc_matches_sklearn(arrays):
    model_lo, sheet_lo = arrays
    p = logistic(model_lo)
    y, s, w = doubled(p, sheet_lo)
    # scikit-learn roc_auc_score with sample weights on the doubled arrays (ties count one half)
    assert expected_auc(p, sheet_lo) == pytest.approx(roc_auc_score(y, s, sample_weight=w), abs=1e-12)
    # with real 0/1 outcomes and unit weights it is the ordinary AUC
    outcome = (np.random.default_rng(4).random(3000) < p).astype(float)
    assert expected_auc(outcome, sheet_lo) == pytest.approx(roc_auc_score(outcome, sheet_lo), abs=1e-12)


def test_full_figures_match_references(arrays):
    model_lo, sheet_lo = arrays
    p, q = logistic(model_lo), logistic(sheet_lo)
    bands = [{"name": "low", "upper_risk": 0.1, "wording": "x"}, {"name": "high", "upper_risk": None, "wording": "x"}]
    f = full_figures(model_lo, sheet_lo, 0.05, bands, bootstrap=50)
    y, _, w = doubled(p, q)
    assert f["auc_model"] == pytest.approx(roc_auc_score(y, np.concatenate([model_lo] * 2), sample_weight=w), abs=1e-12)
    assert f["auc_loss"] == pytest.approx(f["auc_model"] - roc_auc_score(y, np.concatenate([sheet_lo] * 2), sample_weight=w), abs=1e-12)
    # scikit-learn brier_score_loss on the same arrays
    assert f["brier_sheet"] == pytest.approx(brier_score_loss(y, np.concatenate([q, q]), sample_weight=w), abs=1e-12)
    assert f["brier_model"] == pytest.approx(np.mean(p * (1 - p)), abs=1e-12)  # expected Brier of the truth
    err = np.abs(q - p)
    assert f["max_abs_risk_error"] == pytest.approx(err.max())
    assert f["p99_abs_risk_error"] == pytest.approx(np.quantile(err, 0.99))
    assert f["share_over_risk_error"] == pytest.approx(np.mean(err > 0.05))
    assert f["band_agreement"] == pytest.approx(np.mean((p < 0.1) == (q < 0.1)))
    lo, hi = f["auc_loss_ci"]
    assert lo <= f["auc_loss"] <= hi


def test_recalibration_matches_statsmodels(arrays):
    model_lo, sheet_lo = arrays
    p = logistic(model_lo)
    a, b = recalibration(p, sheet_lo)
    # statsmodels GLM, binomial family, fractional response p on the sheet's log-odds (quasi-likelihood)
    fit = sm.GLM(p, sm.add_constant(sheet_lo), family=sm.families.Binomial()).fit()
    assert a == pytest.approx(fit.params[0], abs=1e-7)
    assert b == pytest.approx(fit.params[1], abs=1e-7)
    # a sheet equal to the model is perfectly calibrated to it
    a0, b0 = recalibration(p, model_lo)
    assert a0 == pytest.approx(0.0, abs=1e-8) and b0 == pytest.approx(1.0, abs=1e-8)
