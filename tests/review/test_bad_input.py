"""Bad edits and bad review/explain input: exit 2, one line naming what is wrong, nothing written."""

from __future__ import annotations

import pytest


BAD_EDITS = [
    (["--remove-effect", "frailty"], "term 'frailty' is not in the model"),
    (["--force-direction", "residence=increasing"], "categorical"),
    (["--force-direction", "sodium=upwards"], "TERM=increasing or TERM=decreasing"),
    (["--force-direction", "age x cognition=increasing"], "pair term"),
    (["--hold-below", "sodium=100"], "outside the training range"),
    (["--hold-above", "sodium=200"], "outside the training range"),
    (["--hold-above", "sodium=high"], "is not a number"),
    (["--hold-below", "sodium=nan"], "finite number"),
    (["--hold-above", "residence=2"], "only a measurement on a scale"),
    (["--hold-below", "sodium"], "TERM=VALUE"),
    (["--pool-levels", "residence=own_home,castle"], "level 'castle' is not in the term"),
    (["--pool-levels", "prior_delirium=no,yes"], "use --remove-effect instead"),
    (["--pool-levels", "residence=own_home"], "at least two levels"),
    (["--declare", "shoe_size=increasing"], "feature is not in the model"),
    (["--declare", "residence=increasing"], "no order"),
    (["--declare", "sodium=sideways"], "FEATURE=VALUE"),
    (["--remove-effect", "sodium", "--outcome", "delirium"], "give --data"),
    ([], "no edit given"),
    # the option names of earlier releases are gone and answered with the new one
    (["--zero", "sodium"], "did you mean --remove-effect"),
    (["--monotone", "age=increasing"], "did you mean --force-direction"),
    (["--clip", "sodium=125:150"], "did you mean --hold-above"),
    (["--merge=residence=a,b"], "did you mean --pool-levels"),
]


@pytest.mark.parametrize("args, expected", BAD_EDITS, ids=[" ".join(a) or "none" for a, _ in BAD_EDITS])
def test_bad_edit_exits_2_with_one_line_and_writes_nothing(care_model_path, review_dir, run_cli, args, expected):
    out = review_dir / "never-written.model.json"
    result = run_cli("edit", care_model_path, *args, "-o", out)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and expected in lines[0], result.stderr
    assert "Traceback" not in result.output
    assert not out.exists()


def test_edit_refuses_to_overwrite_its_input(care_model_path, run_cli):
    before = open(care_model_path, "rb").read()
    result = run_cli("edit", care_model_path, "--remove-effect", "sodium", "-o", care_model_path)
    assert result.exit_code == 2 and "input" in result.stderr
    assert open(care_model_path, "rb").read() == before


def test_edit_with_an_outcome_column_that_is_not_there(care_model_path, cohort_csv, review_dir, run_cli):
    result = run_cli("edit", care_model_path, "--remove-effect", "sodium", "--data", cohort_csv, "--outcome", "falls", "-o", review_dir / "x.json")
    assert result.exit_code == 2 and "outcome column 'falls'" in result.stderr


@pytest.mark.parametrize(
    "args, expected",
    [
        (["--row", "0"], "does not exist"),
        (["--row", "99999"], "does not exist"),
        ([], "name the patient"),
        (["--values", "age=80"], "needs a value for"),
        (["--values", "height=180"], "not in the model"),
    ],
)
def test_bad_explain_exits_2(care_model_path, cohort_csv, run_cli, args, expected):
    data = ["--data", cohort_csv] if "--row" in args else []
    result = run_cli("explain", care_model_path, *args, *data)
    assert result.exit_code == 2 and expected in result.stderr and len(result.stderr.strip().splitlines()) == 1


def test_review_of_a_missing_model_exits_2(review_dir, run_cli):
    result = run_cli("review", review_dir / "nope.json", "-o", review_dir / "nope.pdf")
    assert result.exit_code == 2 and "no such file" in result.stderr


def test_review_with_a_cohort_missing_a_column_is_one_line(care_model_path, cohort_csv, review_dir, run_cli):
    import pandas as pd

    short = review_dir / "short.csv"
    pd.read_csv(cohort_csv).drop(columns=["sodium"]).to_csv(short, index=False)
    result = run_cli("review", care_model_path, "--data", short, "-o", review_dir / "never.pdf")
    assert result.exit_code == 2
    assert result.stderr.strip().splitlines() == [result.stderr.strip()] and "'sodium'" in result.stderr
    assert not (review_dir / "never.pdf").exists()
