"""Marking staff answers against the key: per vignette right or wrong, which table was misread (points that
differ from the key), the slips in adding and in reading the conversion, and the risk error each causes.

The risk an answer implies is read from the sheet's own conversion rule, logistic(offset + log-odds per point
× total), with the scale the key carries (`scorecard.audit.paper.sheet_logodds`), so marking needs no sheet.
A misread table's risk error is the risk of the key's total moved by that table's error alone, minus the
key's risk: what that one slip would have done to this patient.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import sheet_logodds
from scorecard.errors import UserError
from scorecard.model import logistic
from scorecard.sheet import risk_text
from scorecard.tabular import source_of

KEY_COLUMNS = ("id", "total_points", "risk", "band", "sheet_fingerprint", "offset", "logodds_per_point")


def _int_cell(frame: pd.DataFrame, row: int, column: str) -> int | None:
    text = str(frame[column].iloc[row]).strip()
    if text == "":
        return None
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not np.isfinite(value) or value != int(value):
        raise UserError(f"{source_of(frame)}: row {row + 1}, column {column!r}: {text!r} is not a whole number of points; "
                        "write the points as a whole number, or leave the cell empty when not answered")
    return int(value)


def _check_key(key: pd.DataFrame) -> list[str]:
    missing = [c for c in KEY_COLUMNS if c not in key.columns]
    if missing:
        raise UserError(f"{source_of(key)}: column {missing[0]!r} is missing; this is not a key written by `scorecard exercise --key`")
    fps = set(key["sheet_fingerprint"])
    if len(fps) != 1:
        raise UserError(f"{source_of(key)}: rows come from {len(fps)} different sheets (sheet_fingerprint); use one exercise's key")
    if key["id"].duplicated().any():
        raise UserError(f"{source_of(key)}: id {key['id'][key['id'].duplicated()].iloc[0]!r} appears twice; use the key as written")
    return [c.removeprefix("points:") for c in key.columns if c.startswith("points:")]


def _risk(key: pd.DataFrame, totals) -> np.ndarray:
    scale = {"offset": float(key["offset"].iloc[0]), "logodds_per_point": float(key["logodds_per_point"].iloc[0])}
    return logistic(sheet_logodds({"scale": scale}, np.asarray(totals, dtype=float)))


def _same_risk(given: str, expected: str) -> bool:
    g = given.replace(" ", "").replace(",", ".")
    return (g if g.endswith("%") else g + "%") == expected.replace(" ", "")


def mark_answers(key: pd.DataFrame, answers: pd.DataFrame) -> dict:
    """Every vignette marked, and a summary per table, as a plain dict (also the -o CSV and --json)."""
    terms = _check_key(key)
    if "id" not in answers.columns or "total_points" not in answers.columns:
        raise UserError(f"{source_of(answers)}: needs columns 'id' and 'total_points' (and optionally risk, band and "
                        "points:<table> per table; see the template written by `scorecard exercise --template`)")
    known = {"id", "total_points", "risk", "band"} | {f"points:{t}" for t in terms}
    extra = [c for c in answers.columns if c not in known and c not in key.columns]
    if extra:
        raise UserError(f"{source_of(answers)}: column {extra[0]!r} is not one the key knows; table columns are "
                        + ", ".join(f"points:{t}" for t in terms))
    key_rows = {k: i for i, k in enumerate(key["id"])}
    labels = {t: t for t in terms}
    seen: set[str] = set()
    results = []
    for r in range(len(answers)):
        vid = str(answers["id"].iloc[r]).strip()
        if vid not in key_rows:
            raise UserError(f"{source_of(answers)}: row {r + 1}, column 'id': {vid!r} is not a vignette of this key "
                            f"({key['id'].iloc[0]} to {key['id'].iloc[-1]}); check the id written on the card")
        if vid in seen:
            raise UserError(f"{source_of(answers)}: row {r + 1}: vignette {vid!r} is answered twice; keep one answer per vignette")
        seen.add(vid)
        k = key_rows[vid]
        key_total = int(key["total_points"].iloc[k])
        key_risk = float(_risk(key, [key_total])[0])
        total = _int_cell(answers, r, "total_points")
        misread, given_points = [], {}
        for t in terms:
            column = f"points:{t}"
            if column not in answers.columns:
                continue
            given = _int_cell(answers, r, column)
            given_points[t] = given
            expected = int(key[column].iloc[k])
            if given is not None and given != expected:
                moved = float(_risk(key, [key_total - expected + given])[0])
                misread.append({"table": t, "read_row_instead_of": str(key[f"row:{t}"].iloc[k]) if f"row:{t}" in key.columns else "",
                                "given": given, "expected": expected, "risk_error": moved - key_risk})
        slips = []
        if total is None:
            slips.append("no total")
        answered = [v for v in given_points.values() if v is not None]
        if total is not None and len(answered) == len(terms) and answered and sum(answered) != total:
            slips.append(f"addition: the table points add up to {sum(answered)}, not {total}")
        given_risk = str(answers["risk"].iloc[r]).strip() if "risk" in answers.columns else ""
        if given_risk and total is not None:
            if not _same_risk(given_risk, risk_text(float(_risk(key, [total])[0]))):
                slips.append(f"conversion: total {total} reads {risk_text(float(_risk(key, [total])[0]))} on the sheet, not {given_risk}")
        given_band = str(answers["band"].iloc[r]).strip() if "band" in answers.columns else ""
        band_ok = not given_band or given_band.lower() == str(key["band"].iloc[k]).strip().lower()
        if not band_ok:
            slips.append(f"band: {given_band!r} instead of {key['band'].iloc[k]!r}")
        risk_ok = not given_risk or _same_risk(given_risk, str(key["risk"].iloc[k]))
        right = total == key_total and risk_ok and band_ok and not misread
        results.append({
            "id": vid, "right": bool(right), "total": total, "expected_total": key_total,
            "risk": given_risk, "expected_risk": str(key["risk"].iloc[k]), "band": given_band, "expected_band": str(key["band"].iloc[k]),
            "risk_error": None if total is None else float(_risk(key, [total])[0]) - key_risk,
            "misread": misread, "slips": slips,
        })
    not_answered = [i for i in key["id"] if i not in seen]
    per_table = []
    for t in terms:
        errors = [m["risk_error"] for res in results for m in res["misread"] if m["table"] == t]
        answered = sum(1 for res in results if f"points:{t}" in answers.columns)
        per_table.append({"table": labels[t], "answered": answered, "misread": len(errors),
                          "mean_abs_risk_error": float(np.mean(np.abs(errors))) if errors else 0.0,
                          "largest_abs_risk_error": float(np.max(np.abs(errors))) if errors else 0.0})
    return {"document": "scorecard-marks", "format_version": 1, "sheet_fingerprint": key["sheet_fingerprint"].iloc[0],
            "vignettes": results, "not_answered": not_answered, "right": sum(r["right"] for r in results),
            "marked": len(results), "per_table": per_table,
            "addition_slips": sum(any(s.startswith("addition") for s in r["slips"]) for r in results),
            "conversion_slips": sum(any(s.startswith("conversion") for s in r["slips"]) for r in results),
            "band_slips": sum(any(s.startswith("band") for s in r["slips"]) for r in results)}
