"""`scorecard quantize` through click's runner: a valid sheet, same bytes twice, exit 3 with figures, exit 2."""

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from quantize_models import small_model_dict
from scorecard.cli import main
from scorecard.sheet import load_sheet

FAST = ["--bootstrap", "0", "--max-rows", "6", "--max-total-points", "30", "--max-auc-loss", "0.02",
        "--risk-error-share", "0.2"]


@pytest.fixture
def model_file(tmp_path):
    path = tmp_path / "small.model.json"
    path.write_text(json.dumps(small_model_dict()))
    return path


def run(*args):
    return CliRunner().invoke(main, ["quantize", *map(str, args)])


def test_writes_a_valid_sheet_with_the_same_bytes_twice(model_file, tmp_path):
    a, b = tmp_path / "a.sheet.json", tmp_path / "b.sheet.json"
    first = run(model_file, *FAST, "--bands", "low<10,moderate<30,high", "-o", a)
    assert first.exit_code == 0, first.output
    assert "fingerprint" in first.output and "certificate" in first.output
    assert run(model_file, *FAST, "--bands", "low<10,moderate<30,high", "-o", b).exit_code == 0
    assert a.read_bytes() == b.read_bytes()
    doc = load_sheet(a)
    assert [bd["upper_risk"] for bd in doc["bands"]] == [0.1, 0.3, None]
    assert doc["achieved"]["auc_loss"] <= 0.02 and doc["achieved"]["share_over_risk_error"] <= 0.2
    assert doc["total"]["max"] - doc["total"]["min"] <= 30
    for term in doc["terms"]:  # points are non-negative by default, each table starting at 0
        pts = [p for row in term["points"] for p in row] if term["kind"] == "pair" else [r["points"] for r in term["rows"]]
        assert min(pts) == 0
    albumin = next(t for t in doc["terms"] if t["name"] == "albumin")
    assert albumin["rows"][-1]["missing"] is True


def test_allow_negative_keeps_signed_points(model_file, tmp_path):
    out = tmp_path / "s.sheet.json"
    assert run(model_file, *FAST, "--allow-negative", "-o", out).exit_code == 0
    doc = load_sheet(out)
    assert any(r["points"] < 0 for t in doc["terms"] if t["kind"] != "pair" for r in t["rows"])


def test_data_option_uses_the_cohort(model_file, tmp_path):
    rng = np.random.default_rng(0)
    n = 1500
    cohort = pd.DataFrame({"age": rng.integers(60, 100, n), "sodium": rng.integers(125, 155, n),
                           "albumin": np.where(rng.random(n) < 0.3, np.nan, rng.integers(22, 48, n)),
                           "prior_delirium": rng.integers(0, 2, n), "residence": rng.choice(["home", "family", "care_home"], n),
                           "haemoglobin": rng.integers(75, 165, n)})
    csv = tmp_path / "cohort.csv"
    cohort.to_csv(csv, index=False)
    out = tmp_path / "s.sheet.json"
    res = run(model_file, "--data", csv, *FAST, "-o", out)
    assert res.exit_code == 0, res.output
    doc = load_sheet(out)
    assert doc["achieved"]["n"] == n and "cohort of 1500" in doc["provenance"]["evaluation"]


def test_infeasible_bound_exits_3_with_best_figures(model_file, tmp_path):
    out = tmp_path / "s.sheet.json"
    res = run(model_file, "--bootstrap", "0", "--max-rows", "2", "--max-total-points", "5", "--max-auc-loss", "0.0001", "-o", out)
    assert res.exit_code == 3
    line = res.output.strip().splitlines()[-1]
    assert line.startswith("check failed: no sheet") and "best achievable misses: " in line and "ΔAUC" in line and "--max-auc-loss" in line.split("relax")[1]
    assert not out.exists()


@pytest.mark.parametrize("args,message", [
    (["--max-auc-loss", "-0.1"], "--max-auc-loss"),
    (["--max-risk-error", "0"], "--max-risk-error"),
    (["--risk-error-share", "1.5"], "--risk-error-share"),
    (["--max-rows", "0"], "--max-rows"),
    (["--max-total-points", "0"], "--max-total-points"),
    (["--bands", "low<5,moderate<20"], "--bands"),
    (["--bands", "low<20,moderate<5,high"], "--bands"),
    (["--bands", "low<abc,high"], "--bands"),
    (["--max-rows", "many"], "many"),
])
def test_bad_options_exit_2(model_file, tmp_path, args, message):
    res = run(model_file, *args, "-o", tmp_path / "s.sheet.json")
    assert res.exit_code == 2, res.output
    assert message in res.output and "Traceback" not in res.output


def test_bad_files_exit_2(model_file, tmp_path):
    res = run(model_file, "-o", model_file)
    assert res.exit_code == 2 and "input" in res.output
    res = run(tmp_path / "nope.json", "-o", tmp_path / "s.json")
    assert res.exit_code == 2 and "nope.json" in res.output
    csv = tmp_path / "c.csv"
    csv.write_text("age,sodium\n70,140\n")
    res = run(model_file, "--data", csv, "-o", tmp_path / "s.json")
    assert res.exit_code == 2 and "albumin" in res.output

