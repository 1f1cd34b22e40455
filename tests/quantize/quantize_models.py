"""Small additive models built by hand for the quantizer tests (invented shapes, demo-like features)."""

import numpy as np


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
