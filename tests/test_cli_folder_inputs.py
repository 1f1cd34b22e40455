"""A folder given where a file is expected (and a file where --preview wants a folder) is one `error:` line
naming it, exit 2, on every verb; nothing is written. (click's own path check printed three lines of usage.)
A semicolon- or tab-separated export is named as such rather than as "column missing"."""

import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.errors import UserError
from scorecard.tabular import read_csv


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


@pytest.fixture
def where(tmp_path):
    (tmp_path / "adir").mkdir()
    (tmp_path / "a.csv").write_text("age\n70\n")
    return tmp_path


CASES = [
    ("predict", "{d}", "{f}", "-o", "{o}/x.csv"),
    ("score", "{d}", "{f}", "-o", "{o}/x.csv"),
    ("check", "{d}", "--model", "{d}", "--data", "{f}", "-o", "{o}/x.pdf"),
    ("fit", "{d}", "--outcome", "y", "-o", "{o}/x.json"),
    ("review", "{d}", "-o", "{o}/x.pdf"),
    ("edit", "{d}", "--remove-effect", "age", "-o", "{o}/x.json"),
    ("explain", "{d}", "--row", "1", "--data", "{f}"),
    ("quantize", "{d}", "-o", "{o}/x.json"),
    ("render", "{d}", "-o", "{o}/x.pdf"),
    ("verify", "{f}", "--sheet", "{d}"),
]


@pytest.mark.parametrize("case", CASES, ids=[" ".join(c[:1] + c[1:2]) + str(i) for i, c in enumerate(CASES)])
def test_a_folder_for_a_file_is_one_line(where, case):
    args = [a.format(d=where / "adir", f=where / "a.csv", o=where) for a in case]
    result = run(*args)
    assert result.exit_code == 2, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and "is a folder" in lines[0], lines
    assert str(where / "adir") in lines[0]
    assert sorted(p.name for p in where.iterdir()) == ["a.csv", "adir"]


@pytest.mark.parametrize("verb,document", [("render", "s.sheet.json"), ("review", "m.model.json")])
def test_a_file_for_the_preview_folder_stops_before_the_pdf_is_written(where, verb, document):
    result = run(verb, where / document, "-o", where / "x.pdf", "--preview", where / "a.csv")
    assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1
    assert "--preview" in result.output and "is a file" in result.output
    assert not (where / "x.pdf").exists()


@pytest.mark.parametrize("separator,word", [(";", "semicolons"), ("\t", "tabs")])
def test_a_semicolon_or_tab_separated_export_is_named_as_such(where, separator, word):
    # a locale's spreadsheet export is the usual cause of "every column is missing"
    table = where / "export.csv"
    table.write_text(separator.join(["age", "sodium", "delirium"]) + "\n" + separator.join(["80", "140", "0"]) + "\n")
    for args in (["fit", table, "--outcome", "delirium", "-o", where / "x.json"],
                 ["import", "coefficients", table, "-o", where / "x.json"]):
        result = run(*args)
        assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1, result.output
        assert f"separated by {word}, not commas" in result.output and str(table) in result.output
    with pytest.raises(UserError, match=f"separated by {word}"):
        read_csv(table)
