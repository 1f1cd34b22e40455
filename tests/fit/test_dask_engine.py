"""The Dask engine (`scorecard fit --engine dask`): the same model as the in-memory fit on a
`distributed.LocalCluster` of 2 workers; the in-memory path never imports dask; one-line errors (exit 2) for a
missing extra and an unreachable scheduler.

The reference for the engine is the in-memory fit itself (the engine must reproduce it); the merged value
summaries behind the bins are checked against numpy's own quantile and unique on all the rows."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.cli import main
from scorecard.demo import FEATURES, OUTCOME, cohort_csv_text, generate_cohort
from scorecard.fit import AdditiveRiskClassifier
from scorecard.fit.binning import ValueSummary

SMALL = dict(repeats=2, n_jobs=1, pairs=1, max_rounds=60, random_state=4)  # pairs=1: stage 2 runs on the cluster too; shrinkage auto: the
# choice (steps at each shrinkage, a line plus steps) runs on the cluster too


def _close(a, b, path="model"):
    """Same document structure and text; numbers within 1e-9 (partition sums round differently)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            _close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (u, v) in enumerate(zip(a, b)):
            _close(u, v, f"{path}[{i}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert abs(a - b) <= 1e-9 * max(1.0, abs(a)), (path, a, b)
    else:
        assert a == b, (path, a, b)


@pytest.fixture(scope="module")
def cohort():
    return generate_cohort(1200, seed=8, interaction=True)


def test_dask_fit_equals_the_in_memory_fit_on_a_two_worker_local_cluster(cohort):
    pytest.importorskip("distributed")
    from scorecard.fit.dask_engine import DaskEngine

    X, y = cohort[FEATURES], cohort[OUTCOME]
    memory = AdditiveRiskClassifier(**SMALL).fit(X, y)
    # 5 partitions of 250 rows (the last 200) over 2 in-process workers: every sum crosses partitions
    with DaskEngine(workers=2, partition_rows=250, processes=False) as engine:
        assert len(engine.workers) == 2
        dask = AdditiveRiskClassifier(**SMALL).fit(X, y, engine=engine)
    assert [t.name for t in dask.to_model().terms if t.kind == "pair"]  # a pair was boosted on the cluster
    for a, b in zip(memory.bins_, dask.bins_):  # bins from the merged summaries: identical, not just close
        assert a.kind == b.kind and a.n_bins == b.n_bins
        assert (a.edges is None and b.edges is None) or np.array_equal(a.edges, b.edges)
        assert a.levels == b.levels
    assert memory.fit_report_["rounds_one_feature"] == dask.fit_report_["rounds_one_feature"]
    assert memory.data_fingerprint_ == dask.data_fingerprint_
    np.testing.assert_allclose(dask.decision_function(X), memory.decision_function(X), rtol=0, atol=1e-9)
    _close(memory.to_model().to_dict(), dask.to_model().to_dict())


@settings(max_examples=40, deadline=None)
@given(st.lists(st.one_of(st.none(), st.integers(-5, 5).map(lambda v: v / 2)), min_size=1, max_size=60),
       st.lists(st.integers(1, 59), max_size=4, unique=True))
def test_merged_summaries_of_blocks_equal_the_summary_of_all_rows(values, cuts):
    x = np.array([np.nan if v is None else v for v in values])
    w = np.arange(len(x)) % 3.0  # weights 0, 1, 2: zero-weight rows count as rows but never move a cut
    bounds = [0, *sorted(c for c in cuts if c < len(x)), len(x)]
    merged = ValueSummary.merge([ValueSummary.of(x[a:b], w[a:b]) for a, b in zip(bounds[:-1], bounds[1:])])
    whole = ValueSummary.of(x, w)
    for field in ("values", "rows", "positive", "weight"):
        np.testing.assert_array_equal(getattr(merged, field), getattr(whole, field))
    measured = x[~np.isnan(x)]
    np.testing.assert_array_equal(merged.values, np.unique(measured))  # numpy's unique on all the rows
    if len(measured):
        for q in (0.0, 0.01, 0.3, 0.5, 0.99, 1.0):  # numpy's default (linear) quantile on all the rows
            assert merged.quantile(q) == pytest.approx(float(np.quantile(measured, q)), rel=1e-12, abs=1e-12)


def test_level_summaries_merge_too():
    levels = np.array(["b", None, "a", "b", "c", None, "a"], dtype=object)
    w = np.ones(len(levels))
    merged = ValueSummary.merge([ValueSummary.of(levels[:3], w[:3]), ValueSummary.of(levels[3:], w[3:])])
    assert list(merged.values) == ["a", "b", "c"] and list(merged.rows) == [2, 2, 1]


@pytest.fixture(scope="module")
def cohort_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("dask") / "cohort.csv"
    path.write_text(cohort_csv_text(generate_cohort(300, seed=21)))
    return path


def test_the_in_memory_fit_never_imports_dask(cohort_file, tmp_path):
    script = (
        "import sys\n"
        "from scorecard.cli import main\n"
        f"sys.argv = ['scorecard', 'fit', {str(cohort_file)!r}, '--outcome', {OUTCOME!r}, '--exclude', 'patient_id',"
        f" '--repeats', '1', '--jobs', '1', '-o', {str(tmp_path / 'm.model.json')!r}]\n"
        "try:\n    main()\nexcept SystemExit as e:\n    assert not e.code, e.code\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')))\n"
    )
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-2000:]
    assert done.stdout.strip().splitlines()[-1] == "[]"
    assert (tmp_path / "m.model.json").exists()


def test_engine_dask_without_the_extra_says_how_to_install_it(cohort_file, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # as if the [dask] extra were not installed
    monkeypatch.delitem(sys.modules, "scorecard.fit.dask_engine", raising=False)
    out = tmp_path / "m.model.json"
    result = CliRunner().invoke(main, ["fit", str(cohort_file), "--outcome", OUTCOME, "--engine", "dask", "-o", str(out)])
    assert result.exit_code == 2, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "pip install 'wardpoints-scorecard[dask]'" in lines[0], lines
    assert not out.exists()


def test_a_malformed_scheduler_address_is_one_line_and_exit_2(cohort_file, tmp_path):
    pytest.importorskip("distributed")
    out = tmp_path / "m.model.json"
    result = CliRunner().invoke(main, ["fit", str(cohort_file), "--outcome", OUTCOME, "--engine", "dask",
                                       "--scheduler", "no port here", "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert "--scheduler" in result.output and "tcp://host:8786" in result.output
    assert len(result.output.strip().splitlines()) == 1 and not out.exists()


def test_an_unreachable_scheduler_fails_within_its_timeout_instead_of_hanging():
    pytest.importorskip("distributed")
    from scorecard.fit.dask_engine import DaskEngine

    with pytest.raises(OSError, match="Timed out"):
        DaskEngine(scheduler="tcp://127.0.0.1:9", timeout=1)  # port 9 (discard): nothing listens here


def test_failed_connections_one_after_another_never_hang():
    """A client that failed to connect was closed by the garbage collector whenever it ran, and that deadlocked
    when it ran inside the next client's start (seen in the suite: the 5th of a row of failed connections hung).
    Each attempt runs in a fresh process with a deadline, so a hang fails the test instead of stopping the run."""
    pytest.importorskip("distributed")
    import subprocess
    import sys

    script = (
        "from scorecard.fit.dask_engine import DaskEngine\n"
        "for address in ['tcp://127.0.0.1:9', 'host:8786x'] * 4:\n"
        "    try:\n"
        "        DaskEngine(scheduler=address, timeout=1)\n"
        "    except (OSError, ValueError, TypeError):\n"
        "        pass\n"
        "print('done')\n"
    )
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=90)
    assert done.returncode == 0 and done.stdout.strip() == "done", done.stderr[-500:]


@pytest.mark.parametrize("extra", [["--workers", "2"], ["--scheduler", "tcp://127.0.0.1:8786"]])
def test_cluster_options_need_engine_dask(cohort_file, tmp_path, extra):
    result = CliRunner().invoke(main, ["fit", str(cohort_file), "--outcome", OUTCOME, *extra, "-o", str(tmp_path / "m.json")])
    assert result.exit_code == 2 and "--engine dask" in result.output
