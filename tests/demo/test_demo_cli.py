"""`scorecard demo` through click's test runner."""

import numpy as np
import pandas as pd
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort, true_model
from scorecard.model import load_model, predict_logodds
from scorecard.tabular import read_csv


def run(*args):
    return CliRunner().invoke(main, ["demo", *args])


def test_demo_writes_the_cohort_and_the_true_model(tmp_path):
    out = tmp_path / "demo"
    result = run("-o", str(out), "--rows", "700", "--seed", "4", "--cohort-only")
    assert result.exit_code == 0, result.output
    assert sorted(p.name for p in out.iterdir()) == ["cohort.csv", "true.model.json"]
    model = load_model(out / "true.model.json")
    assert model.fingerprint == true_model().fingerprint
    # the CSV reads back (as every stage reads it) to the generated values, and the model scores it
    written = pd.read_csv(out / "cohort.csv")
    expected = generate_cohort(700, seed=4)
    pd.testing.assert_frame_equal(written, expected, check_dtype=False)
    logodds, report = predict_logodds(model, read_csv(out / "cohort.csv"))
    expected_logodds, _ = predict_logodds(model, expected)
    assert np.array_equal(logodds, expected_logodds)
    assert report.not_measured == {"albumin": int(expected["albumin"].isna().sum())}


def test_same_seed_same_bytes_and_without_pair(tmp_path):
    assert run("-o", str(tmp_path / "a"), "--rows", "300", "--cohort-only").exit_code == 0
    assert run("-o", str(tmp_path / "b"), "--rows", "300", "--cohort-only").exit_code == 0
    for name in ("cohort.csv", "true.model.json"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
    assert run("-o", str(tmp_path / "c"), "--rows", "300", "--without-pair", "--cohort-only").exit_code == 0
    assert load_model(tmp_path / "c" / "true.model.json").fingerprint == true_model(False).fingerprint


def test_refuses_a_non_empty_folder_unless_forced(tmp_path):
    (tmp_path / "notes.txt").write_text("keep me")
    result = run("-o", str(tmp_path), "--rows", "100", "--cohort-only")
    assert result.exit_code == 2
    assert "not empty" in result.output and "--force" in result.output
    assert len(result.output.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]  # nothing written
    result = run("-o", str(tmp_path), "--rows", "100", "--cohort-only", "--force")
    assert result.exit_code == 0, result.output
    assert (tmp_path / "notes.txt").read_text() == "keep me"
    assert (tmp_path / "cohort.csv").exists()


def test_bad_output_and_options_give_exit_2(tmp_path):
    a_file = tmp_path / "cohort.csv"
    a_file.write_text("x\n")
    result = run("-o", str(a_file))
    assert result.exit_code == 2 and "is a file" in result.output
    assert len(result.output.strip().splitlines()) == 1
    assert a_file.read_text() == "x\n"
    assert run("-o", str(tmp_path / "d"), "--rows", "0").exit_code == 2
    assert run("-o", str(tmp_path / "d"), "--seed", "-1").exit_code == 2
    assert run("--rows", "10").exit_code == 2  # -o is required
    assert not (tmp_path / "d").exists()


def test_help_reads_as_documentation():
    result = run("--help")
    assert result.exit_code == 0
    assert "invented" in result.output and "cohort.csv" in result.output and "--seed" in result.output


def test_an_unknown_layout_is_refused_before_anything_is_written(tmp_path):
    # the layout is only needed at the render step, a minute in; a typo must not leave a half-built folder
    out = tmp_path / "demo"
    result = run("-o", str(out), "--rows", "300", "--layout", "ward-a3")
    assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1
    assert "--layout ward-a3" in result.output and "ward-a4" in result.output
    assert not out.exists()
