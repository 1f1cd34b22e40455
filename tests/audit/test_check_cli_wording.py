"""`check` wording and option bounds: the risk bound is stated in percentage points (never bare "points",
which on a sheet means sheet points), and a negative --seed is a one-line usage error, not a traceback."""

import json

import pandas as pd
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort
from scorecard.jsondoc import pretty_text
from tests.audit.handmade import model_dict, sheet_dict


def _files(tmp_path):
    (tmp_path / "sheet.json").write_text(pretty_text(sheet_dict()))
    (tmp_path / "model.json").write_text(pretty_text(model_dict()))
    c = generate_cohort(400, seed=5)
    residence = c["residence"].map({"own_home": "home", "with_family": "home", "care_home": "care_home"})
    pd.DataFrame({"age": c.age, "temperature": c.temperature, "cognition": c.cognition, "residence": residence,
                  "prior_delirium": c.prior_delirium, "delirium": c.delirium}).to_csv(tmp_path / "cohort.csv", index=False)
    return ["check", tmp_path / "sheet.json", "--model", tmp_path / "model.json", "--data", tmp_path / "cohort.csv"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_risk_differences_are_in_percentage_points(tmp_path):
    args = _files(tmp_path)
    result = run(*args, "-o", tmp_path / "r.pdf", "--json", tmp_path / "r.json", "--bootstrap", 20)
    assert result.exit_code in (0, 3), result.output
    assert "percentage points" in result.stderr
    report = json.loads((tmp_path / "r.json").read_text())
    share = next(b for b in report["bounds"] if b["name"] == "risk_error_share")
    assert "percentage points" in share["what"] and " points" not in share["what"].replace("percentage points", "")


def test_negative_seed_is_a_usage_error_that_writes_nothing(tmp_path):
    args = _files(tmp_path)
    result = run(*args, "-o", tmp_path / "r.pdf", "--seed", -1)
    assert result.exit_code == 2 and "Traceback" not in result.output and "--seed" in result.output
    assert not (tmp_path / "r.pdf").exists()


def test_a_bad_json_path_names_the_json_option_and_nothing_is_written(tmp_path):
    args = _files(tmp_path)
    result = run(*args, "-o", tmp_path / "r.pdf", "--json", tmp_path / "missing" / "r.json")
    assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1
    assert "choose another --json path" in result.output
    result = run(*args, "-o", tmp_path / "r.pdf", "--json", tmp_path / "model.json")
    assert result.exit_code == 2 and "choose another path with --json" in result.output
    assert not (tmp_path / "r.pdf").exists()


def test_every_report_page_says_page_x_of_y_and_is_the_same_bytes_twice(tmp_path):
    import pdfplumber

    args = _files(tmp_path)
    for name in ("a.pdf", "b.pdf"):
        result = run(*args, "-o", tmp_path / name, "--bootstrap", 20)
        assert result.exit_code in (0, 3), result.output
    assert (tmp_path / "a.pdf").read_bytes() == (tmp_path / "b.pdf").read_bytes()
    with pdfplumber.open(tmp_path / "a.pdf") as pdf:
        total = len(pdf.pages)
        for number, page in enumerate(pdf.pages, start=1):
            assert f"page {number} of {total}" in (page.extract_text() or "")


def test_a_cohort_missing_a_sheet_column_is_the_only_line(tmp_path):
    args = _files(tmp_path)
    table = pd.read_csv(tmp_path / "cohort.csv").drop(columns=["temperature"])
    table.to_csv(tmp_path / "short.csv", index=False)
    args[args.index("--data") + 1] = tmp_path / "short.csv"
    result = run(*args, "-o", tmp_path / "r.pdf")
    assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1, result.output
    assert "'temperature'" in result.output and not (tmp_path / "r.pdf").exists()
