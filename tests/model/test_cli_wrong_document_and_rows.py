"""One-line errors a busy user meets: a sheet given where the model is expected, and `explain --row N` naming
row N of the file (not row 1 of the one-patient slice) when that patient's cell is bad."""

from click.testing import CliRunner

from scorecard.cli import main
from scorecard.jsondoc import pretty_text
from scorecard.model import model_from_dict, save_model
from tests.audit.handmade import sheet_dict

COHORT = """patient,age,sodium,residence,prior_delirium,cognition
p1,65,130,care_home,yes,3
p2,85,150,with_family,no,8
p3,80,high,own_home,no,5
"""


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def _files(model_doc, tmp_path):
    model_path = tmp_path / "m.model.json"
    save_model(model_from_dict(model_doc), model_path)
    cohort_path = tmp_path / "cohort.csv"
    cohort_path.write_text(COHORT)
    return model_path, cohort_path


def test_explain_names_the_files_row_of_a_bad_cell(model_doc, tmp_path):
    model_path, cohort_path = _files(model_doc, tmp_path)
    assert run("explain", model_path, "--row", 1, "--data", cohort_path).exit_code == 0
    result = run("explain", model_path, "--row", 3, "--data", cohort_path)
    assert result.exit_code == 2
    assert len(result.output.strip().splitlines()) == 1 and "Traceback" not in result.output
    assert "row 3, column 'sodium'" in result.output and "'high'" in result.output


def test_a_sheet_given_as_the_model_is_named_as_such(model_doc, tmp_path):
    model_path, cohort_path = _files(model_doc, tmp_path)
    sheet_path = tmp_path / "s.sheet.json"
    sheet_path.write_text(pretty_text(sheet_dict()))
    out = tmp_path / "risks.csv"
    for args in (["predict", sheet_path, cohort_path, "-o", out],
                 ["explain", sheet_path, "--row", 1, "--data", cohort_path],
                 ["review", sheet_path, "-o", tmp_path / "r.pdf"]):
        result = run(*args)
        assert result.exit_code == 2, args
        assert len(result.output.strip().splitlines()) == 1
        assert "this is a sheet document, not a model" in result.output and str(sheet_path) in result.output
    assert not out.exists() and not (tmp_path / "r.pdf").exists()


def test_explain_heading_says_version(model_doc, tmp_path):
    model_path, cohort_path = _files(model_doc, tmp_path)
    result = run("explain", model_path, "--row", 1, "--data", cohort_path)
    assert result.exit_code == 0, result.output
    first = result.stdout.splitlines()[0]
    assert first.startswith(f"{model_doc['name']} version {model_doc['version']}: "), first
