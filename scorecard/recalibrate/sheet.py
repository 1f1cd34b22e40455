"""The recalibrated sheet document: the same rows and points, a new conversion, and its lineage.

With a, b the recalibration of the outcome on the sheet's log-odds (offset + s × total), the new sheet's
log-odds are a + b × (offset + s × total), so the new scale is offset' = a + b × offset, s' = b × s, and every
printed risk is recomputed from it. The sheet now stands for the exact model recalibrated the same way
(a + b × model log-odds), so the worst-case certificate, a bound on |sheet - model| in log-odds, scales by b
and is restated per total on the new conversion.
"""

from __future__ import annotations

import copy
import math

from scorecard import __version__
from scorecard.quantize.certificate import risk_error_by_total
from scorecard.sheet import risk_text


def _logistic(z: float) -> float:
    return 1.0 / (1.0 + math.exp(-z)) if z >= 0 else math.exp(z) / (1.0 + math.exp(z))


def recalibrated_sheet(sheet: dict, figures: dict, data: dict) -> dict:
    """A new sheet document (without fingerprint; `save_sheet` adds it) from `sheet` and `assess` figures.

    `data` names the unit's file ({"file": name, "sha256": ..., "rows": n})."""
    a, b = float(figures["intercept"]), float(figures["slope"])
    new = copy.deepcopy({k: v for k, v in sheet.items() if k != "fingerprint"})
    old_scale = dict(sheet["scale"])
    offset = a + b * float(old_scale["offset"])
    lpp = b * float(old_scale["logodds_per_point"])
    new["scale"] = {"logodds_per_point": lpp, "offset": offset}
    conversion = []
    for entry in sheet["conversion"]:
        risk = _logistic(offset + lpp * int(entry["total"]))
        conversion.append({"total": int(entry["total"]), "risk": risk, "text": risk_text(risk)})
    new["conversion"] = conversion
    # band edges chosen on totals (the quantizer's band-edge search) suit the original model's risks; on the new
    # conversion each total's band is again that of its printed risk
    new["bands"] = [{k: v for k, v in band.items() if k != "first_total"} for band in sheet.get("bands") or []]
    previous = sheet.get("recalibration")
    before = previous["model_logodds"] if previous else {"intercept": 0.0, "slope": 1.0}
    cert = copy.deepcopy(sheet["certificate"])
    for key in ("offset_error", "conversion_rounding", "max_logodds_error"):
        if key in cert:
            cert[key] = float(cert[key]) * b
    cert["per_term"] = {name: float(v) * b for name, v in cert["per_term"].items()}
    cert["risk_error_by_total"] = risk_error_by_total(offset, lpp, float(cert["max_logodds_error"]),
                                                      int(sheet["total"]["min"]), int(sheet["total"]["max"]))
    cert["max_risk_error"] = max(e["max_risk_error"] for e in cert["risk_error_by_total"])
    new["certificate"] = cert
    new["recalibration"] = {
        "original_fingerprint": sheet["fingerprint"],
        "original_scale": old_scale,
        "intercept": a, "slope": b,
        "intercept_ci": figures["intercept_ci"], "slope_ci": figures["slope_ci"],
        "model_logodds": {"intercept": a + b * float(before["intercept"]), "slope": b * float(before["slope"])},
        "n": int(figures["n"]), "events": int(figures["events"]), "outcome_column": figures["outcome_column"],
        "data": data,
        "method": "logistic recalibration (maximum likelihood) of the observed outcome on the sheet's log-odds; rows and points unchanged",
        "by": f"scorecard {__version__} recalibrate",
        "previous": previous,
        "achieved_note": "`achieved` holds the original sheet's figures against the original model, before recalibration",
    }
    return new
