"""`quantize` reports the slip robustness of its sheet with the sheet's own rule (`scorecard.sheet.slips`) on its
own rows, and it equals what `check`'s independent scoring of the same patients gives (`scorecard.audit`); among
roundings that meet the bound equally well the least fragile is kept (hand-made numbers)."""

import numpy as np
import pytest

from quantize_models import small_model_dict
from scorecard.audit.paper import score_cohort
from scorecard.audit.slips import slip_figures
from scorecard.model import model_from_dict
from scorecard.quantize import Bound, quantize_model
from scorecard.quantize.population import synthetic_frame
from scorecard.quantize.quantizer import EQUALLY_WELL, least_fragile

BANDS = [{"name": "low", "upper_risk": 0.15, "wording": "w"}, {"name": "moderate", "upper_risk": 0.3, "wording": "w"},
         {"name": "high", "upper_risk": None, "wording": "w"}]


@pytest.mark.parametrize("with_pair", [False, True])
def test_quantize_reports_the_slips_check_measures_on_the_same_patients(with_pair):
    model = model_from_dict(small_model_dict(with_pair=with_pair))
    doc = quantize_model(model, bound=Bound(max_auc_loss=0.05, risk_error_share=0.3, max_rows=4, max_total_points=20,
                                            max_percentile_risk_error=0.15, min_band_agreement=0.8),
                         bands=BANDS, bootstrap=0)
    frame = synthetic_frame(model, 10000, 1)  # the held-out synthetic draw the sheet's figures are reported on
    audited = slip_figures(doc, score_cohort(doc, frame.astype(str).replace({"nan": "", "None": ""})))
    reported = doc["report"]["slips"]
    for key in ("neighbour_row", "total_off_by_one"):
        a, q = (audited[key]["overall"], reported[key]["overall"]) if key == "neighbour_row" else (audited[key], reported[key])
        assert q["slips"] == a["slips"] and q["patients_changing_band"] == a["patients_changing_band"]
        for figure in ("mean_abs_risk_error", "p95_abs_risk_error", "max_abs_risk_error", "share_harmless"):
            assert q[figure] == pytest.approx(a[figure], abs=1e-12)
    assert [t["term"] for t in reported["neighbour_row"]["per_term"]] == [t["name"] for t in doc["terms"]]
    choice = doc["report"]["slip_choice"]
    assert sum(c["chosen"] for c in choice) == 1


def test_the_least_fragile_of_the_equally_accurate_is_kept():
    # (weighted error, fragility): the second is as accurate as the first within EQUALLY_WELL and less fragile;
    # the third is the least fragile but clearly less accurate, so it does not count as meeting the bound as well
    options = [(100.0, 0.05), (100.0 * (1 + EQUALLY_WELL / 2), 0.03), (100.0 * (1 + 3 * EQUALLY_WELL), 0.01)]
    assert least_fragile(options) == 1
    assert least_fragile([(5.0, 0.02), (5.0, 0.02)]) == 0  # ties: the first (the more accurate or earlier)
    assert least_fragile([(7.0, 0.04)]) == 0


def test_sheet_slips_rule_on_a_hand_made_table():
    # one table, rows at 0, 2, 5 points; patients on each row; conversion risk = total / 10 (hand-made)
    from scorecard.sheet.slips import slip_figures as rule

    class T:
        name, label = "x", "X"
        points = np.array([0, 2, 5])
        index = np.array([0, 1, 2])

    sheet = {"terms": [{"kind": "continuous", "rows": [{"text": "a"}, {"text": "b"}, {"text": "c"}]}],
             "conversion": [{"total": t, "risk": t / 10} for t in range(6)], "bands": []}
    figs = rule(sheet, np.array([0, 2, 5]), [T()])
    # slips by hand: 0->2 (+0.2), 2->0 (-0.2), 2->5 (+0.3), 5->2 (-0.3)
    assert figs["neighbour_row"]["overall"]["slips"] == 4
    assert figs["neighbour_row"]["overall"]["mean_abs_risk_error"] == pytest.approx(0.25)
    # off by one: 0->1 (+0.1), 2->1, 2->3 (0.1 each), 5->4 (0.1); 0-1 and 5+1 are not printed
    assert figs["total_off_by_one"]["slips"] == 4 and figs["total_off_by_one"]["max_abs_risk_error"] == pytest.approx(0.1)
