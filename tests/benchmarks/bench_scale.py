"""Scale benchmark: rows per second and peak memory on large invented cohorts, same run.

Section `fit` (issue 16): `scorecard fit` on a demo cohort written as Parquet, in memory against the Dask
engine with 1 and 2 local workers (`--engine dask --workers N`), each run a fresh process; the peak memory is
that of the whole process tree (the command and, for Dask, its worker processes), sampled with psutil every
0.1 s. Prints rows/s, peak memory, the ratios to the in-memory run and how far the Dask documents are from
the in-memory one (largest difference of any number). With two or more sizes it also prints how the fit's
time grows with rows (the exponent b of time ~ rows^b between consecutive sizes).

    python tests/benchmarks/bench_scale.py fit [--rows 1000000,5000000]

Run it on a quiet machine: the figures are wall-clock times on shared cores.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import psutil

SCORECARD = [sys.executable, "-m", "scorecard"]


def run_measured(command: list[str]) -> tuple[float, int]:
    """(wall seconds, peak resident bytes of the process and all its descendants) of `command`."""
    start = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    root = psutil.Process(process.pid)
    peak = 0
    while process.poll() is None:
        try:
            tree = [root, *root.children(recursive=True)]
            peak = max(peak, sum(p.memory_info().rss for p in tree if p.is_running()))
        except psutil.Error:
            pass
        time.sleep(0.1)
    seconds = time.perf_counter() - start
    if process.returncode != 0:
        raise SystemExit(f"{' '.join(command)} failed ({process.returncode}): {process.stderr.read()[-2000:]}")
    return seconds, peak


def largest_difference(a, b) -> float:
    """Largest absolute difference between the numbers of two documents of the same structure."""
    if isinstance(a, dict):
        return max((largest_difference(a[k], b[k]) for k in a), default=0.0)
    if isinstance(a, list):
        return max((largest_difference(u, v) for u, v in zip(a, b)), default=0.0)
    if isinstance(a, (int, float)) and not isinstance(a, bool):
        return abs(float(a) - float(b))
    return 0.0 if a == b else math.inf


def fit_section(sizes: list[int], folder: Path) -> None:
    print("fit: scorecard fit on the invented demo cohort (Parquet), in memory vs --engine dask (local cluster)")
    print(f"machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at start")
    header = f"{'rows':>10} {'engine':<16} {'seconds':>8} {'rows/s':>9} {'peak MB':>8} {'time/mem':>9} {'peak/mem':>9} {'max diff':>9}"
    timings: dict[str, list[tuple[int, float]]] = {}
    for rows in sizes:
        cohort = folder / f"cohort-{rows}.parquet"
        subprocess.run([*SCORECARD, "demo", "--cohort-only", "--rows", str(rows), "--seed", "16", "-o", str(cohort)],
                       check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        print(header)
        reference = None
        for label, extra in (("memory", []), ("dask 1 worker", ["--engine", "dask", "--workers", "1"]),
                             ("dask 2 workers", ["--engine", "dask", "--workers", "2"])):
            out = folder / f"{rows}-{label.replace(' ', '-')}.model.json"
            seconds, peak = run_measured([*SCORECARD, "fit", str(cohort), "--outcome", "delirium", "--exclude", "patient_id",
                                          *extra, "-o", str(out)])
            document = json.loads(out.read_text())
            if reference is None:
                reference = (seconds, peak, document)
            diff = largest_difference(reference[2], document)
            print(f"{rows:>10,} {label:<16} {seconds:>8.1f} {rows / seconds:>9,.0f} {peak / 2**20:>8.0f} "
                  f"{seconds / reference[0]:>9.2f} {peak / reference[1]:>9.2f} {diff:>9.1e}")
            timings.setdefault(label, []).append((rows, seconds))
    if len(sizes) > 1:
        for label, points in timings.items():
            growth = [math.log(t2 / t1) / math.log(n2 / n1) for (n1, t1), (n2, t2) in zip(points, points[1:])]
            print(f"time ~ rows^b, {label}: b = " + ", ".join(f"{b:.2f}" for b in growth))
    print(f"load average {os.getloadavg()[0]:.1f} at end")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("section", choices=["fit"])
    parser.add_argument("--rows", default="1000000", help="comma-separated cohort sizes")
    args = parser.parse_args()
    sizes = [int(r) for r in args.rows.split(",")]
    with tempfile.TemporaryDirectory() as folder:
        if args.section == "fit":
            fit_section(sizes, Path(folder))


if __name__ == "__main__":
    main()
