"""A published integer score given as a model quantises at scale 1 to exactly its own table, with zero loss.

CHA2DS2-VASc stroke score (Lip et al., Chest 2010), item points from memory: congestive heart failure 1,
hypertension 1, age 65-74 1, age >= 75 2, diabetes 1, prior stroke/TIA/thromboembolism 2, vascular
disease 1, female sex 1 (maximum 9). Given here as an additive model with 1 log-odds per point (the
intercept is an arbitrary baseline); age is recorded in whole years, so the model's age edges sit between
whole years (64.5, 74.5) as binned ages do.
"""

import numpy as np
import pytest

from scorecard.model import model_from_dict
from scorecard.quantize import Bound, quantize_model
from scorecard.sheet import validate_sheet_dict

ITEMS = {"heart_failure": 1, "hypertension": 1, "diabetes": 1, "stroke": 2, "vascular": 1}


def cha2ds2_vasc_model():
    features = [{"name": "age", "label": "Age", "kind": "continuous", "unit": "years", "decimals": 0,
                 "training_range": {"min": 40, "max": 100}, "missing": "error"},
                {"name": "sex", "label": "Sex", "kind": "categorical", "levels": ["male", "female"], "missing": "error"}]
    terms = [{"kind": "continuous", "name": "age", "feature": "age", "shape": "step", "edges": [64.5, 74.5],
              "scores": [0.0, 1.0, 2.0], "counts": [500, 300, 200]},
             {"kind": "categorical", "name": "sex", "feature": "sex", "levels": ["male", "female"], "scores": [0.0, 1.0],
              "counts": [550, 450], "unseen": "error"}]
    for name, pts in ITEMS.items():
        features.append({"name": name, "label": name.replace("_", " ").capitalize(), "kind": "flag", "missing": "error"})
        terms.append({"kind": "flag", "name": name, "feature": name, "scores": [0.0, float(pts)], "counts": [700, 300]})
    return model_from_dict({
        "format_version": 1, "document": "scorecard-model", "name": "CHA2DS2-VASc as a model", "version": "1",
        "outcome": {"event": "stroke", "horizon": "1 year", "population": "adults with atrial fibrillation"},
        "link": "logit", "intercept": -4.5, "features": features, "terms": terms, "provenance": {"source": "Lip et al. 2010"},
    })


def test_cha2ds2_vasc_quantises_to_its_own_table():
    model = cha2ds2_vasc_model()
    strict = Bound(max_auc_loss=0.0, max_risk_error=1e-6, risk_error_share=0.0, max_rows=3, max_total_points=9)
    doc = quantize_model(model, bound=strict, bootstrap=0)
    validate_sheet_dict(doc)
    assert doc["scale"]["logodds_per_point"] == pytest.approx(1.0, abs=1e-9)
    assert doc["scale"]["offset"] == pytest.approx(-4.5, abs=1e-9)
    terms = {t["name"]: t for t in doc["terms"]}
    assert [(r["text"], r["points"]) for r in terms["age"]["rows"]] == [("≤ 64", 0), ("65–74", 1), ("≥ 75", 2)]
    assert [(r["levels"], r["points"]) for r in terms["sex"]["rows"]] == [(["male"], 0), (["female"], 1)]
    for name, pts in ITEMS.items():
        assert [(r["value"], r["points"]) for r in terms[name]["rows"]] == [(False, 0), (True, pts)]
    assert doc["total"] == {"min": 0, "max": 9}
    a = doc["achieved"]
    assert a["auc_loss"] == pytest.approx(0.0, abs=1e-12)
    assert a["max_abs_risk_error"] < 1e-9
    assert doc["certificate"]["max_logodds_error"] < 1e-9
    assert doc["dropped_terms"] == []
    # the conversion is the logistic link of the exact total
    assert doc["conversion"][9]["risk"] == pytest.approx(1 / (1 + np.exp(-(-4.5 + 9))))
