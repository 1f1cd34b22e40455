"""Sheet documents for the render tests and benchmark, written by hand to docs/sheet-document.md.

Invented numbers in the demo scenario (older adults after hip-fracture surgery, delirium within 5 days).
The texts are typed as a reader would expect them under the doc's rule ([a, b) prints 'a–(b − 1 unit)'),
so the renderer is checked against text it did not produce.
"""

from __future__ import annotations

import copy
import math

from scorecard.jsondoc import fingerprint
from scorecard.sheet import CAUTIONS

PLACEHOLDER = "Write your unit's agreed action here (local protocol)."


def _cont(name, label, unit, decimals, training, rows, missing=None):
    out_rows = []
    for lower, upper, text, points in rows:
        out_rows.append({"lower": lower, "upper": upper, "text": text, "points": points})
    if missing is not None:
        out_rows.append({"missing": True, "text": "not measured", "points": missing})
    return {"name": name, "kind": "continuous", "feature": name, "label": label, "unit": unit,
            "decimals": decimals, "training_range": {"min": training[0], "max": training[1]}, "rows": out_rows}


def _cat(name, label, rows, missing=None, unseen="missing"):
    out_rows = [{"levels": levels, "text": text, "points": points} for levels, text, points in rows]
    if missing is not None:
        out_rows.append({"missing": True, "text": "not measured", "points": missing})
    return {"name": name, "kind": "categorical", "feature": name, "label": label, "unseen": unseen, "rows": out_rows}


def _flag(name, label, no, yes, missing=None):
    rows = [{"value": False, "text": "No", "points": no}, {"value": True, "text": "Yes", "points": yes}]
    if missing is not None:
        rows.append({"missing": True, "text": "not measured", "points": missing})
    return {"name": name, "kind": "flag", "feature": name, "label": label, "rows": rows}


def _risk_text(risk: float) -> str:
    """The doc's printed-risk rule: one decimal below 10 %, whole percent from 10 %, never 0 % or 100 %."""
    pct = risk * 100
    if pct < 0.05:
        return "<0.1%"
    if round(pct, 1) < 10:
        return f"{pct:.1f}%"
    if round(pct) < 100:
        return f"{round(pct):d}%"
    return ">99.9%" if pct >= 99.95 else f"{pct:.1f}%"


def _term_extremes(term):
    if term["kind"] == "pair":
        flat = [p for row in term["points"] for p in row] + [term["missing_points"]]
        return min(flat), max(flat)
    pts = [r["points"] for r in term["rows"]]
    return min(pts), max(pts)


def finish(sheet: dict) -> dict:
    """Fill total, conversion and fingerprint the way the doc defines them."""
    lo = sum(_term_extremes(t)[0] for t in sheet["terms"])
    hi = sum(_term_extremes(t)[1] for t in sheet["terms"])
    sheet["total"] = {"min": lo, "max": hi}
    scale = sheet["scale"]
    conversion = []
    for total in range(lo, hi + 1):
        risk = 1.0 / (1.0 + math.exp(-(scale["offset"] + scale["logodds_per_point"] * total)))
        conversion.append({"total": total, "risk": risk, "text": _risk_text(risk)})
    sheet["conversion"] = conversion
    sheet.pop("fingerprint", None)
    sheet["fingerprint"] = fingerprint(sheet, exclude=("fingerprint",))
    return sheet


def twelve_term_sheet() -> dict:
    """A realistic 12-term sheet: continuous terms with not-measured rows, categorical, flags, one pair grid,
    negative points (so signs must print), bands with the placeholder wording."""
    terms = [
        _cont("age", "Age", "years", 0, (60, 101),
              [(None, 70, "≤ 69", 0), (70, 80, "70–79", 2), (80, 90, "80–89", 5), (90, None, "≥ 90", 7)]),
        _cont("cognition", "Pre-operative cognitive screen", "points (0–10)", 0, (0, 10),
              [(None, 4, "≤ 3", 6), (4, 7, "4–6", 3), (7, 9, "7–8", 1), (9, None, "≥ 9", 0)]),
        _cont("sodium", "Sodium", "mmol/L", 0, (118, 156),
              [(None, 130, "≤ 129", 3), (130, 135, "130–134", 1), (135, 146, "135–145", 0),
               (146, 150, "146–149", 1), (150, None, "≥ 150", 3)], missing=1),
        _cont("haemoglobin", "Haemoglobin", "g/L", 0, (62, 171),
              [(None, 90, "≤ 89", 3), (90, 110, "90–109", 2), (110, 125, "110–124", 1), (125, None, "≥ 125", 0)],
              missing=1),
        _cont("hours_to_surgery", "Hours from admission to surgery", "h", 0, (2, 140),
              [(None, 24, "≤ 23", 0), (24, 36, "24–35", 1), (36, None, "≥ 36", 3)]),
        _cont("medicines", "Regular medicines", "count", 0, (0, 22),
              [(None, 3, "≤ 2", 0), (3, 6, "3–5", 1), (6, 10, "6–9", 2), (10, None, "≥ 10", 2)]),
        _cont("albumin", "Albumin", "g/L", 0, (18, 49),
              [(None, 30, "≤ 29", 2), (30, 35, "30–34", 1), (35, None, "≥ 35", 0)], missing=2),
        _cont("temperature", "Temperature", "°C", 1, (34.8, 39.9),
              [(None, 36.0, "≤ 35.9", 1), (36.0, 37.5, "36.0–37.4", -1), (37.5, 38.0, "37.5–37.9", 0),
               (38.0, None, "≥ 38.0", 2)], missing=0),
        _cat("anaesthesia", "Anaesthesia", [(["general"], "General", 1), (["spinal", "regional"], "Spinal or regional", 0)], unseen="error"),
        _cat("residence", "Lived before admission",
             [(["own_home"], "Own home", 0), (["relative"], "With relatives", 1), (["care_home"], "Care home", 3)],
             missing=1),
        _flag("prior_delirium", "Delirium before", 0, 4),
        {"name": "age:cognition", "kind": "pair", "label": "Age with cognitive screen", "features": ["age", "cognition"],
         "labels": ["Age", "Cognitive screen"],
         "axes": [{"feature": "age", "kind": "continuous", "unit": "years", "decimals": 0,
                   "training_range": {"min": 60, "max": 101},
                   "rows": [{"lower": None, "upper": 80, "text": "≤ 79"}, {"lower": 80, "upper": None, "text": "≥ 80"}]},
                  {"feature": "cognition", "kind": "continuous", "unit": "points", "decimals": 0,
                   "training_range": {"min": 0, "max": 10},
                   "rows": [{"lower": None, "upper": 4, "text": "≤ 3"}, {"lower": 4, "upper": None, "text": "≥ 4"}]}],
         "points": [[0, 0], [3, 0]], "missing_points": 0},
    ]
    sheet = {
        "format_version": 1,
        "document": "scorecard-sheet",
        "title": "Delirium risk after hip-fracture surgery",
        "model": {"name": "hipfx-delirium", "version": "2026.1", "fingerprint": "ab" * 32},
        "outcome": {"event": "Delirium (any positive screen)", "horizon": "within 5 days after the operation",
                    "population": "Adults aged 60 or over having surgery for a hip fracture"},
        "link": "logit",
        "scale": {"logodds_per_point": 0.2, "offset": -3.4},
        "rounding_rule": "Round each measurement half up to the decimals printed for it (for example 69.5 counts "
                         "as 70), then find its row.",
        "cautions": list(CAUTIONS),
        "terms": terms,
        "dropped_terms": [{"name": "hearing", "reason": "its whole effect rounds to 0 points"}],
        "bands": [{"name": "low", "upper_risk": 0.1, "wording": PLACEHOLDER},
                  {"name": "moderate", "upper_risk": 0.3, "wording": PLACEHOLDER},
                  {"name": "high", "upper_risk": None, "wording": PLACEHOLDER}],
        "bound": {"max_auc_loss": 0.005, "max_risk_error": 0.05, "risk_error_share": 0.05, "max_rows": 6,
                  "max_total_points": 40},
        "achieved": {"n": 2000, "auc_model": 0.781, "auc_sheet": 0.778, "auc_loss": 0.003, "auc_loss_ci": [0.001, 0.005],
                     "max_abs_risk_error": 0.03, "p99_abs_risk_error": 0.02, "mean_abs_risk_error": 0.008,
                     "share_over_risk_error": 0.0, "calibration_intercept": 0.01, "calibration_slope": 0.99,
                     "brier_model": 0.142, "brier_sheet": 0.143, "band_agreement": 0.95},
        "certificate": {"per_term": {}, "conversion_rounding": 0.0, "max_logodds_error": 0.4, "max_risk_error": 0.04,
                        "risk_error_by_total": []},
        "provenance": {"package_version": "0.1.0", "settings": {}, "evaluation": "model bin counts"},
    }
    return finish(sheet)


def many_term_sheet(n_terms: int = 30) -> dict:
    """The 12-term sheet plus invented lab terms until it has `n_terms` terms (benchmark and overflow tests)."""
    sheet = copy.deepcopy(twelve_term_sheet())
    k = 0
    while len(sheet["terms"]) < n_terms:
        k += 1
        base = 10 * k
        rows = [(None, base, f"≤ {base - 1}", 0), (base, base + 5, f"{base}–{base + 4}", 1),
                (base + 5, base + 12, f"{base + 5}–{base + 11}", 2), (base + 12, None, f"≥ {base + 12}", 1)]
        sheet["terms"].append(_cont(f"lab_{k}", f"Laboratory value {k}", "units", 0, (base - 8, base + 30), rows, missing=1))
    return finish(sheet)


def wide_total_sheet(factor: int = 10) -> dict:
    """The 12-term sheet with every point multiplied by `factor`: a conversion table of a few hundred totals
    (finer points, as on a 0-100 sheet), which runs over pages in every layout."""
    sheet = copy.deepcopy(twelve_term_sheet())
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            term["points"] = [[p * factor for p in row] for row in term["points"]]
            term["missing_points"] *= factor
        else:
            for row in term["rows"]:
                row["points"] *= factor
    sheet["scale"]["logodds_per_point"] /= factor
    return finish(sheet)


def with_markup_labels(sheet: dict) -> dict:
    """Labels and wording holding &, <, > that must print literally (not as markup)."""
    sheet = copy.deepcopy(sheet)
    for term in sheet["terms"]:
        if term["name"] == "residence":
            term["label"] = "Lived before admission <home & care>"
            term["rows"][2]["text"] = "Care home & nursing <24h>"
    sheet["bands"][2]["wording"] = "Review by the <older-people> team & daily screen (Ward 7 protocol)"
    return finish(sheet)


def without_negative_points(sheet: dict) -> dict:
    sheet = copy.deepcopy(sheet)
    for term in sheet["terms"]:
        for row in term.get("rows", []):
            if "points" in row and row["points"] < 0:
                row["points"] = 0
    return finish(sheet)


def categorical_pair_sheet() -> dict:
    """The 12-term sheet with its pair swapped for a category x flag grid, and no risk bands."""
    sheet = copy.deepcopy(twelve_term_sheet())
    sheet["terms"][-1] = {
        "name": "residence:prior_delirium", "kind": "pair", "label": "Lived before admission with delirium before",
        "features": ["residence", "prior_delirium"], "labels": ["Lived before admission", "Delirium before"],
        "axes": [{"feature": "residence", "kind": "categorical",
                  "rows": [{"levels": ["own_home", "relative"], "text": "Own home or with relatives"},
                           {"levels": ["care_home"], "text": "Care home"}]},
                 {"feature": "prior_delirium", "kind": "flag",
                  "rows": [{"value": False, "text": "No"}, {"value": True, "text": "Yes"}]}],
        "points": [[0, 0], [0, 2]], "missing_points": 1}
    sheet["bands"] = []
    return finish(sheet)
