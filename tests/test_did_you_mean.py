"""A mistyped column, feature or verb gets the closest names (difflib, standard library), and `quantise` works."""

import pandas as pd
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort
from scorecard.suggest import did_you_mean


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_did_you_mean_finds_typos_and_stays_quiet_on_strangers():
    assert did_you_mean("delirum", ["patient_id", "age", "delirium"]) == "; did you mean 'delirium'?"
    assert did_you_mean("AGE", ["age", "sodium"]) == "; did you mean 'age'?"  # case is ignored
    assert did_you_mean("zzzz", ["age", "sodium"]) == ""


def test_unknown_verb_names_the_closest_and_quantise_is_quantize():
    result = run("quantzie")
    assert result.exit_code == 2 and "did you mean 'quantize'" in result.output
    assert len(result.output.strip().splitlines()) == 1
    help_text = run("quantise", "--help")
    assert help_text.exit_code == 0 and "MODEL.json" in help_text.output


def test_mistyped_columns_and_features(tmp_path):
    data = tmp_path / "cohort.csv"
    generate_cohort(300, seed=1).to_csv(data, index=False)
    result = run("fit", data, "--outcome", "delirum", "-o", tmp_path / "m.json")
    assert result.exit_code == 2 and "did you mean 'delirium'?" in result.output
    result = run("fit", data, "--outcome", "delirium", "--exclude", "patient_idd", "-o", tmp_path / "m.json")
    assert result.exit_code == 2 and "did you mean 'patient_id'?" in result.output
    result = run("explain", "example_models/demo-true.model.json", "--values", "sodiumm=130")
    assert result.exit_code == 2 and "did you mean 'sodium'?" in result.output
    # a cohort whose column is spelled differently from the sheet's
    frame = pd.read_csv(data).rename(columns={"haemoglobin": "hemoglobin"})
    frame.to_csv(tmp_path / "us.csv", index=False)
    from scorecard.errors import UserError
    from scorecard.tabular import read_csv, require_columns

    try:
        require_columns(read_csv(tmp_path / "us.csv"), ["age", "haemoglobin"], "the sheet")
    except UserError as exc:
        assert "did you mean 'hemoglobin'?" in str(exc)
    else:
        raise AssertionError("a missing column must be refused")
