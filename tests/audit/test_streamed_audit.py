"""`score --chunk-rows` and `check --chunk-rows`: a cohort streamed in many small chunks gives what one chunk
gives (the in-memory run is the one-chunk case of the same code), CSV and Parquet in, CSV and Parquet out.

The cohort is the hand-made sheet's invented one, with levels on no printed row and a unit mix-up arranged so
that the first chunks alone would tell a different story than the whole: what is reported must be the whole's.
"""

from __future__ import annotations

import json

import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from tests.audit.handmade import write_handmade_files


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    f = write_handmade_files(tmp_path_factory.mktemp("stream"), rows=400)
    cohort = pd.read_csv(f / "cohort.csv")
    cohort.insert(0, "patient_id", range(1, len(cohort) + 1))
    cohort["residence"] = cohort["residence"].astype(object)
    cohort.loc[[5, 390], "residence"] = "mars"  # a level on no row, in the first chunk and in the last
    cohort.loc[[200], "residence"] = "moon"
    # temperature in °F for the last 210 patients: most of the cohort's values are outside the training range,
    # though none of the first 190 is, so only the whole cohort's counts give the wrong-units warning
    cohort.loc[190:, "temperature"] = cohort.loc[190:, "temperature"] * 9 / 5 + 32
    cohort.to_csv(f / "mixed.csv", index=False)
    cohort.to_parquet(f / "mixed.parquet", index=False)
    return f


def _lines(result) -> list[str]:
    return [line for line in result.output.splitlines() if not line.startswith("wrote ")]


@pytest.mark.parametrize("out_kind", ["csv", "parquet"])
def test_score_streamed_in_many_chunks_equals_the_one_chunk_run(files, tmp_path, out_kind):
    outputs, messages = {}, set()
    for cohort in ("mixed.csv", "mixed.parquet"):
        for rows in ("7", "100000"):  # 58 chunks of the 400 patients, and one
            out = tmp_path / f"{cohort}-{rows}.{out_kind}"
            result = run("score", files / "sheet.json", files / cohort, "--model", files / "model.json", "--keep", "patient_id",
                         "-o", out, "--chunk-rows", rows)
            assert result.exit_code == 0, result.output
            outputs[(cohort, rows)] = out
            messages.add(tuple(_lines(result)))
    assert len(messages) == 1, messages
    (said,) = messages
    assert any("WARNING" in line and "'temperature'" in line and "52%" in line for line in said), said
    assert any("'mars' x2, 'moon' x1" in line for line in said), said
    if out_kind == "csv":
        assert len({p.read_bytes() for p in outputs.values()}) == 1
    else:
        frames = [pd.read_parquet(p) for p in outputs.values()]
        for cohort in ("mixed.csv", "mixed.parquet"):
            pd.testing.assert_frame_equal(pd.read_parquet(outputs[(cohort, "7")]), pd.read_parquet(outputs[(cohort, "100000")]))
        # CSV in and Parquet in: the same figures (a kept column keeps its input's type: text from a CSV)
        pd.testing.assert_frame_equal(frames[0].drop(columns="patient_id"), frames[-1].drop(columns="patient_id"))
        assert len(frames[0]) == 400 and frames[-1]["patient_id"].tolist() == list(range(1, 401))
        # the Parquet output holds what the CSV output prints (risks there at 10 significant digits)
        as_csv = tmp_path / "one.csv"
        assert run("score", files / "sheet.json", files / "mixed.csv", "--model", files / "model.json", "--keep", "patient_id",
                   "-o", as_csv).exit_code == 0
        printed = pd.read_csv(as_csv, dtype=str, keep_default_na=False)
        assert list(printed.columns) == list(frames[0].columns)
        assert printed["row:residence"].tolist() == frames[0]["row:residence"].tolist()
        assert printed["total"].astype(int).tolist() == frames[0]["total"].tolist()
        assert printed["model_risk"].astype(float).to_numpy() == pytest.approx(frames[0]["model_risk"].to_numpy(), rel=1e-9)


def test_a_score_error_in_a_late_chunk_names_the_file_row_and_writes_nothing(files, tmp_path):
    cohort = pd.read_csv(files / "mixed.csv")
    cohort = cohort.astype({"cognition": str})
    cohort.loc[333, "cognition"] = "ten"
    cohort.to_parquet(tmp_path / "late.parquet", index=False)
    result = run("score", files / "sheet.json", tmp_path / "late.parquet", "-o", tmp_path / "x.csv", "--chunk-rows", "7")
    assert result.exit_code == 2 and "row 334" in result.output and "'ten'" in result.output, result.output
    assert not (tmp_path / "x.csv").exists()


def _same_figures(a, b, path="report"):
    """Equal documents, floats within 1e-9 relative (sums over chunks may round differently; counts, totals,
    texts and orders must be identical)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            _same_figures(a[k], b[k], f"{path}/{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (u, v) in enumerate(zip(a, b)):
            _same_figures(u, v, f"{path}[{i}]")
    elif isinstance(a, float):
        assert b == pytest.approx(a, rel=1e-9, abs=1e-12), path
    else:
        assert a == b, path


def test_check_streamed_in_many_chunks_gives_every_figure_of_the_one_chunk_run(files, tmp_path):
    reports = {}
    for cohort in ("mixed.csv", "mixed.parquet"):
        for rows in ("7", "100000"):
            out = tmp_path / f"{cohort}-{rows}.json"
            result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / cohort,
                         "-o", tmp_path / f"{cohort}-{rows}.pdf", "--json", out, "--bootstrap", "30", "--chunk-rows", rows)
            assert result.exit_code in (0, 3), result.output
            report = json.loads(out.read_text())
            report["cohort"]["source"] = cohort.split(".")[0]
            reports[(cohort, rows)] = (result.exit_code, report)
    first = reports[("mixed.csv", "100000")]
    for key, (code, report) in reports.items():
        assert code == first[0], key
        _same_figures(first[1], report)
    report = first[1]
    # the whole cohort's tallies, not one chunk's: every patient counted, the notes over all chunks
    assert report["cohort"]["n"] == 400 and report["against_outcomes"]["n"] == 400
    assert report["slips"]["neighbour_row"]["overall"]["patients"] == 400
    assert sum(map(sum, report["band_matrix"]["counts"])) == 400
    assert any("'mars' x2, 'moon' x1" in note for note in report["notes"])
    assert any("'temperature'" in w and "wrong units" in w for w in report["warnings"])
    rows = [r["row"] for r in report["largest"]]
    assert len(rows) == 20 and len(set(rows)) == 20 and all(1 <= r <= 400 for r in rows)
