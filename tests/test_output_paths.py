"""Where -o may write (scorecard/outputs.py): a regular file or a new path; never a link, a device or a
folder; a read-only file only with --force; `-` is standard output for CSV/JSON and a clear error for a PDF;
an unwritable folder or --preview folder is one line before anything is written. Exit 2 is the project's
bad-input code; the device and link cases are common practice (a rename over them replaces the node)."""

from __future__ import annotations

import io
import os
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from tests.audit.handmade import write_handmade_files


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def one_line_error(result, expected):
    assert result.exit_code == 2, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and expected in lines[0], result.output


@pytest.fixture()
def files(tmp_path):
    return write_handmade_files(tmp_path, rows=40)


def _verbs(f, out):
    return {
        "predict": ["predict", f / "model.json", f / "cohort.csv", "-o", out],
        "score": ["score", f / "sheet.json", f / "cohort.csv", "-o", out],
        "render": ["render", f / "sheet.json", "-o", out],
        "quantize": ["quantize", f / "model.json", "-o", out],
    }


@pytest.mark.parametrize("verb", ["predict", "score", "render"])
def test_a_device_node_is_refused_and_left_alone(files, verb):
    before = os.stat("/dev/null")
    one_line_error(run(*_verbs(files, "/dev/null")[verb]), "is a device or special file")
    after = os.stat("/dev/null")
    assert (after.st_mode, after.st_rdev) == (before.st_mode, before.st_rdev)


@pytest.mark.parametrize("verb", ["predict", "score", "render"])
def test_a_symlink_is_refused_and_its_target_untouched(files, verb):
    target = files / "target.txt"
    target.write_text("keep me")
    (files / "link.out").symlink_to(target)
    one_line_error(run(*_verbs(files, files / "link.out")[verb]), "is a symbolic link")
    assert (files / "link.out").is_symlink() and target.read_text() == "keep me"


def _every_writer(f, out):
    """Every verb that writes a file, its output (or its second output) at `out`, the rest valid."""
    return {**_verbs(f, out),
            "approve": ["approve", f / "sheet.json", "--key", f / "missing.pem", "--name", "Dr A (invented)", "-o", out],
            "check --json": ["check", f / "sheet.json", "--model", f / "model.json", "--data", f / "cohort.csv",
                             "-o", f / "report.pdf", "--json", out],
            "compare": ["compare", f / "sheet.json", f / "sheet.json", "-o", out],
            "exercise --key": ["exercise", f / "sheet.json", "-n", "5", "-o", f / "cards.pdf", "--key", out],
            "export": ["export", f / "sheet.json", "--format", "pmml", "-o", out],
            "fit": ["fit", f / "cohort.csv", "--outcome", "delirium", "-o", out],
            "recalibrate": ["recalibrate", f / "sheet.json", "--data", f / "cohort.csv", "--outcome", "delirium", "-o", out],
            "edit": ["edit", f / "model.json", "--remove-effect", "age", "-o", out],
            "review": ["review", f / "model.json", "-o", out]}


@pytest.mark.parametrize("verb", sorted(_every_writer(Path("."), "x")))
def test_every_writer_refuses_a_link_and_a_read_only_file_before_any_work(files, verb):
    target = files / "target.txt"
    target.write_text("keep me")
    (files / "link.out").symlink_to(target)
    one_line_error(run(*_every_writer(files, files / "link.out")[verb]), "is a symbolic link")
    locked = files / "locked.out"
    locked.write_text("old\n")
    locked.chmod(0o444)
    one_line_error(run(*_every_writer(files, locked)[verb]), "is read-only; choose another")
    assert target.read_text() == "keep me" and locked.read_text() == "old\n"
    assert not {"report.pdf", "cards.pdf"} & {p.name for p in files.iterdir()}


def test_a_folder_is_refused(files):
    one_line_error(run(*_verbs(files, files)["predict"]), "is a folder")


def test_a_read_only_file_is_replaced_only_with_force(files):
    out = files / "risks.csv"
    out.write_text("old\n")
    out.chmod(0o444)
    one_line_error(run(*_verbs(files, out)["predict"]), "is read-only; choose another -o path, or add --force")
    assert out.read_text() == "old\n"
    result = run(*_verbs(files, out)["predict"], "--force")
    assert result.exit_code == 0, result.output
    assert out.read_text().startswith("logodds,risk")
    # --force holds for that run only: the next run without it refuses again
    out.chmod(0o444)
    one_line_error(run(*_verbs(files, out)["predict"]), "is read-only")


@pytest.mark.parametrize("verb", ["predict", "score"])
def test_dash_writes_the_csv_to_standard_output(files, verb):
    result = run(*_verbs(files, "-")[verb])
    assert result.exit_code == 0, result.output
    table = pd.read_csv(io.StringIO(result.stdout))  # click >= 8.2 keeps stderr out of .stdout
    assert len(table) == 40
    assert not (files / "-").exists()


def test_dash_for_a_pdf_is_a_clear_error(files):
    one_line_error(run(*_verbs(files, "-")["render"]), "cannot go to standard output")
    assert not (files / "-").exists()


@pytest.mark.parametrize("verb", ["predict", "score", "render", "quantize"])
def test_an_unwritable_folder_is_one_line(files, verb):
    one_line_error(run(*_verbs(files, "/proc/x.out")[verb]), "cannot write in folder /proc")


@pytest.mark.parametrize("verb", ["render", "review"])
def test_an_unwritable_preview_folder_stops_before_the_pdf(files, verb):
    args = (["render", files / "sheet.json"] if verb == "render" else ["review", files / "model.json"])
    one_line_error(run(*args, "-o", files / "out.pdf", "--preview", "/proc/previews"), "--preview /proc/previews")
    assert not (files / "out.pdf").exists()
