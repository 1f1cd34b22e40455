"""`scorecard predict` through click's test runner: columns, contributions, one-line errors with exit 2."""


import pandas as pd
import pytest
from click.testing import CliRunner
from scipy.special import expit

from scorecard.cli import main
from scorecard.model import model_from_dict, save_model

COHORT = """patient,age,sodium,residence,prior_delirium,cognition
p1,65,130,care_home,yes,3
p2,85,150,with_family,no,8
p3,120,,own_home,no,
"""


@pytest.fixture
def files(model_doc, tmp_path):
    model_path = tmp_path / "m.model.json"
    save_model(model_from_dict(model_doc), model_path)
    cohort_path = tmp_path / "cohort.csv"
    cohort_path.write_text(COHORT)
    return model_path, cohort_path, tmp_path


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_predict_writes_logodds_and_risk(files):
    model_path, cohort_path, tmp = files
    out = tmp / "risks.csv"
    result = run("predict", model_path, cohort_path, "-o", out, "--keep", "patient")
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out)
    assert list(table.columns) == ["patient", "logodds", "risk"]
    assert table["patient"].tolist() == ["p1", "p2", "p3"]
    # hand sums as in test_predict_semantics; patient 3: age 120 in the last bin, sodium/cognition not measured
    expected = [-1.5 - 0.4 + 0.5 * 10 / 15 + 0.55 + 1.1 + 0.4,
                -1.5 + 0.6 + 0.3 + 0.2 - 0.1 - 0.1,
                -1.5 + 0.6 + 0.1 + 0.0 + 0.0 + 0.0 + 0.0]
    assert table["logodds"].to_numpy() == pytest.approx(expected, abs=1e-9)
    assert table["risk"].to_numpy() == pytest.approx(expit(expected), abs=1e-9)  # scipy.special.expit
    assert "age: 1 of 3 values outside the training range" in result.stderr
    assert "cognition: 1 not measured" in result.stderr


def test_predict_contributions_add_one_column_per_term(files):
    model_path, cohort_path, tmp = files
    out = tmp / "risks.csv"
    result = run("predict", model_path, cohort_path, "-o", out, "--contributions")
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out)
    terms = ["age", "sodium", "residence", "prior_delirium", "cognition", "age x cognition"]
    assert list(table.columns) == ["logodds", "risk"] + [f"term:{t}" for t in terms]
    total = -1.5 + table[[f"term:{t}" for t in terms]].sum(axis=1)
    assert total.to_numpy() == pytest.approx(table["logodds"].to_numpy(), abs=1e-9)


def test_predict_same_inputs_same_bytes(files):
    model_path, cohort_path, tmp = files
    run("predict", model_path, cohort_path, "-o", tmp / "a.csv", "--contributions")
    run("predict", model_path, cohort_path, "-o", tmp / "b.csv", "--contributions")
    assert (tmp / "a.csv").read_bytes() == (tmp / "b.csv").read_bytes()


@pytest.mark.parametrize(
    "case, expected",
    [
        ("no model", "no such file"),
        ("model is a folder", "is a folder"),
        ("no cohort", "no such file"),
        ("output folder missing", "does not exist"),
        ("output is the cohort", "is also an input"),
        ("output is a folder", "is a folder"),
        ("cohort lacks a column", "column 'cognition' needed by the model is missing"),
        ("cohort cell not a number", "row 1, column 'age': 'old' is not a number"),
        ("model is not json", "not valid JSON"),
    ],
)
def test_bad_paths_and_inputs_exit_2_with_one_line(files, case, expected):
    model_path, cohort_path, tmp = files
    out = tmp / "out.csv"
    args = [model_path, cohort_path, "-o", out]
    if case == "no model":
        args[0] = tmp / "missing.model.json"
    elif case == "model is a folder":
        args[0] = tmp
    elif case == "no cohort":
        args[1] = tmp / "missing.csv"
    elif case == "output folder missing":
        args[3] = tmp / "nowhere" / "out.csv"
    elif case == "output is the cohort":
        args[3] = cohort_path
    elif case == "output is a folder":
        args[3] = tmp
    elif case == "cohort lacks a column":
        cohort_path.write_text(COHORT.replace(",cognition", "").replace(",3\n", "\n").replace(",8\n", "\n").replace(",\n", "\n"))
    elif case == "cohort cell not a number":
        cohort_path.write_text(COHORT.replace("p1,65", "p1,old"))
    elif case == "model is not json":
        model_path.write_text("{not json")
    before = cohort_path.read_bytes()
    result = run("predict", *args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and expected in lines[0], result.stderr
    assert "Traceback" not in result.output
    assert cohort_path.read_bytes() == before  # an input is never overwritten
    assert not out.exists()
