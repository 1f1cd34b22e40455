"""Fixtures: a small, complete, valid sheet document built by hand (the shape docs/sheet-document.md describes)."""

import math

from scorecard.sheet import CAUTIONS, ROUNDING_RULE, risk_text


def example_sheet() -> dict:
    offset, per_point = -3.0, 0.25
    conversion = []
    for total in range(0, 15):
        z = offset + per_point * total
        risk = 1 / (1 + math.exp(-z))
        conversion.append({"total": total, "risk": risk, "text": risk_text(risk)})
    return {
        "format_version": 1,
        "document": "scorecard-sheet",
        "title": "Delirium risk after hip-fracture surgery",
        "model": {"name": "demo", "version": "1", "fingerprint": "a" * 64},
        "outcome": {"event": "delirium", "horizon": "5 days", "population": "adults 60+ after hip-fracture surgery"},
        "link": "logit",
        "scale": {"logodds_per_point": per_point, "offset": offset},
        "rounding_rule": ROUNDING_RULE,
        "cautions": list(CAUTIONS),
        "terms": [
            {"name": "age", "kind": "continuous", "label": "Age", "feature": "age", "unit": "years", "decimals": 0,
             "training_range": {"min": 60, "max": 99},
             "rows": [{"lower": None, "upper": 70, "text": "≤ 69", "points": 0},
                      {"lower": 70, "upper": 80, "text": "70–79", "points": 2},
                      {"lower": 80, "upper": None, "text": "≥ 80", "points": 5}]},
            {"name": "albumin", "kind": "continuous", "label": "Albumin", "feature": "albumin", "unit": "g/L", "decimals": 1,
             "training_range": {"min": 20, "max": 50},
             "rows": [{"lower": None, "upper": 32.5, "text": "≤ 32.4", "points": 2},
                      {"lower": 32.5, "upper": None, "text": "≥ 32.5", "points": 0},
                      {"missing": True, "text": "not measured", "points": 1}]},
            {"name": "residence", "kind": "categorical", "label": "Lives in", "feature": "residence", "unseen": "error",
             "rows": [{"levels": ["home"], "text": "Own home", "points": 0},
                      {"levels": ["care_home", "nursing_home"], "text": "Care or nursing home", "points": 2}]},
            {"name": "prior_delirium", "kind": "flag", "label": "Prior delirium", "feature": "prior_delirium",
             "rows": [{"value": False, "text": "No", "points": 0}, {"value": True, "text": "Yes", "points": 3}]},
            {"name": "age:cognition", "kind": "pair", "label": "Age and cognition", "features": ["age", "cognition"],
             "labels": ["Age", "Cognitive screen"],
             "axes": [{"feature": "age", "kind": "continuous", "unit": "years", "decimals": 0, "training_range": {"min": 60, "max": 99},
                       "rows": [{"lower": None, "upper": 80, "text": "≤ 79"}, {"lower": 80, "upper": None, "text": "≥ 80"}]},
                      {"feature": "cognition", "kind": "continuous", "unit": "points", "decimals": 0, "training_range": {"min": 0, "max": 10},
                       "rows": [{"lower": None, "upper": 4, "text": "≤ 3"}, {"lower": 4, "upper": None, "text": "≥ 4"}]}],
             "points": [[0, 0], [2, 0]], "missing_points": 0},
        ],
        "dropped_terms": [{"name": "temperature", "reason": "its whole effect rounds to 0 points"}],
        "total": {"min": 0, "max": 14},
        "conversion": conversion,
        "bands": [{"name": "low", "upper_risk": 0.05, "wording": "Write your unit's agreed action here (local protocol)."},
                  {"name": "high", "upper_risk": None, "wording": "Write your unit's agreed action here (local protocol)."}],
        "bound": {"max_auc_loss": 0.005, "max_risk_error": 0.05, "risk_error_share": 0.05, "max_rows": 6, "max_total_points": 40},
        "achieved": {"n": 1000, "auc_model": 0.8, "auc_sheet": 0.797, "auc_loss": 0.003, "auc_loss_ci": [0.001, 0.005],
                     "max_abs_risk_error": 0.08, "p99_abs_risk_error": 0.05, "mean_abs_risk_error": 0.01,
                     "share_over_risk_error": 0.02, "calibration_intercept": 0.0, "calibration_slope": 1.0,
                     "brier_model": 0.15, "brier_sheet": 0.151, "band_agreement": 0.95},
        "certificate": {"per_term": {"age": 0.1}, "conversion_rounding": 0.0, "max_logodds_error": 0.1,
                        "max_risk_error": 0.03, "risk_error_by_total": [{"total": 0, "max_risk_error": 0.01}]},
        "provenance": {"package_version": "0.1.0", "settings": {}, "evaluation": "model bin counts"},
    }


import pytest


@pytest.fixture
def sheet_doc() -> dict:
    return example_sheet()
