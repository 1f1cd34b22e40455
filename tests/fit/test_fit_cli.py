"""`scorecard fit` through click's test runner: a good fit, progress on stderr, and one-line errors (exit 2)
that leave nothing written."""


import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import cohort_csv_text, generate_cohort
from scorecard.model import load_model, predict_logodds
from scorecard.tabular import read_csv

QUICK = ["--repeats", "2", "--jobs", "1", "--learning-rate", "0.1", "--shrinkage", "10"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture(scope="module")
def cohort_text():
    return cohort_csv_text(generate_cohort(800, seed=21))


@pytest.fixture
def cohort(tmp_path, cohort_text):
    path = tmp_path / "cohort.csv"
    path.write_text(cohort_text)
    return path


def write(tmp_path, text, name="data.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_fit_writes_a_model_that_scores_the_cohort(cohort, tmp_path):
    out = tmp_path / "delirium.model.json"
    result = run("fit", cohort, "--outcome", "delirium", "--exclude", "patient_id", "--unit", "sodium=mmol/L",
                 "--decimals", "temperature=1", "--label", "age=Age", "--horizon", "5 days after surgery",
                 "--event", "delirium", "-o", out, *QUICK)
    assert result.exit_code == 0, result.output
    assert "repeat 2/2" in result.stderr and "wrote" in result.stderr
    model = load_model(out)
    assert model.feature("sodium").unit == "mmol/L" and model.feature("age").label == "Age"
    assert model.feature("temperature").decimals == 1
    assert model.feature("anaesthesia").kind == "categorical" and model.feature("prior_delirium").kind == "flag"
    assert "patient_id" not in [f.name for f in model.features]
    assert model.outcome["horizon"] == "5 days after surgery"
    assert len(model.provenance["source"]["sha256"]) == 64
    # the written model scores the file it was fitted on; its out-of-bag AUC is recorded
    logodds, _ = predict_logodds(model, read_csv(cohort))
    assert np.all(np.isfinite(logodds))
    assert 0.6 < model.provenance["validation"]["out_of_bag_auc"] < 1.0


def test_an_identifier_column_is_pointed_out(cohort, tmp_path):
    result = run("fit", cohort, "--outcome", "delirium", "-o", tmp_path / "m.json", *QUICK)
    assert result.exit_code == 0, result.output
    assert "--exclude patient_id" in result.stderr


def test_same_command_same_bytes(cohort, tmp_path):
    outs = [tmp_path / "a.json", tmp_path / "b.json"]
    for out in outs:
        assert run("fit", cohort, "--outcome", "delirium", "--exclude", "patient_id", "-o", out, *QUICK).exit_code == 0
    assert outs[0].read_bytes() == outs[1].read_bytes()


def test_constant_and_empty_columns_are_skipped_with_a_warning(cohort, tmp_path):
    frame = pd.read_csv(cohort)
    frame["ward"] = 7
    frame["lactate"] = ""
    path = tmp_path / "extra.csv"
    frame.to_csv(path, index=False)
    out = tmp_path / "m.json"
    result = run("fit", path, "--outcome", "delirium", "--exclude", "patient_id", "-o", out, *QUICK)
    assert result.exit_code == 0, result.output
    assert "skipping feature 'ward'" in result.stderr and "skipping feature 'lactate'" in result.stderr
    names = [f.name for f in load_model(out).features]
    assert "ward" not in names and "lactate" not in names


def _bad(tmp_path, args, expected):
    out = tmp_path / "never.json"
    result = run("fit", *args, "-o", out, *QUICK)
    assert result.exit_code == 2, result.output
    lines = [ln for ln in result.stderr.splitlines() if ln.startswith("error:")]
    assert len(lines) == 1 and expected in lines[0], result.stderr
    assert "Traceback" not in result.output
    assert not out.exists()
    return lines[0]


def test_outcome_column_missing(cohort, tmp_path):
    _bad(tmp_path, [cohort, "--outcome", "delirum"], "outcome column 'delirum' is not in the file")


def test_outcome_not_binary_names_the_values(tmp_path):
    rows = "\n".join(f"{i},{v}" for i, v in enumerate([0, 1, 2] * 10))
    line = _bad(tmp_path, [write(tmp_path, "x,y\n" + rows + "\n"), "--outcome", "y"], "must be binary")
    assert "'0', '1', '2'" in line


def test_single_class_and_too_few_events(tmp_path):
    rows = "\n".join(f"{i},0" for i in range(50))
    _bad(tmp_path, [write(tmp_path, "x,y\n" + rows + "\n"), "--outcome", "y"], "only one class")
    rows = "\n".join(f"{i},{int(i < 9)}" for i in range(50))
    _bad(tmp_path, [write(tmp_path, "x,y\n" + rows + "\n"), "--outcome", "y"], "has 9 events; at least 10")


def test_text_in_a_numeric_column_names_the_row(tmp_path):
    rows = [f"{i},{i % 2}" for i in range(40)]
    rows[6] = "high,1"
    _bad(tmp_path, [write(tmp_path, "sodium,y\n" + "\n".join(rows) + "\n"), "--outcome", "y"], "row 7, column 'sodium': 'high' is not a number")


def test_duplicate_column_names(tmp_path):
    rows = "\n".join(f"{i},{i},{i % 2}" for i in range(40))
    _bad(tmp_path, [write(tmp_path, "age,age,y\n" + rows + "\n"), "--outcome", "y"], "column 'age' appears more than once")


def test_unknown_feature_names(cohort, tmp_path):
    _bad(tmp_path, [cohort, "--outcome", "delirium", "--features", "age,sodum"], "--features names column 'sodum'")
    _bad(tmp_path, [cohort, "--outcome", "delirium", "--unit", "sodum=mmol/L"], "'sodum' is not a feature being fitted")
    _bad(tmp_path, [cohort, "--outcome", "delirium", "--pairs", "many"], "--pairs 'many'")


def test_a_malformed_setting_shows_an_example_of_its_own_option(cohort, tmp_path):
    line = _bad(tmp_path, [cohort, "--outcome", "delirium", "--decimals", "sodium=x"], "'x' is not a valid value")
    assert "--decimals temperature=1" in line and "mmol/L" not in line
    line = _bad(tmp_path, [cohort, "--outcome", "delirium", "--decimals", "sodium"], "write it as FEATURE=VALUE")
    assert "--decimals temperature=1" in line
    line = _bad(tmp_path, [cohort, "--outcome", "delirium", "--label", "sodium"], "write it as FEATURE=VALUE")
    assert '--label "sodium=Sodium (blood)"' in line
    result = run("fit", cohort, "--outcome", "delirium", "--pairs", "-1", "-o", tmp_path / "never.json", *QUICK)
    assert result.exit_code == 2 and result.stderr.strip().splitlines() == [result.stderr.strip()]  # no warnings first


def test_output_may_not_overwrite_the_data(cohort, tmp_path):
    before = cohort.read_bytes()
    result = run("fit", cohort, "--outcome", "delirium", "-o", cohort, *QUICK)
    assert result.exit_code == 2 and "also an input" in result.stderr
    assert cohort.read_bytes() == before
