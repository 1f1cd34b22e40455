"""Parquet everywhere: a cohort as .parquet gives the same outputs as the same cohort as .csv, a Parquet output
holds the same values as the CSV one, and a bad Parquet file gets the same kind of one-line error as a bad CSV.

The reference writer and reader of Parquet is pyarrow (through pandas.DataFrame.to_parquet / read_parquet), the
Apache Arrow project's implementation of the format: the files here are made by it, not by the project.
"""

from __future__ import annotations

import datetime
import json

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from scorecard.cli import main
from scorecard.demo import cohort_chunks, generate_cohort
from scorecard.tabular import iter_table, read_table
from tests.audit.handmade import write_handmade_files


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def one_line_error(result, *expected: str) -> str:
    assert result.exit_code == 2, result.output
    lines = [line for line in result.output.strip().splitlines() if not line.startswith("note: ")]
    assert len(lines) == 1 and lines[0].startswith("error: "), result.output
    for text in expected:
        assert text in lines[0], result.output
    return lines[0]


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """The hand-made sheet and model with a 400-patient cohort, as CSV and as Parquet (pyarrow's own types:
    integers, floats with NaN, text)."""
    f = write_handmade_files(tmp_path_factory.mktemp("pq"), rows=400)
    pd.read_csv(f / "cohort.csv").to_parquet(f / "cohort.parquet", index=False)
    return f


def _verbs(f, cohort, out):
    return {
        "predict": ["predict", f / "model.json", cohort, "-o", out / "risks.csv", "--contributions", "--keep", "age"],
        "score": ["score", f / "sheet.json", cohort, "--model", f / "model.json", "-o", out / "scored.csv", "--keep", "age"],
        "check": ["check", f / "sheet.json", "--model", f / "model.json", "--data", cohort, "-o", out / "report.pdf",
                  "--json", out / "report.json", "--bootstrap", "20"],
    }


def test_parquet_and_csv_inputs_give_identical_outputs(files, tmp_path):
    outputs = {}
    for kind in ("csv", "parquet"):
        out = tmp_path / kind
        out.mkdir()
        for verb, args in _verbs(files, files / f"cohort.{kind}", out).items():
            result = run(*args)
            assert result.exit_code in (0, 3), (verb, result.output)
        report = json.loads((out / "report.json").read_text())
        report["cohort"].pop("source")
        outputs[kind] = ((out / "risks.csv").read_bytes(), (out / "scored.csv").read_bytes(), report)
    assert outputs["csv"] == outputs["parquet"]


def test_fit_on_parquet_equals_fit_on_csv_and_records_the_file_hash(tmp_path):
    cohort = generate_cohort(1500, seed=9)
    cohort.to_csv(tmp_path / "c.csv", index=False)
    cohort.to_parquet(tmp_path / "c.parquet", index=False)
    docs = {}
    for kind in ("csv", "parquet"):
        result = run("fit", tmp_path / f"c.{kind}", "--outcome", "delirium", "--exclude", "patient_id", "--repeats", "2",
                     "--pairs", "0", "-o", tmp_path / f"{kind}.model.json")
        assert result.exit_code == 0, result.output
        docs[kind] = json.loads((tmp_path / f"{kind}.model.json").read_text())
    import hashlib

    for kind, doc in docs.items():
        source = doc["provenance"].pop("source")
        assert source["file"] == f"c.{kind}"
        assert source["sha256"] == hashlib.sha256((tmp_path / f"c.{kind}").read_bytes()).hexdigest()
        doc.pop("fingerprint", None)
    assert docs["csv"] == docs["parquet"]


def test_a_parquet_output_holds_the_same_values_as_the_csv_output(files, tmp_path):
    for verb in ("predict", "score"):
        base = _verbs(files, files / "cohort.parquet", tmp_path)[verb]
        at = base.index("-o") + 1
        for suffix in ("csv", "parquet"):
            result = run(*base[:at], tmp_path / f"{verb}.{suffix}", *base[at + 1:])
            assert result.exit_code == 0, result.output
        from_csv = pd.read_csv(tmp_path / f"{verb}.csv", keep_default_na=False)
        from_parquet = pd.read_parquet(tmp_path / f"{verb}.parquet")
        assert list(from_csv.columns) == list(from_parquet.columns)
        for name in from_csv.columns:
            a, b = from_csv[name], from_parquet[name]
            if pd.api.types.is_float_dtype(b):
                assert np.allclose(a.to_numpy(float), b.to_numpy(float), rtol=1e-9, atol=0), name  # CSV prints 10 digits
            else:
                assert a.astype(str).tolist() == b.astype(str).tolist(), name


def test_demo_writes_a_parquet_cohort_that_reads_back_as_the_generated_rows(tmp_path):
    result = run("demo", "--cohort-only", "--rows", "900", "--seed", "5", "-o", tmp_path / "c.parquet")
    assert result.exit_code == 0, result.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.parquet", "c.true.model.json"]
    written = pd.read_parquet(tmp_path / "c.parquet")
    pd.testing.assert_frame_equal(written, generate_cohort(900, seed=5), check_dtype=False)
    assert run("demo", "--cohort-only", "--rows", "900", "--seed", "5", "-o", tmp_path / "c.csv").exit_code == 0
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "c.csv"), written, check_dtype=False)
    # an existing file is replaced only with --force, and nothing is written without it
    before = (tmp_path / "c.parquet").read_bytes()
    one_line_error(run("demo", "--cohort-only", "--rows", "100", "-o", tmp_path / "c.parquet"), "exists", "--force")
    assert (tmp_path / "c.parquet").read_bytes() == before


def test_the_chunked_generator_is_seeded_per_chunk_and_numbers_patients_on(tmp_path):
    chunks = list(cohort_chunks(2500, seed=7, chunk_rows=1000))
    assert [len(c) for c in chunks] == [1000, 1000, 500]
    joined = pd.concat(chunks, ignore_index=True)
    assert joined["patient_id"].tolist() == list(range(1, 2501))
    # chunk b is its own draw from default_rng([seed, b]): not a copy of another chunk, and reproducible
    assert not chunks[0].drop(columns="patient_id").reset_index(drop=True).equals(chunks[1].drop(columns="patient_id").reset_index(drop=True))
    again = pd.concat(cohort_chunks(2500, seed=7, chunk_rows=1000), ignore_index=True)
    pd.testing.assert_frame_equal(joined, again)
    # up to one chunk, the chunked draw is the one-shot draw
    pd.testing.assert_frame_equal(next(cohort_chunks(800, seed=7, chunk_rows=1000)), generate_cohort(800, seed=7))
    # the event rate of every chunk is the generator's (about 20 %: scorecard.demo.EVENT_RATE_BOUNDS)
    from scorecard.demo import EVENT_RATE_BOUNDS

    for c in chunks[:2]:
        assert EVENT_RATE_BOUNDS[0] - 0.04 < c["delirium"].mean() < EVENT_RATE_BOUNDS[1] + 0.04


def test_iter_table_gives_the_whole_table_in_chunks_with_file_row_numbers(files):
    for kind in ("csv", "parquet"):
        whole = read_table(files / f"cohort.{kind}")
        parts = list(iter_table(files / f"cohort.{kind}", 150))
        assert [len(p) for p in parts] == [150, 150, 100]
        assert [p.attrs["first_row"] for p in parts] == [0, 150, 300]
        pd.testing.assert_frame_equal(pd.concat(parts, ignore_index=True), whole)


# -- bad Parquet: the same one-line errors as the same fault in a CSV ------------------------------

def _pair(tmp_path, name: str, frame: pd.DataFrame):
    frame.to_csv(tmp_path / f"{name}.csv", index=False)
    frame.to_parquet(tmp_path / f"{name}.parquet", index=False)
    return tmp_path / f"{name}.csv", tmp_path / f"{name}.parquet"


@pytest.mark.parametrize("verb", ["predict", "score", "check"])
def test_wrong_types_and_missing_columns_get_the_csv_errors(files, tmp_path, verb):
    cohort = pd.read_csv(files / "cohort.csv")
    wrong = cohort.astype({"temperature": str})  # a text column in the Parquet schema where a number belongs
    wrong.loc[6, "temperature"] = "warm"
    cases = {
        "wrong type": (wrong, ["row 7", "'temperature'", "'warm' is not a number"]),
        "missing column": (cohort.drop(columns="cognition"), ["column 'cognition'", "is missing"]),
    }
    for name, (frame, expected) in cases.items():
        csv, parquet = _pair(tmp_path, name.replace(" ", "_"), frame)
        lines = []
        for path in (csv, parquet):
            out = tmp_path / "out"
            out.mkdir(exist_ok=True)
            lines.append(one_line_error(run(*_verbs(files, path, out)[verb]), str(path), *expected))
            assert not list(out.iterdir()), "nothing written on bad input"
        assert lines[0].replace(str(csv), "FILE") == lines[1].replace(str(parquet), "FILE")


def test_a_damaged_or_foreign_parquet_file_is_one_line(files, tmp_path):
    good = (files / "cohort.parquet").read_bytes()
    cases = {
        "truncated": good[: len(good) // 2],
        "csv_text": (files / "cohort.csv").read_bytes(),
        "empty_file": b"",
        "scrambled_middle": good[:8] + bytes(b ^ 0x5A for b in good[8:-200]) + good[-200:],
    }
    for name, data in cases.items():
        path = tmp_path / f"{name}.parquet"
        path.write_bytes(data)
        for verb in ("predict", "check"):
            out = tmp_path / "out"
            out.mkdir(exist_ok=True)
            one_line_error(run(*_verbs(files, path, out)[verb]), str(path))
            assert not list(out.iterdir())
    # no rows, duplicate columns, columns equal once spaces are removed
    pd.read_csv(files / "cohort.csv").iloc[:0].to_parquet(tmp_path / "none.parquet", index=False)
    one_line_error(run("predict", files / "model.json", tmp_path / "none.parquet", "-o", tmp_path / "x.csv"), "no data rows")
    table = pq.read_table(files / "cohort.parquet")
    pq.write_table(table.append_column("age", table.column("age")), tmp_path / "dupe.parquet")
    one_line_error(run("predict", files / "model.json", tmp_path / "dupe.parquet", "-o", tmp_path / "x.csv"), "'age'", "more than once")
    pq.write_table(table.append_column(" age", table.column("age")), tmp_path / "spaced.parquet")
    one_line_error(run("predict", files / "model.json", tmp_path / "spaced.parquet", "-o", tmp_path / "x.csv"), "same name once spaces are removed")
    one_line_error(run("predict", files / "model.json", tmp_path / "absent.parquet", "-o", tmp_path / "x.csv"), "no such file")


def test_parquet_types_other_than_text_and_numbers(files, tmp_path):
    """Dictionary-encoded text, booleans with nulls and a date column (unused) read as their CSV spellings."""
    cohort = pd.read_csv(files / "cohort.csv")
    table = pa.table({
        **{c: pa.array(cohort[c]) for c in cohort.columns if c not in ("residence", "prior_delirium")},
        "residence": pa.array(cohort["residence"]).dictionary_encode(),
        "prior_delirium": pa.array([None if i == 3 else bool(v) for i, v in enumerate(cohort["prior_delirium"])]),
        "admitted": pa.array([datetime.date(2026, 1, 1)] * len(cohort), type=pa.date32()),
    })
    pq.write_table(table, tmp_path / "typed.parquet")
    as_text = cohort.astype(object)
    as_text.loc[3, "prior_delirium"] = ""
    as_text.to_csv(tmp_path / "typed.csv", index=False)
    for kind in ("csv", "parquet"):
        result = run("predict", files / "model.json", tmp_path / f"typed.{kind}", "-o", tmp_path / f"typed-{kind}.csv")
        assert result.exit_code == 0, result.output
    assert (tmp_path / "typed-csv.csv").read_bytes() == (tmp_path / "typed-parquet.csv").read_bytes()


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(cells=st.lists(st.text(alphabet="0123456789.-+eEaxn ", max_size=6), min_size=3, max_size=3))
def test_any_text_in_a_parquet_text_column_reads_as_the_same_csv_cell(files, tmp_path, cells):
    cohort = pd.read_csv(files / "cohort.csv").iloc[:3].astype({"temperature": str})
    cohort["temperature"] = [c.strip() for c in cells]
    frames = {}
    for kind in ("csv", "parquet"):
        path = tmp_path / f"h.{kind}"
        cohort.to_csv(path, index=False) if kind == "csv" else cohort.to_parquet(path, index=False)
        result = run("predict", files / "model.json", path, "-o", tmp_path / "h-out.csv")
        assert result.exit_code in (0, 2), result.output
        frames[kind] = (result.exit_code, result.output.replace(str(path), "FILE").splitlines()[-1:],
                        (tmp_path / "h-out.csv").read_bytes() if result.exit_code == 0 else None)
        (tmp_path / "h-out.csv").unlink(missing_ok=True)
    assert frames["csv"] == frames["parquet"]


def test_a_streamed_predict_equals_the_one_chunk_run_on_many_small_chunks(files, tmp_path):
    """--chunk-rows 7 (58 chunks of the 400 patients) writes the same bytes as one chunk, CSV and Parquet in,
    and an error in a later chunk names the file's row."""
    outputs = set()
    for cohort in ("cohort.csv", "cohort.parquet"):
        for rows in ("7", "100000"):
            out = tmp_path / f"{cohort}-{rows}.csv"
            result = run("predict", files / "model.json", files / cohort, "-o", out, "--keep", "age", "--contributions",
                         "--chunk-rows", rows)
            assert result.exit_code == 0, result.output
            outputs.add(out.read_bytes())
    assert len(outputs) == 1
    wrong = pd.read_csv(files / "cohort.csv").astype({"temperature": str})
    wrong.loc[250, "temperature"] = "warm"
    wrong.to_parquet(tmp_path / "late.parquet", index=False)
    one_line_error(run("predict", files / "model.json", tmp_path / "late.parquet", "-o", tmp_path / "x.csv", "--chunk-rows", "7"),
                   "row 251", "'warm'")
    assert not (tmp_path / "x.csv").exists()
