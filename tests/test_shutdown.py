"""Clean shutdown (scorecard/shutdown.py): SIGTERM or SIGINT to a verb ends its worker processes, leaves no
partial or temporary file, prints one line and exits 128 + the signal number (130, 143: the shell convention
for a process ended by a signal, common practice); SIGKILL, which cannot be caught, still takes the workers
with it (Linux PR_SET_PDEATHSIG, prctl(2)).

The fit runs in a real subprocess; the test waits until its worker processes exist (read from /proc, no
blind sleep) before signalling. /proc is Linux: the tests skip elsewhere.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from scorecard.cli import main
from tests.audit.handmade import write_handmade_files

linux_only = pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads processes from /proc")
WAIT = 60.0  # seconds: a generous bound on a shared machine, only reached when something is broken


def _state_and_parent(pid: int) -> tuple[str, int] | None:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    fields = stat.rsplit(")", 1)[1].split()
    return fields[0], int(fields[1])


def alive(pid: int) -> bool:
    """Running (a zombie waiting for a reaper counts as ended)."""
    found = _state_and_parent(pid)
    return found is not None and found[0] not in ("Z", "X")


def children_of(pid: int) -> list[int]:
    kids = []
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            found = _state_and_parent(int(entry))
            if found and found[1] == pid and found[0] not in ("Z", "X"):
                kids.append(int(entry))
    return kids


def wait_until(condition, what: str):
    deadline = time.monotonic() + WAIT
    while time.monotonic() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError(f"timed out waiting for {what}")


@pytest.fixture(scope="module")
def cohort(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("cohort")
    result = CliRunner().invoke(main, ["demo", "--cohort-only", "--rows", "3000", "-o", str(folder / "cohort.csv")])
    assert result.exit_code == 0, result.output
    return folder / "cohort.csv"


def start_fit(cohort: Path, folder: Path) -> tuple[subprocess.Popen, list[int]]:
    """`scorecard fit` with many slow bags on two workers, started in its own session (as a shell's job)."""
    command = [sys.executable, "-m", "scorecard", "fit", str(cohort), "--outcome", "delirium", "--exclude", "patient_id",
               "--repeats", "60", "--learning-rate", "0.02", "--jobs", "2", "-o", str(folder / "fitted.model.json")]
    process = subprocess.Popen(command, cwd=folder, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                               start_new_session=True, env={**os.environ, "PYTHONPATH": str(Path(__file__).parents[1]), "PYTHONFAULTHANDLER": "1"})
    workers = wait_until(lambda: children_of(process.pid) if process.poll() is None else ["ended"], "the fit's workers")
    assert workers != ["ended"], process.communicate()
    return process, workers


def finish(process: subprocess.Popen) -> str:
    """Its standard error once it ends; a hang fails with every thread's stack (faulthandler on SIGABRT)."""
    try:
        return process.communicate(timeout=WAIT)[1]
    except subprocess.TimeoutExpired:
        process.send_signal(signal.SIGABRT)
        raise AssertionError(f"did not end within {WAIT} s:\n{process.communicate()[1]}") from None


def assert_nothing_written(folder: Path):
    assert sorted(p.name for p in folder.iterdir()) == [], "output or temporary file left behind"


@linux_only
@pytest.mark.parametrize("signum, exit_code, to_group", [(signal.SIGTERM, 143, False), (signal.SIGINT, 130, True)],
                         ids=["SIGTERM", "SIGINT-as-ctrl-c"])
def test_a_signal_ends_fit_and_its_workers_cleanly(cohort, tmp_path, signum, exit_code, to_group):
    process, workers = start_fit(cohort, tmp_path)
    if to_group:  # Ctrl-C in a terminal reaches the whole process group, workers included
        os.killpg(process.pid, signum)
    else:
        process.send_signal(signum)
    err = finish(process)
    assert process.returncode == exit_code, err
    assert "Traceback" not in err and "Aborted" not in err, err
    stops = [line for line in err.splitlines() if "stopped" in line]
    assert stops == [err.strip().splitlines()[-1]] and signal.Signals(signum).name in stops[0], err
    assert not [pid for pid in workers if alive(pid)]
    assert_nothing_written(tmp_path)


@linux_only
def test_sigkill_to_fit_takes_its_workers_with_it(cohort, tmp_path):
    process, workers = start_fit(cohort, tmp_path)
    process.kill()
    finish(process)
    assert process.returncode == -signal.SIGKILL
    wait_until(lambda: not [pid for pid in workers if alive(pid)], "the workers to end after their parent was killed")


@pytest.mark.parametrize("signum, exit_code", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_while_a_streamed_output_is_half_written_leaves_no_file(tmp_path, monkeypatch, signum, exit_code):
    """predict writes chunk by chunk into a temporary file: the signal lands on the third chunk."""
    files = write_handmade_files(tmp_path, rows=40)
    import scorecard.commands.predict as predict

    chunks = []
    real = predict._risk_table

    def risk_table_then_signal(*args, **kwargs):
        chunks.append(1)
        if len(chunks) == 3:
            os.kill(os.getpid(), signum)
        return real(*args, **kwargs)

    monkeypatch.setattr(predict, "_risk_table", risk_table_then_signal)
    out = tmp_path / "out"
    out.mkdir()
    before = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    result = CliRunner().invoke(main, ["predict", str(files / "model.json"), str(files / "cohort.csv"),
                                       "--chunk-rows", "5", "-o", str(out / "risks.csv")])
    assert result.exit_code == exit_code, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("stopped by " + signal.Signals(signum).name), result.output
    assert_nothing_written(out)
    # the suite's own handlers are back (the verb ran inside this process)
    assert {s: signal.getsignal(s) for s in before} == before
