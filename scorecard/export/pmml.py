"""A sheet document as a PMML 4.4 Scorecard (the Data Mining Group's open standard for predictive models).

- one `Characteristic` per printed table, one `Attribute` per printed row with its predicate and partial score
  (the row's points), in print order; the not-measured row is an `isMissing` predicate; a table without one
  matches no attribute for a missing value, so the engine refuses the record, as `scorecard score` refuses the
  patient (measure first); an "Other" row, or a category that counts as not measured, is a final `True`
  predicate;
- a pair grid is one `Characteristic` with an `Attribute` per cell (the two axis predicates joined by `and`),
  and the grid's not-measured points when either item is missing;
- the printed reading rule is built into the cut-points: a row whose printed lower bound is L at d decimals
  starts at L - 0.5 × 10^-d when read half up (values written 69.5 or more count as 70) and at L when read in
  completed units (79.6 years counts as 79), written as a decimal literal so a tie parses to the same binary
  number as the measurement and goes the way the sheet says;
- the predicted value is the sheet's total points (`initialScore` 0); the point scale and the conversion are
  `Output` transformations: `log_odds` = offset + log-odds per point × total, `risk` = 1 / (1 + exp(-log_odds))
  and, when the sheet has bands, `band` by `Discretize` of the risk (of the total points when the bands carry
  the totals where they begin). A `Targets` rescale is not used, because
  it would replace the predicted total with the log-odds;
- the header names the sheet, carries its full fingerprint (an `Extension` and the description), the cautions
  and, for a sheet made from invented data, the invented-data mark.

Deterministic: the same sheet gives the same bytes (no timestamp).
"""

from __future__ import annotations

from decimal import Decimal
from xml.etree import ElementTree as ET

from scorecard import __version__
from scorecard.audit.paper import sheet_features
from scorecard.invented import MARK, is_invented
from scorecard.sheet import short_fingerprint
from scorecard.sheet.printed import COMPLETED, reading_of

NAMESPACE = "http://www.dmg.org/PMML-4_4"
TOTAL_FIELD = "total_points"


def _start(value: float, block: dict) -> str:
    """Where a printed cut starts for a measurement as written, as an exact decimal literal: half a printed unit
    below it when read half up (70 at 0 decimals -> '69.5'), the cut itself when read in completed units."""
    decimals = int(block["decimals"])
    cut = Decimal(repr(float(value))).quantize(Decimal(1).scaleb(-decimals))
    if reading_of(block) == COMPLETED:
        return str(cut)
    return str(cut - Decimal(5).scaleb(-decimals - 1))


def _el(parent, tag: str, **attrs) -> ET.Element:
    return ET.SubElement(parent, tag, {k: str(v) for k, v in attrs.items()})


def _range_predicate(parent, field: str, row: dict, block: dict) -> None:
    parts = []
    if row["lower"] is not None:
        parts.append(("greaterOrEqual", _start(row["lower"], block)))
    if row["upper"] is not None:
        parts.append(("lessThan", _start(row["upper"], block)))
    if not parts:
        _el(parent, "SimplePredicate", field=field, operator="isNotMissing")
    elif len(parts) == 1:
        _el(parent, "SimplePredicate", field=field, operator=parts[0][0], value=parts[0][1])
    else:
        both = _el(parent, "CompoundPredicate", booleanOperator="and")
        for op, v in parts:
            _el(both, "SimplePredicate", field=field, operator=op, value=v)


def _levels_predicate(parent, field: str, levels: list[str]) -> None:
    pred = _el(parent, "SimpleSetPredicate", field=field, booleanOperator="isIn")
    array = _el(pred, "Array", n=len(levels), type="string")
    array.text = " ".join('"' + lv.replace("\\", "\\\\").replace('"', '\\"') + '"' for lv in levels)


def _row_predicate(parent, block: dict, row: dict) -> None:
    """The predicate of one measured row of a block (a term or a pair axis)."""
    field = block["feature"]
    if block["kind"] == "continuous":
        _range_predicate(parent, field, row, block)
    elif block["kind"] == "flag":
        _el(parent, "SimplePredicate", field=field, operator="equal", value=1 if row["value"] else 0)
    else:
        _levels_predicate(parent, field, row["levels"])


def _attribute(parent, points: int, text: str) -> ET.Element:
    return _el(parent, "Attribute", partialScore=int(points), reasonCode=text)


def _single_characteristic(chars, term: dict) -> None:
    ch = _el(chars, "Characteristic", name=term["name"], baselineScore=0)
    rows = term["rows"]
    missing = next((r for r in rows if r.get("missing")), None)
    for row in rows:
        if row.get("missing") or row.get("other"):
            continue
        _row_predicate(_attribute(ch, row["points"], row["text"]), term, row)
    if missing is not None:  # a table without one needs the measurement: no attribute matches, the record is refused
        _el(_attribute(ch, missing["points"], missing["text"]), "SimplePredicate", field=term["feature"], operator="isMissing")
    if term["kind"] == "categorical":
        policy = term.get("unseen", "error")
        other = next((r for r in rows if r.get("other")), None)
        if policy == "other" and other is not None:
            _el(_attribute(ch, other["points"], other["text"]), "True")
        elif policy == "missing" and missing is not None:
            _el(_attribute(ch, missing["points"], f"{missing['text']} (level not listed)"), "True")
        # unseen 'error': no attribute matches an unlisted level, so the engine refuses the record, as score does


def _pair_characteristic(chars, term: dict) -> None:
    ch = _el(chars, "Characteristic", name=term["name"], baselineScore=0)
    a0, a1 = term["axes"]
    if term.get("missing_allowed", True) and not any(a.get("measure_first") for a in (a0, a1)):
        either = _el(_attribute(ch, term["missing_points"], "not measured"), "CompoundPredicate", booleanOperator="or")
        for axis in (a0, a1):
            _el(either, "SimplePredicate", field=axis["feature"], operator="isMissing")
    for i, r0 in enumerate(a0["rows"]):
        if r0.get("missing"):
            continue
        for j, r1 in enumerate(a1["rows"]):
            if r1.get("missing"):
                continue
            cell = _attribute(ch, term["points"][i][j], f"{r0['text']} / {r1['text']}")
            both = _el(cell, "CompoundPredicate", booleanOperator="and")
            _row_predicate(both, a0, r0)
            _row_predicate(both, a1, r1)
    # a level on no axis row scores the grid's not-measured points (docs/sheet-document.md)
    _el(_attribute(ch, term["missing_points"], "level on no row"), "True")


def _feature_blocks(sheet: dict) -> dict[str, dict]:
    blocks: dict[str, dict] = {}
    levels: dict[str, list[str]] = {}
    for term in sheet["terms"]:
        for block in term["axes"] if term["kind"] == "pair" else [term]:
            blocks.setdefault(block["feature"], block)
            for r in block["rows"]:
                levels.setdefault(block["feature"], [])
                levels[block["feature"]] += [lv for lv in r.get("levels", []) if lv not in levels[block["feature"]]]
    return {name: {**b, "_levels": levels.get(name, [])} for name, b in blocks.items()}


def _data_dictionary(root, sheet: dict) -> None:
    names = sheet_features(sheet)
    blocks = _feature_blocks(sheet)
    dd = _el(root, "DataDictionary", numberOfFields=len(names))
    for name in names:
        b = blocks[name]
        if b["kind"] == "continuous":
            field = _el(dd, "DataField", name=name, optype="continuous", dataType="double")
            if b.get("unit"):
                field.set("displayName", f"{b.get('label', name)} ({b['unit']})")
        elif b["kind"] == "flag":
            field = _el(dd, "DataField", name=name, optype="categorical", dataType="integer")
            for v in (0, 1):
                _el(field, "Value", value=v)
        else:
            field = _el(dd, "DataField", name=name, optype="categorical", dataType="string")
            for lv in b["_levels"]:
                _el(field, "Value", value=lv)


def _output(model, sheet: dict) -> None:
    out = _el(model, "Output")
    _el(out, "OutputField", name=TOTAL_FIELD, optype="continuous", dataType="double", feature="predictedValue")
    lo = _el(out, "OutputField", name="log_odds", optype="continuous", dataType="double", feature="transformedValue")
    plus = _el(lo, "Apply", function="+")
    _el(plus, "Constant", dataType="double").text = repr(float(sheet["scale"]["offset"]))
    times = _el(plus, "Apply", function="*")
    _el(times, "Constant", dataType="double").text = repr(float(sheet["scale"]["logodds_per_point"]))
    _el(times, "FieldRef", field=TOTAL_FIELD)
    risk = _el(out, "OutputField", name="risk", optype="continuous", dataType="double", feature="transformedValue")
    div = _el(risk, "Apply", function="/")
    _el(div, "Constant", dataType="double").text = "1"
    den = _el(div, "Apply", function="+")
    _el(den, "Constant", dataType="double").text = "1"
    exp = _el(den, "Apply", function="exp")
    neg = _el(exp, "Apply", function="*")
    _el(neg, "Constant", dataType="double").text = "-1"
    _el(neg, "FieldRef", field="log_odds")
    bands = sheet.get("bands") or []
    if bands:
        band = _el(out, "OutputField", name="band", optype="categorical", dataType="string", feature="transformedValue")
        if all(b.get("first_total") is not None for b in bands):
            # band edges on the totals (scorecard.sheet.printed.total_band_indices): first_total <= total < next
            # band's first_total, by the total points; an empty band gets no bin
            disc = _el(band, "Discretize", field=TOTAL_FIELD, dataType="string")
            firsts = [int(b["first_total"]) for b in bands] + [None]
            for k, b in enumerate(bands):
                if firsts[k + 1] is not None and firsts[k + 1] <= firsts[k]:
                    continue
                attrs = {"closure": "closedOpen"}
                if k > 0:
                    attrs["leftMargin"] = repr(float(firsts[k]))
                if firsts[k + 1] is not None and k < len(bands) - 1:
                    attrs["rightMargin"] = repr(float(firsts[k + 1]))
                _el(_el(disc, "DiscretizeBin", binValue=b["name"]), "Interval", **attrs)
            return
        disc = _el(band, "Discretize", field="risk", dataType="string")
        lower = None
        for b in bands:  # previous upper_risk <= risk < upper_risk; the first and last bins are open-ended
            attrs = {"closure": "closedOpen"}
            if lower is not None:
                attrs["leftMargin"] = repr(float(lower))
            if b["upper_risk"] is not None:
                attrs["rightMargin"] = repr(float(b["upper_risk"]))
            _el(_el(disc, "DiscretizeBin", binValue=b["name"]), "Interval", **attrs)
            lower = b["upper_risk"]


def sheet_pmml(sheet: dict) -> bytes:
    """The PMML 4.4 document (UTF-8 bytes) of a validated sheet document."""
    root = ET.Element("PMML", {"version": "4.4", "xmlns": NAMESPACE})
    fp = sheet.get("fingerprint", "")
    header = _el(root, "Header", copyright="", description=f"{sheet['title']} (sheet fingerprint {fp})")
    _el(header, "Extension", name="scorecard-sheet-fingerprint", value=fp)
    _el(header, "Extension", name="scorecard-model-fingerprint", value=sheet["model"]["fingerprint"])
    _el(header, "Application", name="scorecard", version=__version__)
    notes = ([MARK] if is_invented(sheet) else []) + list(sheet["cautions"]) + [
        f"Outcome: {sheet['outcome']['event']}; horizon: {sheet['outcome']['horizon']}; population: {sheet['outcome']['population']}.",
        f"Printed sheet {short_fingerprint(sheet)}: {sheet['rounding_rule']}"]
    for note in notes:
        _el(header, "Annotation").text = note
    _data_dictionary(root, sheet)
    model = _el(root, "Scorecard", modelName=sheet["title"], functionName="regression", useReasonCodes="false",
                initialScore=0, isScorable="true")
    schema = _el(model, "MiningSchema")
    for name in sheet_features(sheet):
        kind = _feature_blocks(sheet)[name]["kind"]
        attrs = {"name": name, "usageType": "active"}
        if kind == "categorical":
            attrs["invalidValueTreatment"] = "asIs"  # an unlisted level reaches the Other / not-measured rule
        _el(schema, "MiningField", **attrs)
    _output(model, sheet)
    chars = _el(model, "Characteristics")
    for term in sheet["terms"]:
        (_pair_characteristic if term["kind"] == "pair" else _single_characteristic)(chars, term)
    ET.indent(root, space="  ")
    return b'<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="utf-8") + b"\n"
