"""The sheet document: schema and structure checks name the field; save is canonical, atomic, fingerprinted."""

import copy
import json

import pytest

from scorecard.errors import UserError
from scorecard.jsondoc import canonical_bytes
from scorecard.sheet import load_sheet, save_sheet, sheet_fingerprint, short_fingerprint, validate_sheet_dict


def test_example_is_valid(sheet_doc):
    validate_sheet_dict(sheet_doc)


def test_round_trip_is_byte_identical_and_fingerprinted(sheet_doc, tmp_path):
    a, b = tmp_path / "a.sheet.json", tmp_path / "b.sheet.json"
    fp = save_sheet(sheet_doc, a)
    assert len(fp) == 64 and sheet_doc["fingerprint"] == fp
    loaded = load_sheet(a)
    save_sheet(loaded, b)
    assert a.read_bytes() == b.read_bytes()
    assert short_fingerprint(loaded) == fp[:12]
    # the fingerprint is the SHA-256 of the canonical JSON without the fingerprint key
    import hashlib

    body = {k: v for k, v in loaded.items() if k != "fingerprint"}
    assert hashlib.sha256(canonical_bytes(body)).hexdigest() == fp == sheet_fingerprint(loaded)


def test_edited_sheet_is_refused(sheet_doc, tmp_path):
    path = tmp_path / "s.sheet.json"
    save_sheet(sheet_doc, path)
    doc = json.loads(path.read_text())
    doc["terms"][0]["rows"][2]["points"] = 4  # still inside the conversion table: only the fingerprint shows the edit
    path.write_text(json.dumps(doc))
    with pytest.raises(UserError, match="fingerprint"):
        load_sheet(path)
    assert load_sheet(path, check_fingerprint=False)["terms"][0]["rows"][2]["points"] == 4


def test_missing_fingerprint_is_refused(sheet_doc, tmp_path):
    path = tmp_path / "s.sheet.json"
    path.write_text(json.dumps(sheet_doc))
    with pytest.raises(UserError, match="fingerprint: missing"):
        load_sheet(path)


def test_failed_save_leaves_old_file(sheet_doc, tmp_path):
    path = tmp_path / "s.sheet.json"
    save_sheet(copy.deepcopy(sheet_doc), path)
    before = path.read_bytes()
    bad = copy.deepcopy(sheet_doc)
    bad["scale"]["logodds_per_point"] = -1
    with pytest.raises(UserError, match="scale.logodds_per_point"):
        save_sheet(bad, path)
    assert path.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["s.sheet.json"]


def _break(doc, how):
    how(doc)
    return doc


MALFORMED = [
    (lambda d: d.pop("conversion"), "'conversion' is a required property"),
    (lambda d: d["terms"][0]["rows"][1].__setitem__("points", 1.5), r"terms\[0\].rows\[1\].points"),
    (lambda d: d["terms"][0]["rows"][1].__setitem__("lower", 71), r"terms\[0\].rows\[1\].lower: must equal the previous"),
    (lambda d: d["terms"][0]["rows"][1].__setitem__("text", "70-79"), r"terms\[0\].rows\[1\].text: .* must print '70–79'"),
    (lambda d: d["terms"][0]["rows"][0].__setitem__("lower", 50), r"terms\[0\].rows\[0\].lower: the first row must be open"),
    (lambda d: d["terms"][1]["rows"][0].__setitem__("upper", 32.55), r"terms\[1\].rows\[0\].upper: 32.55 is not a multiple"),
    (lambda d: d["terms"][1]["rows"].insert(0, d["terms"][1]["rows"].pop()), r"terms\[1\].rows\[0\]: the not-measured row"),
    (lambda d: d["terms"][2].__setitem__("unseen", "guess"), r"terms\[2\].unseen: \"guess\" is not one of"),
    (lambda d: d["terms"][2]["rows"][1]["levels"].append("home"), r"terms\[2\].rows\[1\].levels: level 'home' appears in two rows"),
    (lambda d: d["terms"][3]["rows"][1].__setitem__("value", False), r"terms\[3\].rows: a flag needs exactly one row"),
    (lambda d: d["terms"][4]["points"].append([1, 1]), r"terms\[4\].points: grid must be 2x2"),
    (lambda d: d["terms"][4]["axes"][1].__setitem__("feature", "age"), r"terms\[4\].axes\[1\].feature"),
    (lambda d: d["conversion"].pop(3), r"conversion: must list every total from 0 to 14"),
    (lambda d: d["conversion"][2].__setitem__("risk", 0.5), r"conversion\[2\].risk"),
    (lambda d: d["conversion"][2].__setitem__("text", "6%"), r"conversion\[2\].text"),
    (lambda d: d["bands"].reverse(), r"bands\[1\].upper_risk: only the last band"),
    (lambda d: d["conversion"][2].__setitem__("spread", {"patients": 30, "low": 0.2, "high": 0.1}), r"conversion\[2\].spread: low 0.2 is above high"),
    (lambda d: d["conversion"][2].__setitem__("spread", {"patients": 30, "low": 0.2, "high": None}), r"conversion\[2\].spread: low and high"),
    (lambda d: d["conversion"][2].__setitem__("spread", {"patients": 30, "low": -0.2, "high": 0.3}), r"conversion\[2\].spread.low"),
    (lambda d: d["model"].__setitem__("fingerprint", "xyz"), r"model.fingerprint"),
    (lambda d: d.__setitem__("colour", "red"), r"Additional properties are not allowed \('colour'"),
    (lambda d: d.__setitem__("format_version", 2), "format_version 2 is not supported"),
    (lambda d: d["achieved"].pop("auc_loss"), r"achieved: 'auc_loss' is a required property"),
]


@pytest.mark.parametrize("how,message", MALFORMED)
def test_malformed_sheets_name_the_field(sheet_doc, how, message):
    doc = _break(sheet_doc, how)
    with pytest.raises(UserError, match=message) as caught:
        validate_sheet_dict(doc, "ward.sheet.json")
    text = str(caught.value)
    assert text.startswith("ward.sheet.json: ") and "\n" not in text


def test_model_document_is_told_to_quantize(tmp_path):
    path = tmp_path / "m.json"
    path.write_text(json.dumps({"document": "scorecard-model"}))
    with pytest.raises(UserError, match="scorecard quantize"):
        load_sheet(path)
