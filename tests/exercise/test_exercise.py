"""`scorecard exercise` and `scorecard mark` on the hand-built sheet (tests/audit/handmade.py).

Outside references: the key must equal what the `score` verb writes for the same vignettes (the audit's paper
scoring is the single source of answers); the rounding cases are checked against Python's `decimal` module
(ROUND_HALF_UP, the rule printed on the sheet); a misread table's risk error is recomputed with `math` from the
logistic formula of docs/sheet-document.md."""

from __future__ import annotations

import json
import math
from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.exercise import draw_vignettes
from scorecard.jsondoc import pretty_text
from tests.audit.handmade import model_dict, sheet_dict


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("exercise")
    sheet = sheet_dict()
    (tmp / "s.json").write_text(pretty_text(sheet))
    r = CliRunner().invoke(main, ["exercise", str(tmp / "s.json"), "-n", "16", "-o", str(tmp / "ex.pdf"), "--key", str(tmp / "key.csv"),
                                  "--template", str(tmp / "answers.csv"), "--seed", "4"])
    assert r.exit_code == 0, r.output
    return tmp, sheet, pd.read_csv(tmp / "key.csv", dtype=str, keep_default_na=False)


def test_key_equals_what_score_writes_for_the_same_vignettes(made):
    tmp, sheet, key = made
    r = CliRunner().invoke(main, ["score", str(tmp / "s.json"), str(tmp / "key.csv"), "-o", str(tmp / "scored.csv"), "--keep", "id"])
    assert r.exit_code == 0, r.output
    scored = pd.read_csv(tmp / "scored.csv", dtype=str, keep_default_na=False)
    assert scored["id"].tolist() == key["id"].tolist()
    assert scored["total"].tolist() == key["total_points"].tolist()
    assert scored["sheet_risk_text"].tolist() == key["risk"].tolist()
    assert scored["band"].tolist() == key["band"].tolist()
    for t in sheet["terms"]:
        assert scored[f"points:{t['name']}"].tolist() == key[f"points:{t['name']}"].tolist()


def test_vignettes_use_every_printed_row_and_the_hard_cases(made):
    _, sheet, key = made
    for t in sheet["terms"]:
        if t["kind"] == "pair":
            continue
        used = set(key[f"row:{t['name']}"])
        assert {r["text"] for r in t["rows"]} <= used, t["name"]
    features, vignettes = draw_vignettes(sheet, 16, seed=4)
    cases = {v[f].case for v in vignettes for f in features}
    assert {"boundary", "more decimals", "not measured", "out of range", "row"} <= cases
    for v in vignettes:
        for f in features:
            if v[f].case == "more decimals":
                term = next(t for t in sheet["terms"] if t.get("feature") == f)
                written = Decimal(v[f].text)
                # outside reference: Python's decimal module reads the value by the sheet's rule (half up, or
                # completed units = floor); it lands on a printed cut or on the last printed value below one
                rule = ROUND_FLOOR if term.get("reading") == "completed" else ROUND_HALF_UP
                read = written.quantize(Decimal(1).scaleb(-term["decimals"]), rounding=rule)
                step = Decimal(1).scaleb(-term["decimals"])
                cuts = {Decimal(repr(r["lower"])) for r in term["rows"] if r.get("lower") is not None}
                assert read != written and (read in cuts or read + step in cuts)
            if v[f].case == "out of range":
                term = next(t for t in sheet["terms"] if t.get("feature") == f)
                x = float(v[f].text)
                assert x < term["training_range"]["min"] or x > term["training_range"]["max"]


def test_same_seed_same_bytes_and_another_seed_another_exercise(made, tmp_path):
    tmp, _, _ = made
    runner = CliRunner()
    for seed, name in ((4, "a"), (5, "b")):
        r = runner.invoke(main, ["exercise", str(tmp / "s.json"), "-n", "16", "-o", str(tmp_path / f"{name}.pdf"), "--key", str(tmp_path / f"{name}.csv"), "--seed", str(seed)])
        assert r.exit_code == 0, r.output
    assert (tmp_path / "a.pdf").read_bytes() == (tmp / "ex.pdf").read_bytes()
    assert (tmp_path / "a.csv").read_text() == (tmp / "key.csv").read_text()
    assert (tmp_path / "b.csv").read_text() != (tmp / "key.csv").read_text()


def test_too_few_vignettes_names_the_count_needed(made, tmp_path):
    tmp, _, _ = made
    r = CliRunner().invoke(main, ["exercise", str(tmp / "s.json"), "-n", "2", "-o", str(tmp_path / "x.pdf"), "--key", str(tmp_path / "k.csv")])
    assert r.exit_code == 2 and "-n" in r.output and "at least" in r.output
    assert not (tmp_path / "x.pdf").exists() and not (tmp_path / "k.csv").exists()


def _risk(sheet: dict, total: int) -> float:
    z = sheet["scale"]["offset"] + sheet["scale"]["logodds_per_point"] * total
    return 1 / (1 + math.exp(-z))  # docs/sheet-document.md: risk = logistic(offset + log-odds per point x total)


def test_mark_finds_the_misread_table_the_addition_slip_and_the_conversion_slip(made, tmp_path):
    tmp, sheet, key = made
    answers = pd.read_csv(tmp / "answers.csv", dtype=str, keep_default_na=False)
    terms = [t["name"] for t in sheet["terms"]]
    for col in [f"points:{t}" for t in terms] + ["total_points", "risk", "band"]:
        answers[col] = key[col.replace("total_points", "total_points")]
    # V01: age read one row too high (+2 points) and the total carried through
    a0 = int(key.loc[0, "points:age"])
    answers.loc[0, "points:age"] = str(a0 + 2)
    answers.loc[0, "total_points"] = str(int(key.loc[0, "total_points"]) + 2)
    answers.loc[0, "risk"] = ""
    # V02: every table right, but the boxes added up one too many
    answers.loc[1, "total_points"] = str(int(key.loc[1, "total_points"]) + 1)
    answers.loc[1, "risk"] = ""
    # V03: right total, the risk read from the neighbouring line of the conversion table
    t3 = int(key.loc[2, "total_points"])
    neighbour = next(c["text"] for c in sheet["conversion"] if c["total"] == (t3 + 1 if t3 < sheet["total"]["max"] else t3 - 1))
    answers.loc[2, "risk"] = neighbour
    answers.to_csv(tmp_path / "answers.csv", index=False)
    r = CliRunner().invoke(main, ["mark", str(tmp / "key.csv"), str(tmp_path / "answers.csv"), "-o", str(tmp_path / "marks.json")])
    assert r.exit_code == 0, r.output
    marks = json.loads((tmp_path / "marks.json").read_text())
    v = {m["id"]: m for m in marks["vignettes"]}
    assert not v["V01"]["right"] and [m["table"] for m in v["V01"]["misread"]] == ["age"]
    total0 = int(key.loc[0, "total_points"])
    assert v["V01"]["misread"][0]["risk_error"] == pytest.approx(_risk(sheet, total0 + 2) - _risk(sheet, total0), abs=1e-12)
    assert not v["V02"]["right"] and any(s.startswith("addition") for s in v["V02"]["slips"]) and not v["V02"]["misread"]
    assert not v["V03"]["right"] and any(s.startswith("conversion") for s in v["V03"]["slips"])
    assert all(v[f"V{k:02d}"]["right"] for k in range(4, 17))
    age = next(t for t in marks["per_table"] if t["table"] == "age")
    assert age["misread"] == 1 and marks["right"] == 13 and marks["addition_slips"] == 1 and marks["conversion_slips"] == 1
    assert "V01: WRONG" in r.output


@pytest.mark.parametrize("how, needle", [
    ("unknown_id", "is not a vignette of this key"),
    ("twice", "answered twice"),
    ("not_a_number", "not a whole number"),
    ("extra_column", "is not one the key knows"),
    ("no_total", "needs columns"),
])
def test_mark_refuses_bad_answers_in_one_line(made, tmp_path, how, needle):
    tmp, _, key = made
    answers = pd.DataFrame({"id": key["id"], "total_points": key["total_points"]})
    if how == "unknown_id":
        answers.loc[0, "id"] = "V99"
    elif how == "twice":
        answers.loc[1, "id"] = answers.loc[0, "id"]
    elif how == "not_a_number":
        answers.loc[3, "total_points"] = "twelve"
    elif how == "extra_column":
        answers["points:agee"] = "1"
    else:
        answers = answers.drop(columns=["total_points"])
    answers.to_csv(tmp_path / "a.csv", index=False)
    r = CliRunner().invoke(main, ["mark", str(tmp / "key.csv"), str(tmp_path / "a.csv")])
    assert r.exit_code == 2, r.output
    assert needle in r.output and len(r.output.strip().splitlines()) == 1, r.output


def test_mark_refuses_a_file_that_is_not_a_key(made, tmp_path):
    tmp, _, _ = made
    (tmp_path / "m.csv").write_text("id,total_points\nV01,3\n")
    r = CliRunner().invoke(main, ["mark", str(tmp_path / "m.csv"), str(tmp_path / "m.csv")])
    assert r.exit_code == 2 and "not a key written by" in r.output
