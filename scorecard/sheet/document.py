"""The sheet document (`*.sheet.json`): validation, load and save. The JSON is the contract; in memory a sheet
is the same plain dict (docs/sheet-document.md).

Loading is all-or-nothing: the JSON Schema shipped in this package checks names and types, then
`_check_structure` checks what a schema cannot (rows contiguous at the printed precision, printed texts equal
to the rules in `scorecard.sheet.printed`, a complete and exact conversion table, grid shapes, the
fingerprint). Every failure is one `UserError` line naming the file and the field path.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path
from typing import Any

import jsonschema

from scorecard.errors import UserError, shown
from scorecard.jsondoc import first_unprintable, schema_error_line, schema_validator, atomic_write_text, fingerprint, normalise, pretty_text, read_json_file
from scorecard.sheet.printed import is_on_grid, range_text, risk_text, units

FORMAT_VERSION = 1
DOCUMENT_TAG = "scorecard-sheet"
SHORT_FINGERPRINT_LENGTH = 12


def sheet_fingerprint(doc: dict) -> str:
    """SHA-256 of the canonical JSON of the document without its `fingerprint` key."""
    return fingerprint(doc, exclude=("fingerprint",))


def short_fingerprint(doc: dict) -> str:
    """The first 12 hex characters of the sheet fingerprint: what is printed on every page."""
    return (doc.get("fingerprint") or sheet_fingerprint(doc))[:SHORT_FINGERPRINT_LENGTH]


def _validator() -> jsonschema.protocols.Validator:
    return schema_validator("scorecard.sheet", "schemas/sheet.schema.json")


def validate_sheet_dict(doc: Any, source: str = "sheet") -> None:
    """Raise UserError (one line naming `source` and the field) for the first problem in a sheet document.

    A `fingerprint`, when present, must match the content."""
    if not isinstance(doc, dict):
        raise UserError(f"{source}: expected a JSON object (a sheet document), found {type(doc).__name__}")
    if doc.get("document") == "scorecard-model":
        raise UserError(f"{source}: this is a model document; run `scorecard quantize` to make a sheet from it")
    if "format_version" in doc and doc["format_version"] != FORMAT_VERSION:
        raise UserError(
            f"{source}: format_version {doc['format_version']!r} is not supported (this scorecard reads {FORMAT_VERSION}); "
            "quantize the model again with this version"
        )
    errors = list(_validator().iter_errors(doc))
    if errors:
        raise UserError(f"{source}: {schema_error_line(jsonschema.exceptions.best_match(errors))}")
    problem = first_unprintable(doc) or _check_structure(doc)
    if problem:
        raise UserError(f"{source}: {problem}")
    if "fingerprint" in doc and doc["fingerprint"] != sheet_fingerprint(doc):
        raise UserError(
            f"{source}: fingerprint: does not match the content (the sheet was changed after it was made); "
            "quantize again rather than editing the sheet by hand"
        )


def _finite(value: float, where: str) -> str | None:
    return None if math.isfinite(value) else f"{where}: must be a finite number"


def _check_continuous_rows(rows: list[dict], decimals: int, where: str) -> str | None:
    ranged = [(i, r) for i, r in enumerate(rows) if not r.get("missing")]
    missing = [i for i, r in enumerate(rows) if r.get("missing")]
    if not ranged:
        return f"{where}: needs at least one row with a range"
    if len(missing) > 1 or (missing and missing[0] != len(rows) - 1):
        return f"{where}[{missing[-1]}]: the not-measured row must be the single last row"
    first_i, first = ranged[0]
    last_i, last = ranged[-1]
    if first["lower"] is not None:
        return f"{where}[{first_i}].lower: the first row must be open (null) so every low value has a row"
    if last["upper"] is not None:
        return f"{where}[{last_i}].upper: the last row must be open (null) so every high value has a row"
    for k, (i, r) in enumerate(ranged):
        for key in ("lower", "upper"):
            v = r[key]
            if v is not None and not is_on_grid(v, decimals):
                return f"{where}[{i}].{key}: {v} is not a multiple of 10^-{decimals} (the printed precision)"
        if k > 0:
            prev_i, prev = ranged[k - 1]
            if prev["upper"] is None or r["lower"] is None or units(prev["upper"], decimals) != units(r["lower"], decimals):
                return f"{where}[{i}].lower: must equal the previous row's upper ({prev['upper']}) so rows have no gap and no overlap"
        if r["lower"] is not None and r["upper"] is not None and units(r["upper"], decimals) <= units(r["lower"], decimals):
            return f"{where}[{i}]: upper {r['upper']} must be above lower {r['lower']}"
        want = range_text(r["lower"], r["upper"], decimals)
        if r["text"] != want:
            return f"{where}[{i}].text: {shown(r['text'], quote=repr)} does not match the range; it must print {want!r}"
    return None


def _check_level_rows(rows: list[dict], where: str) -> str | None:
    seen: set[str] = set()
    for i, r in enumerate(rows):
        for lv in r.get("levels", []):
            if lv in seen:
                return f"{where}[{i}].levels: level {lv!r} appears in two rows"
            seen.add(lv)
    return None


def _check_flag_rows(rows: list[dict], where: str) -> str | None:
    values = [r["value"] for r in rows if "value" in r]
    if sorted(values) != [False, True]:
        return f"{where}: a flag needs exactly one row for false (No) and one for true (Yes)"
    return None


def _check_special_rows(rows: list[dict], where: str) -> str | None:
    for key in ("missing", "other"):
        at = [i for i, r in enumerate(rows) if r.get(key)]
        if len(at) > 1:
            return f"{where}[{at[1]}]: only one {key} row is allowed"
    return None


def _check_axis(axis: dict, where: str) -> str | None:
    if axis["kind"] == "continuous":
        return _check_continuous_rows(axis["rows"], axis["decimals"], f"{where}.rows")
    if axis["kind"] == "flag":
        return _check_flag_rows(axis["rows"], f"{where}.rows")
    return _check_level_rows(axis["rows"], f"{where}.rows")


def _check_term(t: dict, where: str) -> str | None:
    kind = t["kind"]
    if kind == "pair":
        if t["features"][0] == t["features"][1]:
            return f"{where}.features: a pair needs two different features"
        for j, axis in enumerate(t["axes"]):
            if axis["feature"] != t["features"][j]:
                return f"{where}.axes[{j}].feature: {axis['feature']!r} must be {t['features'][j]!r} (features[{j}])"
            bad = _check_axis(axis, f"{where}.axes[{j}]")
            if bad:
                return bad
        n0, n1 = (len(a["rows"]) for a in t["axes"])
        grid = t["points"]
        if len(grid) != n0 or any(len(row) != n1 for row in grid):
            return f"{where}.points: grid must be {n0}x{n1} (rows of axis 0 x rows of axis 1)"
        return None
    rows = t["rows"]
    bad = _check_special_rows(rows, f"{where}.rows")
    if bad:
        return bad
    if kind == "continuous":
        if t["training_range"]["min"] > t["training_range"]["max"]:
            return f"{where}.training_range: min is above max"
        return _check_continuous_rows(rows, t["decimals"], f"{where}.rows")
    if kind == "flag":
        return _check_flag_rows(rows, f"{where}.rows")
    bad = _check_level_rows(rows, f"{where}.rows")
    if bad:
        return bad
    has_other = any(r.get("other") for r in rows)
    if (t["unseen"] == "other") != has_other:
        return f"{where}.unseen: is {t['unseen']!r}, so the term must {'have' if t['unseen'] == 'other' else 'not have'} an other row"
    if t["unseen"] == "missing" and not any(r.get("missing") for r in rows):
        return f"{where}.unseen: is 'missing' but the term has no not-measured row"
    return None


MAX_TOTAL_RANGE = 100_000  # totals a conversion table may list (the schema bounds each row's points at 10^5)


def _term_points(t: dict) -> list[int]:
    if t["kind"] == "pair":
        return [p for row in t["points"] for p in row] + ([t["missing_points"]] if t.get("missing_points") is not None else [])
    return [r["points"] for r in t["rows"]]


def _reachable_totals(terms: list[dict]) -> tuple[int, int]:
    """Lowest and highest total the printed rows can add up to (one row or grid cell per block)."""
    points = [_term_points(t) for t in terms]
    return sum(min(p) for p in points if p), sum(max(p) for p in points if p)


def _check_structure(doc: dict) -> str | None:
    scale = doc["scale"]
    bad = _finite(scale["logodds_per_point"], "scale.logodds_per_point") or _finite(scale["offset"], "scale.offset")
    if bad:
        return bad
    names: set[str] = set()
    for i, t in enumerate(doc["terms"]):
        where = f"terms[{i}]"
        if t["name"] in names:
            return f"{where}.name: term {t['name']!r} appears twice"
        names.add(t["name"])
        bad = _check_term(t, where)
        if bad:
            return bad
    lo, hi = doc["total"]["min"], doc["total"]["max"]
    if lo > hi:
        return f"total: min {lo} is above max {hi}"
    if hi - lo > MAX_TOTAL_RANGE:
        return f"total: {lo} to {hi} is more than {MAX_TOTAL_RANGE} totals; no one adds such points by hand, quantize again"
    reach = _reachable_totals(doc["terms"])
    if reach[0] < lo or reach[1] > hi:
        return (f"total: the printed points add up to totals from {reach[0]} to {reach[1]}, but total and the conversion "
                f"table cover only {lo} to {hi}; a patient's total would have no risk; quantize the model again")
    conv = doc["conversion"]
    totals = [c["total"] for c in conv]
    if totals != list(range(lo, hi + 1)):
        return f"conversion: must list every total from {lo} to {hi} once, in order"
    a, b = scale["offset"], scale["logodds_per_point"]
    for i, c in enumerate(conv):
        z = a + b * c["total"]
        exact = 1.0 / (1.0 + math.exp(-z)) if z >= 0 else math.exp(z) / (1.0 + math.exp(z))
        if abs(c["risk"] - exact) > 1e-9:
            return f"conversion[{i}].risk: {c['risk']} is not logistic(offset + logodds_per_point * {c['total']}) = {exact:.6g}"
        if c["text"] != risk_text(c["risk"]):
            return f"conversion[{i}].text: {c['text']!r} must print {risk_text(c['risk'])!r}"
        spread = c.get("spread")
        if spread is not None and (spread["low"] is None) != (spread["high"] is None):
            return f"conversion[{i}].spread: low and high are both numbers or both null (the range is printed as low to high)"
        if spread is not None and spread["low"] is not None and spread["low"] > spread["high"]:
            return f"conversion[{i}].spread: low {spread['low']} is above high {spread['high']}; quantize the model again"
    bands = doc["bands"]
    if bands:
        uppers = [bd["upper_risk"] for bd in bands]
        if uppers[-1] is not None or any(u is None for u in uppers[:-1]):
            return f"bands[{len(bands) - 1}].upper_risk: only the last band is open-ended (null)"
        for i in range(1, len(uppers) - 1):
            if not uppers[i] > uppers[i - 1]:
                return f"bands[{i}].upper_risk: must be above the previous band's upper_risk"
        if len({bd["name"] for bd in bands}) != len(bands):
            return "bands: two bands have the same name"
        firsts = [bd.get("first_total") for bd in bands]
        if any(f is not None for f in firsts):
            lowest, highest = conv[0]["total"], conv[-1]["total"]
            if any(f is None for f in firsts):
                return f"bands[{firsts.index(None)}].first_total: give it on every band or on none"
            if firsts[0] != lowest:
                return f"bands[0].first_total: {firsts[0]} must be the lowest total, {lowest}"
            for i in range(1, len(firsts)):
                if not firsts[i - 1] <= firsts[i] <= highest + 1:
                    return (f"bands[{i}].first_total: {firsts[i]} must be from the previous band's first_total "
                            f"({firsts[i - 1]}) to one above the highest total ({highest + 1})")
    return None


def load_sheet(path: str | Path, check_fingerprint: bool = True) -> dict:
    """Read and validate a sheet document; returns the plain dict, or raises one UserError line.

    With `check_fingerprint` (the default) a sheet without a matching `fingerprint` is refused; the audit's
    tamper check may pass False to read the content and report the mismatch itself."""
    doc = read_json_file(path, "sheet document (*.sheet.json)")
    source = str(path)
    if check_fingerprint:
        if isinstance(doc, dict) and doc.get("document") == DOCUMENT_TAG and "fingerprint" not in doc:
            raise UserError(f"{source}: fingerprint: missing; a sheet is only valid as written by `scorecard quantize`")
        validate_sheet_dict(doc, source)
    else:
        body = {k: v for k, v in doc.items() if k != "fingerprint"} if isinstance(doc, dict) else doc
        validate_sheet_dict(body, source)
    return doc


def save_sheet(doc: dict, path: str | Path, protect: tuple = ()) -> str:
    """Validate, compute and store the fingerprint, write the canonical form atomically; return the fingerprint.

    `doc` is updated in place with its `fingerprint`."""
    body = normalise({k: v for k, v in doc.items() if k != "fingerprint"})
    validate_sheet_dict(body, source=f"{path} (about to be written)")
    body["fingerprint"] = sheet_fingerprint(body)
    atomic_write_text(path, pretty_text(body), protect=protect)
    doc.clear()
    doc.update(copy.deepcopy(body))
    return body["fingerprint"]
