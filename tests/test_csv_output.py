"""Every CSV the tool writes is safe to open in a spreadsheet and reads back through the tool's own reader.

The rule checked is the OWASP guidance on CSV injection (owasp.org, "CSV Injection"): a cell starting with
=, +, -, @, a tab or a carriage return is run as a formula by common spreadsheets, so such a cell is written
with a leading apostrophe and the whole cell in double quotes, inner quotes doubled. Numbers (a negative
log-odds, -1.5) stay numbers. The files are parsed here by Python's csv module (RFC 4180), not by our reader.
"""

from __future__ import annotations

import csv
import io
import json

import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.cli import main
from scorecard.csv_cells import cell, frame_csv_text, unescape
from scorecard.tabular import read_csv
from tests.audit.handmade import model_dict, sheet_dict, write_handmade_files
from scorecard.jsondoc import pretty_text
from scorecard.sheet.document import sheet_fingerprint

# cells from the issue (spreadsheet formula injection), and the OWASP page's own kind of payload
HOSTILE = ["=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+2", "-2+3", "@SUM(1+1)", "=cmd|' /C calc'!A0",
           "\t=1+1", "\r=1+1", "-", "plain-id"]
SPREADSHEET_STARTS = ("=", "+", "-", "@", "\t", "\r")


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return text.strip() == text and text.lower().lstrip("+-") not in ("inf", "infinity", "nan")


def assert_inert(path) -> list[dict]:
    """Every field of the CSV at `path` that a spreadsheet would run is an apostrophe-led quoted cell."""
    raw = path.read_bytes().decode("utf-8")  # not read_text: universal newlines would turn a \r into \n
    rows = list(csv.reader(io.StringIO(raw, newline="")))
    for row in rows:
        for field in row:
            if field.startswith(SPREADSHEET_STARTS):
                assert is_number(field), f"{path.name}: {field!r} would run as a formula"
            if field.lstrip("'").startswith(SPREADSHEET_STARTS) and not is_number(field):
                # the apostrophe-led cell sits inside double quotes, inner quotes doubled (OWASP)
                assert field.startswith("'") and '"' + field.replace('"', '""') + '"' in raw, field
    return [dict(zip(rows[0], r)) for r in rows[1:]]


@pytest.fixture()
def files(tmp_path):
    folder = write_handmade_files(tmp_path, rows=len(HOSTILE) * 3)
    frame = pd.read_csv(folder / "cohort.csv")
    frame.insert(0, "patient_id", (HOSTILE * 3)[: len(frame)])
    # quoted by the csv module: pandas leaves a leading carriage return unquoted
    frame.to_csv(folder / "cohort.csv", index=False, quoting=csv.QUOTE_NONNUMERIC)
    assert read_csv(folder / "cohort.csv")["patient_id"].tolist() == (HOSTILE * 3)[: len(frame)]
    return folder


def test_the_cell_rule_follows_owasp():
    assert cell("=1+1") == "\"'=1+1\""
    assert cell('=HYPERLINK("a")') == "\"'=HYPERLINK(\"\"a\"\")\""
    assert cell("@SUM(1+1)") == "\"'@SUM(1+1)\""
    assert cell("\t=1") == "\"'\t=1\"" and cell("\r=1") == "\"'\r=1\""
    # numbers are not formulas: a negative log-odds is written as it is
    for number in ("-1.5", "+2", "-0.000123", "-1e-05", "12"):
        assert cell(number) == number
    assert cell("a,b") == '"a,b"' and cell("plain") == "plain"


def test_predict_writes_hostile_ids_inert_and_negative_logodds_as_numbers(files):
    out = files / "risks.csv"
    result = run("predict", files / "model.json", files / "cohort.csv", "--keep", "patient_id", "--contributions", "-o", out)
    assert result.exit_code == 0, result.output
    rows = assert_inert(out)
    assert [r["patient_id"] for r in rows] == ["'" + h if h.lstrip("'").startswith(SPREADSHEET_STARTS) else h
                                               for h in (HOSTILE * 3)[: len(rows)]]
    assert any(float(r["logodds"]) < 0 for r in rows) and all(not r["logodds"].startswith("'") for r in rows)
    # the tool's own reader gives back the ids exactly as they were in the cohort
    assert read_csv(out)["patient_id"].tolist() == (HOSTILE * 3)[: len(rows)]


def test_score_writes_hostile_ids_inert_and_reads_back(files):
    out = files / "scored.csv"
    result = run("score", files / "sheet.json", files / "cohort.csv", "--keep", "patient_id", "-o", out)
    assert result.exit_code == 0, result.output
    assert_inert(out)
    assert read_csv(out)["patient_id"].tolist() == (HOSTILE * 3)[: len(read_csv(out))]


def test_a_hostile_level_name_in_the_exercise_key_is_inert_and_marks_back(tmp_path):
    level = "=cmd|' /C calc'!A0"
    model = model_dict()
    for block in model["features"] + model["terms"]:
        if block.get("levels"):
            block["levels"] = [level if v == "care_home" else v for v in block["levels"]]
    sheet = sheet_dict(model)
    sheet["bands"][0]["name"] = "+ lower"
    sheet["fingerprint"] = sheet_fingerprint(sheet)
    (tmp_path / "sheet.json").write_text(pretty_text(sheet))
    result = run("exercise", tmp_path / "sheet.json", "-n", 16, "-o", tmp_path / "ex.pdf", "--key", tmp_path / "key.csv",
                 "--template", tmp_path / "answers.csv")
    assert result.exit_code == 0, result.output
    rows = assert_inert(tmp_path / "key.csv")
    assert_inert(tmp_path / "answers.csv")
    assert any(r["residence"] == "'" + level for r in rows), "the exercise drew no card with the hostile level"
    # staff answers copied from the key: marking reads the key back and gives full marks
    key = read_csv(tmp_path / "key.csv")
    assert level in key["residence"].tolist()
    assert "+ lower" in key["band"].tolist()
    (tmp_path / "filled.csv").write_text(frame_csv_text(key[["id", "total_points", "risk", "band"]]))
    assert_inert(tmp_path / "filled.csv")
    result = run("mark", tmp_path / "key.csv", tmp_path / "filled.csv", "-o", tmp_path / "marks.json")
    assert result.exit_code == 0, result.output
    marks = json.loads((tmp_path / "marks.json").read_text())
    assert marks["marked"] == 16 and marks["right"] == 16 and marks["band_slips"] == 0


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"), max_size=12),
                min_size=1, max_size=6))
def test_any_text_reads_back_exactly_through_the_tools_reader(tmp_path_factory, texts):
    path = tmp_path_factory.mktemp("csv") / "t.csv"
    path.write_text(frame_csv_text(pd.DataFrame({"id": [str(i) for i in range(len(texts))], "text": texts})),
                    encoding="utf-8")
    assert read_csv(path)["text"].tolist() == texts
    # and through Python's csv module (RFC 4180) followed by the reader's unescape
    parsed = list(csv.reader(io.StringIO(path.read_bytes().decode("utf-8"), newline="")))
    assert [unescape(row[1]) for row in parsed[1:]] == texts
