"""Scale benchmark (issue 16): rows per second and peak resident memory of the verbs that read a whole cohort,
on invented demo cohorts of 1,000,000, 5,000,000 and 20,000,000 patients, in-memory against streamed, in
the same run. Prints figures, same-run ratios and the growth exponent of time against rows; asserts nothing.

    nice -n 10 python tests/benchmarks/bench_scale.py [--sizes 1000000,5000000,20000000] [--verbs predict,score,check]
        [--in-memory-up-to 5000000] [--folder DIR] [--sections verbs,fit]
    python tests/benchmarks/bench_scale.py fit --rows 1000000        # the fit section alone (docs/scale.md, Fit)

Every run is a fresh `python -m scorecard ...` child process; its peak resident memory is the kernel's own
count for that child (`os.wait4` resource usage, ru_maxrss), its time the wall clock and the child's CPU time
(user + system: less sensitive to a machine shared with other work). "streamed" is the verb as shipped
(`--chunk-rows` 250,000), "in-memory" the same verb with the whole cohort as one chunk (`--chunk-rows` = rows),
which is what every verb did before streaming. In-memory runs stop at --in-memory-up-to rows: their memory
grows with the cohort, and 20,000,000 patients in memory would not fit the machine (docs/scale.md). The
growth exponent is the least-squares slope of log(CPU seconds) on log(rows) over the sizes run: 1 is linear.

The cohorts are `scorecard demo --cohort-only --rows N -o cohort-N.parquet`, kept in --folder and reused;
the sheet and model are the demo's (`scorecard demo --rows 5000`). Sections are functions registered in
SECTIONS: a new one (fit, say) takes the same `Bench` and adds its rows to the same table.
"""

from __future__ import annotations

import argparse
import itertools
import math
import os
import resource
import subprocess
import sys
import tempfile
import json
import time
from dataclasses import dataclass, field
from pathlib import Path

import psutil

ROOT = Path(__file__).resolve().parents[2]
STREAM_ROWS = 250_000  # scorecard.tabular.DEFAULT_CHUNK_ROWS, the shipped default


@dataclass
class Run:
    section: str
    verb: str
    mode: str
    rows: int
    wall: float
    cpu: float
    peak_mb: float
    exit_code: int

    @property
    def rate(self) -> float:
        return self.rows / self.wall if self.wall else float("nan")


@dataclass
class Bench:
    folder: Path
    sizes: list[int]
    in_memory_up_to: int
    verbs: list[str]
    runs: list[Run] = field(default_factory=list)

    def scorecard(self, section: str, verb: str, mode: str, rows: int, args: list[str]) -> Run:
        """One CLI run in a child process: wall time, CPU time and the child's own peak resident memory."""
        start = time.perf_counter()
        child = subprocess.Popen([sys.executable, "-m", "scorecard", *args], cwd=self.folder,
                                 stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        stderr = child.stderr.read()
        _, status, usage = os.wait4(child.pid, 0)
        wall = time.perf_counter() - start
        code = os.waitstatus_to_exitcode(status)
        child.returncode = code
        run = Run(section, verb, mode, rows, wall, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024, code)
        print(f"  {verb:8s} {mode:9s} {rows:>11,} rows: {wall:7.1f} s wall, {run.cpu:7.1f} s CPU, {run.rate:>10,.0f} rows/s, "
              f"peak {run.peak_mb:6.0f} MB (exit {code}; load {os.getloadavg()[0]:.1f})", flush=True)
        if code not in (0, 3):
            print("    " + stderr.strip().splitlines()[-1] if stderr.strip() else "    (no message)")
        self.runs.append(run)
        return run

    def demo(self) -> Path:
        """The demo's sheet and model (built once)."""
        demo = self.folder / "demo"
        if not (demo / "sheet.json").exists():
            subprocess.run([sys.executable, "-m", "scorecard", "demo", "-o", str(demo), "--rows", "5000"], cwd=ROOT,
                           check=False, capture_output=True)
        return demo

    def cohort(self, rows: int) -> Path:
        """The invented cohort of `rows` patients as Parquet (generated once, in chunks)."""
        path = self.folder / f"cohort-{rows}.parquet"
        if not path.exists():
            start = time.perf_counter()
            subprocess.run([sys.executable, "-m", "scorecard", "demo", "--cohort-only", "--rows", str(rows), "-o", str(path)],
                           cwd=ROOT, check=True, capture_output=True)
            print(f"  generated {path.name} in {time.perf_counter() - start:.0f} s", flush=True)
        return path

    def modes(self, rows: int) -> list[tuple[str, int]]:
        out = [("streamed", STREAM_ROWS)]
        if rows <= self.in_memory_up_to:
            out.insert(0, ("in-memory", rows))
        return out


def verbs_section(bench: Bench) -> None:
    """predict, score and check on each size, in-memory (one chunk) and streamed."""
    demo = bench.demo()
    sheet, model = demo / "sheet.json", demo / "edited.model.json"
    for rows in bench.sizes:
        cohort = bench.cohort(rows)
        for mode, chunk in bench.modes(rows):
            chunking = ["--chunk-rows", str(chunk)]
            if "predict" in bench.verbs:
                bench.scorecard("verbs", "predict", mode, rows, ["predict", str(model), str(cohort), "-o", "out.parquet", *chunking])
            if "score" in bench.verbs:
                bench.scorecard("verbs", "score", mode, rows, ["score", str(sheet), str(cohort), "--model", str(model),
                                                                "-o", "out.parquet", *chunking])
            if "check" in bench.verbs:
                bench.scorecard("verbs", "check", mode, rows, ["check", str(sheet), "--model", str(model), "--data", str(cohort),
                                                                "-o", "report.pdf", "--json", "report.json", *chunking])
            (bench.folder / "out.parquet").unlink(missing_ok=True)


# -- fit (issue 16, the Dask engine): its own measurement of the whole process tree (Dask workers and forked
# repeats included): resident peak sampled every 0.1 s, proportional (PSS) every 0.5 s, CPU of every reaped descendant

SCORECARD = [sys.executable, "-m", "scorecard"]


def _pss(pid: int) -> int:
    """Proportional set size of one process (bytes): pages shared with other processes (a forked repeat's
    inherited arrays) counted as a share, so the sum over a tree is what the tree really holds."""
    with open(f"/proc/{pid}/smaps_rollup") as f:
        for line in f:
            if line.startswith("Pss:"):
                return int(line.split()[1]) * 1024
    return 0


def run_measured(command: list[str]) -> tuple[float, float, int, int]:
    """(wall seconds, CPU seconds, peak resident bytes, peak proportional bytes) of `command` and all its
    descendants. CPU is user + system of the command and every descendant it waited for (the forked repeats,
    the Dask workers), read as this process's growth in RUSAGE_CHILDREN over the run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    root = psutil.Process(process.pid)
    peak = peak_pss = 0
    for tick in itertools.count():
        if process.poll() is not None:
            break
        try:
            tree = [root, *root.children(recursive=True)]
            peak = max(peak, sum(p.memory_info().rss for p in tree if p.is_running()))
            if tick % 5 == 0:  # PSS walks every page of the tree: twice a second keeps the sampler's own CPU small
                peak_pss = max(peak_pss, sum(_pss(p.pid) for p in tree if p.is_running()))
        except (psutil.Error, OSError):
            pass
        time.sleep(0.1)
    seconds = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    if process.returncode != 0:
        raise SystemExit(f"{' '.join(command)} failed ({process.returncode}): {process.stderr.read()[-2000:]}")
    return seconds, cpu, peak, peak_pss


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
    header = (f"{'rows':>10} {'engine':<16} {'wall s':>8} {'CPU s':>8} {'rows/s CPU':>10} {'peak MB':>8} {'PSS MB':>8} "
              f"{'CPU/mem':>8} {'PSS/mem':>8} {'max diff':>9}")
    timings: dict[str, list[tuple[int, float]]] = {}
    for rows in sizes:
        cohort = folder / f"cohort-{rows}-seed16.parquet"  # not the verbs' (seed 0) cohort of the same size
        if not cohort.exists():
            subprocess.run([*SCORECARD, "demo", "--cohort-only", "--rows", str(rows), "--seed", "16", "-o", str(cohort)],
                           check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        print(header)
        reference = None
        for label, extra in (("memory", []), ("dask 1 worker", ["--engine", "dask", "--workers", "1"]),
                             ("dask 2 workers", ["--engine", "dask", "--workers", "2"])):
            out = folder / f"{rows}-{label.replace(' ', '-')}.model.json"
            seconds, cpu, peak, pss = run_measured([*SCORECARD, "fit", str(cohort), "--outcome", "delirium", "--exclude", "patient_id",
                                          *extra, "-o", str(out)])
            document = json.loads(out.read_text())
            if reference is None:
                reference = (cpu, pss, document)
            diff = largest_difference(reference[2], document)
            print(f"{rows:>10,} {label:<16} {seconds:>8.1f} {cpu:>8.1f} {rows / cpu:>10,.0f} {peak / 2**20:>8.0f} {pss / 2**20:>8.0f} "
                  f"{cpu / reference[0]:>8.2f} {pss / reference[1]:>8.2f} {diff:>9.1e} (load {os.getloadavg()[0]:.1f})", flush=True)
            timings.setdefault(label, []).append((rows, cpu))
    if len(sizes) > 1:
        for label, points in timings.items():
            growth = [math.log(t2 / t1) / math.log(n2 / n1) for (n1, t1), (n2, t2) in zip(points, points[1:])]
            print(f"CPU time ~ rows^b, {label}: b = " + ", ".join(f"{b:.2f}" for b in growth))
    print(f"load average {os.getloadavg()[0]:.1f} at end")


def fit_bench_section(bench: Bench) -> None:
    """`scorecard fit` in memory against --engine dask with 1 and 2 workers (`fit_section`)."""
    fit_section(bench.sizes, bench.folder)


SECTIONS = {"verbs": verbs_section, "fit": fit_bench_section}


def growth_exponent(points: list[tuple[int, float]]) -> float:
    """Least-squares slope of log(seconds) on log(rows)."""
    if len(points) < 2:
        return float("nan")
    xs, ys = [math.log(r) for r, _ in points], [math.log(max(s, 1e-9)) for _, s in points]
    mx, my = sum(xs) / len(xs), sum(ys) / len(ys)
    return sum((x - mx) * (y - my) for x, y in zip(xs, ys)) / sum((x - mx) ** 2 for x in xs)


def summary(bench: Bench) -> None:
    print("\nsummary (same run)")
    print(f"  {'verb':8s} {'mode':9s} {'rows':>11s} {'rows/s (CPU)':>13s} {'peak MB':>8s} {'bytes/row':>9s}")
    for r in bench.runs:
        print(f"  {r.verb:8s} {r.mode:9s} {r.rows:>11,} {r.rows / r.cpu if r.cpu else float('nan'):>13,.0f} {r.peak_mb:>8.0f} "
              f"{r.peak_mb * 2**20 / r.rows:>9.0f}")
    keys = sorted({(r.section, r.verb, r.mode) for r in bench.runs})
    print("\n  growth of CPU time with rows (exponent; 1 = linear) and peak memory at the largest size")
    for section, verb, mode in keys:
        runs = [r for r in bench.runs if (r.section, r.verb, r.mode) == (section, verb, mode)]
        largest = max(runs, key=lambda r: r.rows)
        print(f"  {verb:8s} {mode:9s} exponent {growth_exponent([(r.rows, r.cpu) for r in runs]):5.2f} over "
              f"{', '.join(f'{r.rows:,}' for r in runs)}; peak {largest.peak_mb:.0f} MB at {largest.rows:,}")
    print("\n  streamed / in-memory at the same size (CPU time, peak memory)")
    for r in bench.runs:
        if r.mode != "streamed":
            continue
        base = next((b for b in bench.runs if (b.section, b.verb, b.rows, b.mode) == (r.section, r.verb, r.rows, "in-memory")), None)
        if base:
            print(f"  {r.verb:8s} {r.rows:>11,}: time x{r.cpu / base.cpu:.2f}, memory x{r.peak_mb / base.peak_mb:.2f} "
                  f"({base.peak_mb:.0f} -> {r.peak_mb:.0f} MB)")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("section", nargs="?", choices=sorted(SECTIONS), help="Run this section only (default: --sections).")
    parser.add_argument("--sizes", "--rows", dest="sizes", default="1000000,5000000,20000000", help="comma-separated cohort sizes")
    parser.add_argument("--verbs", default="predict,score,check")
    parser.add_argument("--in-memory-up-to", type=int, default=5_000_000)
    parser.add_argument("--folder", type=Path, default=None, help="Keep cohorts here (reused by a later run).")
    parser.add_argument("--sections", default="verbs", help="comma-separated sections: verbs, fit")
    args = parser.parse_args()
    folder = args.folder or Path(tempfile.mkdtemp(prefix="bench-scale-"))
    folder.mkdir(parents=True, exist_ok=True)
    bench = Bench(folder.resolve(), [int(s) for s in args.sizes.split(",")], args.in_memory_up_to, args.verbs.split(","))
    print(f"bench_scale: sizes {bench.sizes}, in-memory up to {bench.in_memory_up_to:,} rows, {os.cpu_count()} cores, "
          f"load average {os.getloadavg()[0]:.1f}; folder {folder}")
    for name in [args.section] if args.section else args.sections.split(","):
        print(f"\n[{name}]")
        SECTIONS[name](bench)
    summary(bench)


if __name__ == "__main__":
    main()
