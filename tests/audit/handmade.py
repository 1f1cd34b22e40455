"""A small model document and the sheet a person would build from it by hand (docs/sheet-document.md).

The sheet keeps every model bin as a printed row and gives each row round((score - shift) / 0.25) points, so
the sheet's arithmetic can be followed on paper. Test data only (invented, in the demo's scenario).
"""

from __future__ import annotations

import copy
import math

from scorecard.jsondoc import normalise
from scorecard.model import model_from_dict
from scorecard.sheet import CAUTIONS, ROUNDING_RULE, range_text, risk_text
from scorecard.sheet.document import sheet_fingerprint

LPP = 0.25
INTERCEPT = -2.0


def model_dict() -> dict:
    return normalise({
        "format_version": 1,
        "document": "scorecard-model",
        "name": "handmade delirium model",
        "version": "1",
        "outcome": {"event": "delirium", "horizon": "within 5 days after surgery", "population": "adults 60+ after hip-fracture surgery"},
        "link": "logit",
        "intercept": INTERCEPT,
        "features": [
            {"name": "age", "label": "Age", "kind": "continuous", "unit": "years", "decimals": 0,
             "training_range": {"min": 60, "max": 100}, "missing": "error"},
            {"name": "temperature", "label": "Temperature", "kind": "continuous", "unit": "°C", "decimals": 1,
             "training_range": {"min": 35.0, "max": 40.0}, "missing": "score"},
            {"name": "cognition", "label": "Cognitive screen", "kind": "continuous", "unit": "points", "decimals": 0,
             "training_range": {"min": 0, "max": 10}, "missing": "score"},
            {"name": "residence", "label": "Lives in", "kind": "categorical", "levels": ["home", "care_home", "hospital"],
             "missing": "score"},
            {"name": "prior_delirium", "label": "Prior delirium", "kind": "flag", "missing": "average"},
        ],
        "terms": [
            {"kind": "continuous", "name": "age", "feature": "age", "shape": "step", "edges": [70, 80, 90],
             "scores": [-0.5, 0.1, 0.5, 1.0], "missing_score": None},
            {"kind": "continuous", "name": "temperature", "feature": "temperature", "shape": "step",
             "edges": [36.0, 37.5, 38.5], "scores": [0.25, 0.0, 0.3, 0.75], "missing_score": 0.5},
            {"kind": "continuous", "name": "cognition", "feature": "cognition", "shape": "step", "edges": [4, 8],
             "scores": [0.5, 0.0, -0.25], "missing_score": 0.5},
            {"kind": "categorical", "name": "residence", "feature": "residence", "levels": ["home", "care_home", "hospital"],
             "scores": [0.0, 0.5, 0.25], "missing_score": 0.25, "unseen": "missing"},
            {"kind": "flag", "name": "prior_delirium", "feature": "prior_delirium", "scores": [0.0, 1.0], "missing_score": None},
            {"kind": "pair", "name": "age:cognition", "features": ["age", "cognition"],
             "axes": [{"edges": [80]}, {"edges": [4]}], "scores": [[0.0, 0.0], [0.75, 0.0]], "missing_score": 0.0},
        ],
        "provenance": {"source": "tests/audit/handmade.py"},
    })


def _points(scores, missing=None, lpp=LPP):
    """Integer points per row and the shift (log-odds) the offset absorbs; error per row."""
    shift = min(list(scores) + ([missing] if missing is not None else []))
    pts = [round((s - shift) / lpp) for s in scores]
    mpts = None if missing is None else round((missing - shift) / lpp)
    errs = [abs(p * lpp + shift - s) for p, s in zip(pts, scores)]
    if missing is not None:
        errs.append(abs(mpts * lpp + shift - missing))
    return pts, mpts, shift, max(errs)


def _continuous_rows(edges, decimals, pts=None):
    bounds = [None] + list(edges) + [None]
    rows = []
    for i in range(len(edges) + 1):
        row = {"lower": bounds[i], "upper": bounds[i + 1], "text": range_text(bounds[i], bounds[i + 1], decimals)}
        if pts is not None:
            row["points"] = pts[i]
        rows.append(row)
    return rows


def logistic(z: float) -> float:
    return 1.0 / (1.0 + math.exp(-z)) if z >= 0 else math.exp(z) / (1.0 + math.exp(z))


def compact_model_dict() -> dict:
    """The same model without temperature and cognition's own term: a sheet with few cells (tamper tests)."""
    doc = model_dict()
    doc["terms"] = [t for t in doc["terms"] if t["name"] not in ("temperature", "cognition")]
    return doc


def sheet_dict(model: dict | None = None, bands: bool = True, lpp: float = LPP, spread: bool = False) -> dict:
    """The sheet built by hand from `model_dict()` (pass an edited model to get a sheet for it). With `spread`,
    each total carries a made-up 10th-90th percentile range of model risk (-0.4 / +0.3 log-odds around it;
    the two highest totals with too few patients for one), as quantize stores it."""
    LPP = lpp  # noqa: N806 - the scale of this sheet
    model = copy.deepcopy(model or model_dict())
    feats = {f["name"]: f for f in model["features"]}
    terms, per_term, offset = [], {}, model["intercept"]
    lo_total, hi_total = 0, 0
    for t in model["terms"]:
        if t["kind"] == "pair":
            flat = [s for row in t["scores"] for s in row]
            pts, mpts, shift, err = _points(flat, t.get("missing_score") or 0.0, lpp)
            n1 = len(t["scores"][0])
            grid = [pts[i * n1:(i + 1) * n1] for i in range(len(t["scores"]))]
            axes = []
            for name, axis in zip(t["features"], t["axes"]):
                f = feats[name]
                axes.append({"feature": name, "kind": "continuous", "unit": f["unit"], "decimals": f["decimals"],
                             "training_range": {"min": f["training_range"]["min"], "max": f["training_range"]["max"]},
                             "rows": _continuous_rows(axis["edges"], f["decimals"])})
            terms.append({"name": t["name"], "kind": "pair", "label": "Age and cognitive screen together",
                          "features": t["features"], "labels": [feats[n]["label"] for n in t["features"]],
                          "axes": axes, "points": grid, "missing_points": mpts})
            all_pts = pts + [mpts]
        else:
            f = feats[t["feature"]]
            pts, mpts, shift, err = _points(t["scores"], t.get("missing_score"), lpp)
            if t["kind"] == "continuous":
                rows = _continuous_rows(t["edges"], f["decimals"], pts)
                term = {"name": t["name"], "kind": "continuous", "label": f["label"], "feature": f["name"], "unit": f["unit"],
                        "decimals": f["decimals"], "training_range": {"min": f["training_range"]["min"], "max": f["training_range"]["max"]},
                        "rows": rows}
            elif t["kind"] == "categorical":
                rows = [{"levels": [lv], "text": lv.replace("_", " ").capitalize(), "points": p} for lv, p in zip(t["levels"], pts)]
                term = {"name": t["name"], "kind": "categorical", "label": f["label"], "feature": f["name"],
                        "unseen": t.get("unseen", "error"), "rows": rows}
            else:
                rows = [{"value": False, "text": "No", "points": pts[0]}, {"value": True, "text": "Yes", "points": pts[1]}]
                term = {"name": t["name"], "kind": "flag", "label": f["label"], "feature": f["name"], "rows": rows}
            if mpts is not None:
                rows.append({"missing": True, "text": "not measured", "points": mpts})
            terms.append(term)
            all_pts = pts + ([mpts] if mpts is not None else [])
        offset += shift
        per_term[t["name"]] = err
        lo_total += min(all_pts)
        hi_total += max(all_pts)
    conversion = []
    for total in range(lo_total, hi_total + 1):
        r = logistic(offset + LPP * total)
        conversion.append({"total": total, "risk": r, "text": risk_text(r)})
        if spread:
            few = total > hi_total - 2
            conversion[-1]["spread"] = {"patients": 4 if few else 40 + total,
                                        "low": None if few else logistic(offset + LPP * total - 0.4),
                                        "high": None if few else logistic(offset + LPP * total + 0.3)}
    max_err = sum(per_term.values())
    by_total = []
    for c in conversion:
        z = offset + LPP * c["total"]
        by_total.append({"total": c["total"], "max_risk_error": max(abs(logistic(z + s * max_err) - c["risk"]) for s in (-1, 1))})
    doc = {
        "format_version": 1,
        "document": "scorecard-sheet",
        "title": "Delirium risk after hip-fracture surgery",
        "model": {"name": model["name"], "version": model["version"], "fingerprint": model_from_dict(model).fingerprint},
        "outcome": dict(model["outcome"]),
        "link": "logit",
        "scale": {"logodds_per_point": LPP, "offset": offset},
        "rounding_rule": ROUNDING_RULE,
        "cautions": list(CAUTIONS),
        "terms": terms,
        "dropped_terms": [],
        "total": {"min": lo_total, "max": hi_total},
        "conversion": conversion,
        "bands": [
            {"name": "low", "upper_risk": 0.1, "wording": "Write your unit's agreed action here (local protocol)."},
            {"name": "moderate", "upper_risk": 0.3, "wording": "Write your unit's agreed action here (local protocol)."},
            {"name": "high", "upper_risk": None, "wording": "Write your unit's agreed action here (local protocol)."},
        ] if bands else [],
        "bound": {"max_auc_loss": 0.01, "max_risk_error": 0.05, "risk_error_share": 0.05, "max_rows": 6, "max_total_points": 40},
        # fixture: the quantizer's own figures are not recomputed here; the audit shows them for comparison only
        "achieved": {"n": 1, "auc_model": None, "auc_sheet": None, "auc_loss": None, "auc_loss_ci": None,
                     "max_abs_risk_error": 0.0, "p99_abs_risk_error": 0.0, "mean_abs_risk_error": 0.0,
                     "share_over_risk_error": 0.0, "calibration_intercept": None, "calibration_slope": None,
                     "brier_model": 0.0, "brier_sheet": 0.0, "band_agreement": None},
        "certificate": {"per_term": per_term, "conversion_rounding": 0.0, "max_logodds_error": max_err,
                        "max_risk_error": max(e["max_risk_error"] for e in by_total), "risk_error_by_total": by_total},
        "provenance": {"package_version": "test", "settings": {}, "evaluation": "none (hand-built test sheet)"},
    }
    doc = normalise(doc)
    doc["fingerprint"] = sheet_fingerprint(doc)
    return doc


def write_handmade_files(folder, rows: int):
    """Write the hand-made sheet and model, and an invented demo cohort of `rows` patients they can score, into
    `folder` (sheet.json, model.json, cohort.csv); returns the folder."""
    import pandas as pd

    from scorecard.demo import generate_cohort
    from scorecard.jsondoc import pretty_text

    (folder / "sheet.json").write_text(pretty_text(sheet_dict()))
    (folder / "model.json").write_text(pretty_text(model_dict()))
    c = generate_cohort(rows, seed=3)
    residence = c["residence"].map({"own_home": "home", "with_family": "home", "care_home": "care_home"})
    table = pd.DataFrame({"age": c.age, "temperature": c.temperature, "cognition": c.cognition, "residence": residence,
                          "prior_delirium": c.prior_delirium, "delirium": c.delirium})
    table.to_csv(folder / "cohort.csv", index=False)
    return folder
