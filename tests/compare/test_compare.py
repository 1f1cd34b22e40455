"""`scorecard compare`: two hand-built sheet versions whose changes are known row by row (worked by hand from
tests/audit/handmade.py), the band-to-band table against pandas' crosstab of the two versions' `score` outputs,
and two model documents whose shapes differ by a known amount."""

from __future__ import annotations

import copy
import io
import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.compare import cohort_changes, model_changes, sheet_changes
from scorecard.compare.sheets import continuous_pieces
from scorecard.jsondoc import pretty_text
from scorecard.model import model_from_dict
from tests.audit.handmade import model_dict, sheet_dict


def _new_model() -> dict:
    """Age re-cut at 75/85 instead of 70/80/90, temperature's fever row worth more, prior delirium removed."""
    m = model_dict()
    age = next(t for t in m["terms"] if t["name"] == "age")
    age["edges"], age["scores"] = [75.0, 85.0], [-0.5, 0.25, 1.0]
    temp = next(t for t in m["terms"] if t["name"] == "temperature")
    temp["scores"] = [0.25, 0.0, 0.3, 1.25]
    m["terms"] = [t for t in m["terms"] if t["name"] != "prior_delirium"]
    return m


@pytest.fixture(scope="module")
def versions():
    return sheet_dict(), sheet_dict(_new_model())


def _piece_table(term: dict) -> list[tuple]:
    return [(p["values"], p["old"] and p["old"]["points"], p["new"] and p["new"]["points"]) for p in term["pieces"]]


def test_age_pieces_follow_both_versions_cut_points(versions):
    old, new = versions
    report = sheet_changes(old, new)
    age = next(t for t in report["terms"] if t["name"] == "age")
    # worked by hand: old rows ≤69:0 70–79:2 80–89:4 ≥90:6 (scores -0.5,0.1,0.5,1.0 at 0.25 per point);
    # new rows ≤74:0 75–84:3 ≥85:6 (scores -0.5,0.25,1.0); the model refuses a missing age: no row either side
    assert _piece_table(age) == [("≤ 69", 0, 0), ("70–74", 2, 0), ("75–79", 2, 3), ("80–84", 4, 3), ("85–89", 4, 6),
                                 ("≥ 90", 6, 6), ("not measured", None, None)]
    assert age["rows_recut"] and age["points_changed"] and age["status"] == "changed"
    temp = next(t for t in report["terms"] if t["name"] == "temperature")
    assert not temp["rows_recut"] and temp["points_changed"]
    assert [(p["values"], p["old"]["points"], p["new"]["points"]) for p in temp["pieces"] if p["old"] != p["new"]] == [("≥ 38.5", 3, 5)]
    removed = next(t for t in report["terms"] if t["name"] == "prior_delirium")
    assert removed["status"] == "removed"
    assert report["summary"] == {"added": 0, "removed": 1, "changed": 2, "unchanged": 3}


def test_a_coarser_version_cuts_where_half_up_rounding_puts_it():
    # old prints whole degrees (row ≥ 38 starts at 37.5 once rounded half up), new prints one decimal, cut at 37.8
    old = {"decimals": 0, "rows": [{"lower": None, "upper": 38, "text": "≤ 37", "points": 0}, {"lower": 38, "upper": None, "text": "≥ 38", "points": 2}]}
    new = {"decimals": 1, "rows": [{"lower": None, "upper": 37.8, "text": "≤ 37.7", "points": 0}, {"lower": 37.8, "upper": None, "text": "≥ 37.8", "points": 2}]}
    pieces = continuous_pieces(old, new)
    assert [(p["values"], p["old"]["row"], p["new"]["row"]) for p in pieces[:-1]] == [
        ("≤ 37.4", "≤ 37", "≤ 37.7"), ("37.5–37.7", "≥ 38", "≤ 37.7"), ("≥ 37.8", "≥ 38", "≥ 37.8")]


def test_a_coarser_version_read_in_completed_units_cuts_at_the_whole_unit():
    # docs/sheet-document.md: read in completed years, 37.9 counts as 37, so the old row ≥ 38 starts at 38.0
    old = {"decimals": 0, "reading": "completed", "rows": [{"lower": None, "upper": 38, "text": "≤ 37", "points": 0},
                                                          {"lower": 38, "upper": None, "text": "≥ 38", "points": 2}]}
    new = {"decimals": 1, "rows": [{"lower": None, "upper": 37.8, "text": "≤ 37.7", "points": 0}, {"lower": 37.8, "upper": None, "text": "≥ 37.8", "points": 2}]}
    pieces = continuous_pieces(old, new)
    assert [(p["values"], p["old"]["row"], p["new"]["row"]) for p in pieces[:-1]] == [
        ("≤ 37.7", "≤ 37", "≤ 37.7"), ("37.8–37.9", "≤ 37", "≥ 37.8"), ("≥ 38.0", "≥ 38", "≥ 37.8")]


def test_conversion_changes_list_every_total_that_prints_differently(versions):
    old, new = versions
    report = sheet_changes(old, new)
    old_text = {c["total"]: c["text"] for c in old["conversion"]}
    new_text = {c["total"]: c["text"] for c in new["conversion"]}
    listed = {e["total"]: e for e in report["conversion"]}
    for total in set(old_text) | set(new_text):
        if old_text.get(total) != new_text.get(total):
            assert total in listed, total
    for e in listed.values():
        assert (e["old_risk"], e["old_band"]) != (e["new_risk"], e["new_band"])


def _cohort(n=400, seed=5) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({
        "age": rng.integers(60, 101, n).astype(str),
        "temperature": np.round(rng.uniform(35.0, 40.0, n), 2).astype(str),
        "cognition": rng.integers(0, 11, n).astype(str),
        "residence": rng.choice(["home", "care_home", "hospital", ""], n),
        "prior_delirium": rng.choice(["0", "1"], n),  # the sheet has no not-measured row for it: it must be measured
    })
    frame.attrs["source"] = "invented.csv"
    return frame


def test_band_table_matches_pandas_crosstab_of_the_two_score_outputs(versions, tmp_path):
    old, new = versions
    frame = _cohort()
    (tmp_path / "old.json").write_text(pretty_text(old))
    (tmp_path / "new.json").write_text(pretty_text(new))
    frame.to_csv(tmp_path / "c.csv", index=False)
    runner = CliRunner()
    for name in ("old", "new"):
        r = runner.invoke(main, ["score", str(tmp_path / f"{name}.json"), str(tmp_path / "c.csv"), "-o", str(tmp_path / f"{name}.csv")])
        assert r.exit_code == 0, r.output
    a, b = pd.read_csv(tmp_path / "old.csv"), pd.read_csv(tmp_path / "new.csv")
    changes = cohort_changes(old, new, frame)
    # outside reference: pandas.crosstab of the band columns written by `score` for each version
    table = pd.crosstab(a["band"], b["band"]).reindex(index=["low", "moderate", "high"], columns=["low", "moderate", "high"], fill_value=0)
    assert changes["bands"]["counts"] == table.to_numpy().tolist()
    assert changes["total_changed"] == int((a["total"] != b["total"]).sum())
    assert changes["bands"]["band_changed"] == int((a["band"] != b["band"]).sum())


def test_model_shapes_moved_by_a_known_amount():
    old = model_from_dict(model_dict())
    changed = model_dict()
    next(t for t in changed["terms"] if t["name"] == "cognition")["scores"] = [0.5, 0.0, -0.75]  # last bin -0.25 -> -0.75
    report = model_changes(old, model_from_dict(changed))
    cog = next(t for t in report["terms"] if t["name"] == "cognition")
    assert cog["status"] == "changed" and cog["largest_shift"] == pytest.approx(0.5)
    assert all(t["status"] == "unchanged" for t in report["terms"] if t["name"] != "cognition")


def test_cli_writes_pdf_and_json_and_refuses_mixed_documents(versions, tmp_path):
    old, new = versions
    (tmp_path / "old.json").write_text(pretty_text(old))
    (tmp_path / "new.json").write_text(pretty_text(new))
    (tmp_path / "m.json").write_text(pretty_text(model_dict()))
    _cohort().to_csv(tmp_path / "c.csv", index=False)
    runner = CliRunner()
    r = runner.invoke(main, ["compare", str(tmp_path / "old.json"), str(tmp_path / "new.json"), "--data", str(tmp_path / "c.csv"),
                             "-o", str(tmp_path / "x.pdf"), "--json", str(tmp_path / "x.json")])
    assert r.exit_code == 0, r.output
    assert (tmp_path / "x.pdf").read_bytes().startswith(b"%PDF")
    doc = json.loads((tmp_path / "x.json").read_text())
    assert doc["old"]["fingerprint"] == old["fingerprint"] and doc["new"]["fingerprint"] == new["fingerprint"]
    for args, needle in (
        (["compare", str(tmp_path / "old.json"), str(tmp_path / "m.json"), "-o", str(tmp_path / "y.pdf")], "compare two sheets or two models"),
        (["compare", str(tmp_path / "old.json"), str(tmp_path / "new.json")], "give -o"),
        (["compare", str(tmp_path / "m.json"), str(tmp_path / "m.json"), "--data", str(tmp_path / "c.csv"), "-o", str(tmp_path / "y.pdf")], "--data"),
        (["compare", str(tmp_path / "c.csv"), str(tmp_path / "new.json"), "-o", str(tmp_path / "y.pdf")], "not valid JSON"),
        (["compare", str(tmp_path / "old.json"), str(tmp_path / "new.json"), "-o", str(tmp_path / "old.json")], "also an input"),
    ):
        r = runner.invoke(main, args)
        assert r.exit_code == 2, (args, r.output)
        assert needle in r.output and len(r.output.strip().splitlines()) == 1, r.output
    assert not (tmp_path / "y.pdf").exists()
    r = runner.invoke(main, ["compare", str(tmp_path / "old.json"), str(tmp_path / "old.json"), "--json", str(tmp_path / "z.json")])
    assert r.exit_code == 0 and "no change" in r.output
