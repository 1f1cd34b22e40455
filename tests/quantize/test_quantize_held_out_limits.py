"""A held-out part is judged at one-sided 95 % confidence limits (issue 10, item 3: a sheet that only just meets a
bound on the patients held out is not offered as meeting it): Wilson limits checked against statsmodels'
`proportion_confint`, the order-statistic limit of a percentile by its coverage on simulated samples (numpy),
and `Bound.misses` on hand-made figures."""

import numpy as np
import pytest
from statsmodels.stats.proportion import proportion_confint

from scorecard.quantize import Bound
from scorecard.quantize.accuracy import CONFIDENCE, percentile_upper_limit, quick_figures, wilson_limit


@pytest.mark.parametrize("count,n", [(0, 50), (3, 50), (930, 1000), (1000, 1000), (12345, 13333)])
def test_wilson_limits_equal_statsmodels(count, n):
    low, high = proportion_confint(count, n, alpha=2 * (1 - CONFIDENCE), method="wilson")
    assert wilson_limit(count / n, n, upper=False) == pytest.approx(low, abs=1e-12)
    assert wilson_limit(count / n, n, upper=True) == pytest.approx(high, abs=1e-12)


def test_the_percentile_limit_covers_the_true_percentile_about_95_in_100_times():
    rng = np.random.default_rng(7)
    covered = np.mean([percentile_upper_limit(rng.uniform(size=1500), 95) >= 0.95 for _ in range(400)])
    assert 0.92 <= covered <= 0.985  # uniform: the true 95th percentile is 0.95


def test_a_held_out_figure_that_meets_the_bound_only_at_its_point_estimate_misses():
    bound = Bound(min_band_agreement=0.9, max_percentile_risk_error=0.06, risk_error_share=0.05)
    figs = {"auc_loss": 0.001, "share_over_risk_error": 0.01, "band_agreement": 0.905, "percentile_abs_risk_error": 0.059,
            "max_abs_risk_error": 0.2}
    assert bound.misses(figs) == []
    held = {**figs, "limits": {"confidence": 0.95, "band_agreement": 0.899, "percentile_abs_risk_error": 0.061,
                               "share_over_risk_error": 0.012}}
    assert bound.misses(held) == ["band_agreement", "percentile_risk_error"]


def test_quick_figures_carry_limits_only_when_asked():
    rng = np.random.default_rng(0)
    y = rng.normal(-1, 1, 3000)
    s = y + rng.normal(0, 0.2, 3000)
    bands = [{"name": "a", "upper_risk": 0.2, "wording": "w"}, {"name": "b", "upper_risk": None, "wording": "w"}]
    plain = quick_figures(y, s, 0.1, bands=bands)
    limited = quick_figures(y, s, 0.1, bands=bands, limits=True)
    assert "limits" not in plain
    lim = limited["limits"]
    assert lim["band_agreement"] < plain["band_agreement"] and lim["percentile_abs_risk_error"] >= plain["p95_abs_risk_error"]
    assert lim["share_over_risk_error"] >= plain["share_over_risk_error"]
