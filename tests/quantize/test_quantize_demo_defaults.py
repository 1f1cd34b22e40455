"""The default bound is one the demo's true model meets (docs/quantization.md says why it is not tighter)."""

from scorecard.demo import true_model
from scorecard.quantize import Bound, quantize_model
from scorecard.sheet import validate_sheet_dict


def test_demo_meets_the_default_bound():
    bound = Bound()
    doc = quantize_model(true_model(), bootstrap=0)
    validate_sheet_dict(doc)
    a = doc["achieved"]
    assert a["auc_loss"] <= bound.max_auc_loss
    assert a["share_over_risk_error"] <= bound.risk_error_share
    assert doc["total"]["max"] - doc["total"]["min"] <= bound.max_total_points
    # the pair term is printed as a grid, albumin keeps its not-measured row
    kinds = {t["name"]: t for t in doc["terms"]}
    assert any(t["kind"] == "pair" for t in doc["terms"])
    assert kinds["albumin"]["rows"][-1].get("missing") is True
    # the care-process flag with no effect in the true model is dropped, and the sheet says why
    reasons = {d["name"]: d["reason"] for d in doc["dropped_terms"]}
    assert reasons.get("geriatric_review", "").startswith("it has no effect")  # its true effect is 0
    assert all(d["reason"] for d in doc["dropped_terms"])
