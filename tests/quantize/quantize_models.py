"""Small additive models built by hand for the quantizer tests (invented shapes, demo-like features)."""

import math

import numpy as np

from scorecard.sheet import row_index


def _continuous(name, label, unit, decimals, lo, hi, shape, missing="error"):
    step = 10.0**-decimals
    edges = [round(v, 6) for v in np.arange(lo + step / 2, hi, step)][: 60]
    mids = np.concatenate([[lo], np.array(edges) + step / 2])
    scores = [float(shape(v)) for v in mids]
    feature = {"name": name, "label": label, "kind": "continuous", "unit": unit, "decimals": decimals,
               "training_range": {"min": lo, "max": edges[-1] + step / 2}, "missing": missing}
    term = {"kind": "continuous", "name": name, "feature": name, "shape": "step", "edges": edges, "scores": scores,
            "counts": [float(100 + 50 * np.cos(i / 7)) for i in range(len(scores))]}
    return feature, term


def small_model_dict(with_pair: bool = True) -> dict:
    age_f, age_t = _continuous("age", "Age", "years", 0, 60, 100, lambda a: 0.05 * (a - 75) + 0.002 * max(a - 80, 0) ** 2)
    na_f, na_t = _continuous("sodium", "Sodium", "mmol/L", 0, 120, 160, lambda s: 0.004 * (s - 140) ** 2 - 0.3)
    alb_f, alb_t = _continuous("albumin", "Albumin", "g/L", 0, 20, 50, lambda v: -0.04 * (v - 35), missing="score")
    alb_t["missing_score"] = 0.3
    alb_t["missing_count"] = 800.0
    features = [age_f, na_f, alb_f,
                {"name": "prior_delirium", "label": "Prior delirium", "kind": "flag", "missing": "error"},
                {"name": "residence", "label": "Lives in", "kind": "categorical", "levels": ["home", "family", "care_home"], "missing": "error"},
                {"name": "haemoglobin", "label": "Haemoglobin", "kind": "continuous", "unit": "g/L", "decimals": 0,
                 "training_range": {"min": 70, "max": 170}, "missing": "average"}]
    terms = [age_t, na_t, alb_t,
             {"kind": "flag", "name": "prior_delirium", "feature": "prior_delirium", "scores": [-0.2, 0.8], "counts": [800, 200]},
             {"kind": "categorical", "name": "residence", "feature": "residence", "levels": ["home", "family", "care_home"],
              "scores": [-0.1, 0.0, 0.45], "counts": [600, 250, 150], "unseen": "error"},
             # a linear shape (knots and values), as the coefficient-table importer writes
             {"kind": "continuous", "name": "haemoglobin", "feature": "haemoglobin", "shape": "linear",
              "edges": [80.0, 115.0, 160.0], "scores": [0.7, 0.0, -0.15]}]
    if with_pair:
        terms.append({"kind": "pair", "name": "age:prior_delirium", "features": ["age", "prior_delirium"],
                      "axes": [{"edges": [69.5, 79.5, 89.5]}, {"levels": ["no", "yes"]}],
                      "scores": [[0.0, -0.2], [0.0, 0.0], [0.0, 0.2], [-0.05, 0.35]],
                      "counts": [[300, 60], [300, 60], [200, 50], [50, 20]]})
    return {
        "format_version": 1, "document": "scorecard-model", "name": "test model", "version": "1",
        "outcome": {"event": "delirium", "horizon": "5 days", "population": "invented test population"},
        "link": "logit", "intercept": -1.4, "features": features, "terms": terms, "provenance": {"source": "tests"},
    }


# tests of other parts of the search set only the population bounds (ΔAUC, share misstated)
POPULATION_ONLY = {"min_band_agreement": None, "max_percentile_risk_error": None, "max_largest_risk_error": None}


# how a nurse reads a sheet document: round half up, find the row, add the points (independent of quantize)
def sheet_total(doc: dict, patient: dict) -> int:
    total = 0
    for term in doc["terms"]:
        if term["kind"] == "pair":
            idx = []
            for axis in term["axes"]:
                v = patient[axis["feature"]]
                if v is None or (isinstance(v, float) and math.isnan(v)):
                    idx = None
                    break
                idx.append(axis_row(axis, v))
            total += term["missing_points"] if idx is None or -1 in idx else term["points"][idx[0]][idx[1]]
            continue
        v = patient[term["feature"]]
        missing = v is None or (isinstance(v, float) and math.isnan(v))
        if term["kind"] == "continuous":
            i = row_index(term["rows"], None if missing else v, term["decimals"])
        elif missing:
            i = next(k for k, r in enumerate(term["rows"]) if r.get("missing"))
        elif term["kind"] == "flag":
            i = next(k for k, r in enumerate(term["rows"]) if r.get("value") == bool(v))
        else:
            i = next(k for k, r in enumerate(term["rows"]) if v in r.get("levels", []))
        total += term["rows"][i]["points"]
    return total


def axis_row(axis, v):
    if axis["kind"] == "continuous":
        return row_index(axis["rows"], v, axis["decimals"])
    if axis["kind"] == "flag":
        return next(k for k, r in enumerate(axis["rows"]) if r["value"] == bool(v))
    return next((k for k, r in enumerate(axis["rows"]) if v in r["levels"]), -1)
