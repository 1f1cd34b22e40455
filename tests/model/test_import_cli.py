"""`scorecard import coefficients|shapes` through click's test runner."""

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.model import load_model

ROOT = Path(__file__).resolve().parents[2]
COEFFICIENTS = "term,coefficient,min,max\n(intercept),-2,,\nage,0.05,60,100\nprior_delirium,1.0,,\n"
SHAPES = "feature,lower,upper,level,score\n(intercept),,,,-1\nage,,80,,0\nage,80,,,0.6\n"
OUTCOME = ["--event", "delirium", "--horizon", "5 days", "--population", "adults 60+ after hip-fracture surgery"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_import_help_reads_as_a_manual():
    for args in (["import", "--help"], ["import", "coefficients", "--help"], ["import", "shapes", "--help"]):
        result = run(*args)
        assert result.exit_code == 0
    assert "coefficients" in run("import", "--help").output and "from_sklearn" in run("import", "--help").output
    assert "(intercept)" in run("import", "shapes", "--help").output


@pytest.mark.parametrize("verb, content", [("coefficients", COEFFICIENTS), ("shapes", SHAPES)])
def test_import_writes_a_loadable_model_with_the_same_bytes_each_time(tmp_path, verb, content):
    table = tmp_path / "table.csv"
    table.write_text(content)
    a = run("import", verb, table, "-o", tmp_path / "a.model.json", "--name", "test", *OUTCOME)
    assert a.exit_code == 0, a.output
    b = run("import", verb, table, "-o", tmp_path / "b.model.json", "--name", "test", *OUTCOME)
    assert (tmp_path / "a.model.json").read_bytes() == (tmp_path / "b.model.json").read_bytes()
    model = load_model(tmp_path / "a.model.json")
    assert model.name == "test" and model.outcome["event"] == "delirium"
    assert f"fingerprint {model.fingerprint[:12]}" in a.stderr
    assert b.exit_code == 0


def test_outcome_not_stated_is_said(tmp_path):
    table = tmp_path / "table.csv"
    table.write_text(COEFFICIENTS)
    result = run("import", "coefficients", table, "-o", tmp_path / "m.json")
    assert result.exit_code == 0
    assert "event, horizon, population not stated" in result.stderr
    assert load_model(tmp_path / "m.json").outcome["population"] == "not stated"


def test_centre_on_option(tmp_path):
    table = tmp_path / "table.csv"
    table.write_text(COEFFICIENTS)
    cohort = tmp_path / "cohort.csv"
    cohort.write_text("age,prior_delirium\n70,0\n90,1\n")
    result = run("import", "coefficients", table, "-o", tmp_path / "m.json", "--centre-on", cohort)
    assert result.exit_code == 0, result.output
    model = load_model(tmp_path / "m.json")
    # hand-checkable: age scores 0.05*60=3 and 0.05*100=5; mean over the cohort is 0.05*80 = 4
    assert model.term("age").scores == pytest.approx([-1.0, 1.0])
    assert model.term("prior_delirium").scores == pytest.approx([-0.5, 0.5])
    assert model.intercept == pytest.approx(-2 + 4 + 0.5)


@pytest.mark.parametrize(
    "case, expected",
    [
        ("no table", "no such file"),
        ("table is a folder", "is a folder"),
        ("output is the table", "is also an input"),
        ("output folder missing", "does not exist"),
        ("bad row", "row 2: continuous term 'age' needs both min and max"),
    ],
)
def test_bad_inputs_exit_2_with_one_line(tmp_path, case, expected):
    table = tmp_path / "table.csv"
    table.write_text(COEFFICIENTS)
    out = tmp_path / "m.json"
    args = ["import", "coefficients", table, "-o", out]
    if case == "no table":
        args[2] = tmp_path / "none.csv"
    elif case == "table is a folder":
        args[2] = tmp_path
    elif case == "output is the table":
        args[4] = table
    elif case == "output folder missing":
        args[4] = tmp_path / "nowhere" / "m.json"
    elif case == "bad row":
        table.write_text(COEFFICIENTS.replace("age,0.05,60,100", "age,0.05,60,"))
    before = table.read_bytes()
    result = run(*args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and expected in lines[0], result.stderr
    assert table.read_bytes() == before and not out.exists()


def test_example_model_is_the_import_of_its_table(tmp_path):
    # example_models/demo-logistic.model.json must be exactly what the importer makes from the CSV beside it
    out = tmp_path / "demo.model.json"
    result = run(
        "import", "coefficients", ROOT / "example_models" / "demo-logistic.coefficients.csv", "-o", out,
        "--name", "Delirium after hip-fracture surgery (invented logistic model)",
        "--event", "Delirium within 5 days after hip-fracture surgery",
        "--horizon", "5 days after the operation",
        "--population", "Adults aged 60 or over having surgery for a hip fracture", "--invented-data",
    )
    assert result.exit_code == 0, result.output
    assert out.read_bytes() == (ROOT / "example_models" / "demo-logistic.model.json").read_bytes()
    assert load_model(out).invented_data  # an invented model: its sheets say so on every page
    model = load_model(out)
    assert {f.name for f in model.features} == {
        "age", "cognition", "sodium", "haemoglobin", "hours_to_surgery", "medicines", "albumin", "temperature",
        "anaesthesia", "residence", "prior_delirium", "hearing_impairment", "geriatric_review"}
    assert json.loads(out.read_text())["provenance"]["file"] == "demo-logistic.coefficients.csv"
