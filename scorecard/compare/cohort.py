"""One cohort scored with both versions of a sheet, the way the paper does (`scorecard.audit.paper`): how
many patients get another total, another printed risk or another band, and a band-to-band table."""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import parse_cohort, score_cohort, sheet_features
from scorecard.tabular import require_columns, source_of


def cohort_changes(old: dict, new: dict, frame: pd.DataFrame) -> dict:
    """Patients whose total, printed risk or band changes from the old sheet to the new one."""
    needed = sheet_features(old) + [f for f in sheet_features(new) if f not in sheet_features(old)]
    require_columns(frame, needed, what="the two sheets")
    a = score_cohort(old, frame, parse_cohort(old, frame))
    b = score_cohort(new, frame, parse_cohort(new, frame))
    shift = b.total - a.total
    values, counts = np.unique(shift, return_counts=True)
    out = {
        "source": source_of(frame),
        "n": int(len(frame)),
        "total_changed": int((shift != 0).sum()),
        "risk_text_changed": int((a.risk_text != b.risk_text).sum()),
        "total_shift": [{"by": int(v), "patients": int(c)} for v, c in zip(values, counts)],
        "mean_risk_change": float(np.mean(b.risk - a.risk)),
        "largest_risk_change": float(np.max(np.abs(b.risk - a.risk))),
        "per_term": _per_term(a, b),
        "bands": None,
        "notes": sorted(set(a.notes + b.notes)),
        "warnings": sorted(set(a.warnings + b.warnings)),
    }
    if a.band is not None and b.band is not None:
        old_names = [x["name"] for x in old["bands"]]
        new_names = [x["name"] for x in new["bands"]]
        table = np.zeros((len(old_names), len(new_names)), dtype=np.int64)
        np.add.at(table, (a.band, b.band), 1)
        moved = sum(int(table[i, j]) for i in range(len(old_names)) for j in range(len(new_names)) if old_names[i] != new_names[j])
        out["bands"] = {"rows_are": "old band", "columns_are": "new band", "old": old_names, "new": new_names,
                        "counts": table.tolist(), "band_changed": moved}
    return out


def _per_term(a, b) -> list[dict]:
    """Per block on both versions: patients whose points for that block change."""
    new_by = {t.name: t for t in b.terms}
    rows = []
    for t in a.terms:
        u = new_by.get(t.name)
        old_points = t.patient_points()
        new_points = u.patient_points() if u is not None else np.zeros_like(old_points)
        rows.append({"term": t.name, "label": t.label, "patients_changed": int((old_points != new_points).sum())})
    for u in b.terms:
        if u.name not in {t.name for t in a.terms}:
            rows.append({"term": u.name, "label": u.label, "patients_changed": int((u.patient_points() != 0).sum())})
    return rows
