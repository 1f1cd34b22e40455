"""Audit benchmark: `score` and `check` on 1,000,000 demo patients, and a tamper sweep over every numeric cell
of the rendered demo sheet. Prints figures and same-run reference ratios; asserts nothing about time.

    python tests/benchmarks/bench_audit.py [--rows 1000000] [--skip-tamper]

Targets (docs/audit.md): score <= 10 s, check <= 20 s for 1,000,000 rows on the reference machine. References
measured in the same run: pandas reading the same CSV (for score) and scikit-learn's roc_auc_score on the
same number of patients (for check), so the ratios survive a busy machine.
"""

from __future__ import annotations

import argparse
import copy
import itertools
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from scorecard.audit.readback import verify_pages  # noqa: E402
from scorecard.audit.pdf_tables import read_pdf  # noqa: E402
from scorecard.demo import cohort_csv_text, generate_cohort, true_model  # noqa: E402
from scorecard.model import save_model  # noqa: E402
from scorecard.quantize import quantize_model  # noqa: E402
from scorecard.render import load_layout, render_pdf, shipped_layouts  # noqa: E402
from scorecard.sheet import save_sheet, short_fingerprint  # noqa: E402
from tests.audit.test_audit_verify import TABLES_ONLY, numeric_cells  # noqa: E402


def timed(label: str, args: list[str]) -> float:
    """Wall time of one CLI run; its CPU time too, which a machine shared with other work inflates less."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "scorecard", *args], cwd=ROOT, capture_output=True, text=True)
    seconds = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    print(f"  {label}: {seconds:.2f} s wall, {cpu:.2f} s CPU (exit {done.returncode}; load average {os.getloadavg()[0]:.1f})")
    if done.returncode not in (0, 3):
        print(done.stderr)
    return seconds


def tamper_sweep(sheet: dict, folder: Path) -> None:
    print("tamper sweep on the demo sheet")
    for name in sorted(shipped_layouts()):
        try:
            pdf = render_pdf(sheet, load_layout(name), short_fingerprint(sheet))
        except Exception as exc:  # a layout that cannot hold this sheet is the renderer's business
            print(f"  {name}: not rendered ({type(exc).__name__}: {str(exc).splitlines()[0][:80]})")
            continue
        (folder / "clean.pdf").write_bytes(pdf)
        result = verify_pages(sheet, read_pdf(folder / "clean.pdf"))
        print(f"  untouched {name}: {result.cells_checked} cells compared, {len(result.mismatches)} false alarms")
    (folder / "tables-only.toml").write_text(TABLES_ONLY)
    layout = load_layout(str(folder / "tables-only.toml"))
    groups = numeric_cells(sheet)
    total = sum(len(g) for g in groups.values())
    caught = 0
    start = time.perf_counter()
    for round_cells in itertools.zip_longest(*groups.values()):
        doctored = copy.deepcopy(sheet)
        cells = [c for c in round_cells if c is not None]
        for _, _, alter in cells:
            alter(doctored)
        (folder / "doctored.pdf").write_bytes(render_pdf(doctored, layout, short_fingerprint(sheet)))
        mismatches = verify_pages(sheet, read_pdf(folder / "doctored.pdf")).mismatches
        import re

        caught += sum(1 for block, where, _ in cells if any(m.block == block and re.match(where, m.row) for m in mismatches))
    print(f"  doctored prints: {caught} of {total} changed numeric cells caught ({caught / total:.1%}) "
          f"in {time.perf_counter() - start:.1f} s")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--skip-tamper", action="store_true")
    options = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        model = true_model()
        save_model(model, folder / "model.json")
        sheet = quantize_model(model, bootstrap=0)
        save_sheet(sheet, folder / "sheet.json")
        print(f"demo sheet {short_fingerprint(sheet)}: {len(sheet['terms'])} blocks, totals {sheet['total']['min']}..{sheet['total']['max']}")
        start = time.perf_counter()
        (folder / "cohort.csv").write_text(cohort_csv_text(generate_cohort(options.rows, seed=1)))
        print(f"cohort of {options.rows:,} patients written in {time.perf_counter() - start:.1f} s")

        print("score")
        start = time.perf_counter()
        frame = pd.read_csv(folder / "cohort.csv")
        pandas_read = time.perf_counter() - start
        print(f"  reference, pandas.read_csv of the same file: {pandas_read:.2f} s")
        score = timed("scorecard score (CLI, end to end)", ["score", str(folder / "sheet.json"), str(folder / "cohort.csv"),
                                                          "-o", str(folder / "scored.csv")])
        print(f"  score / pandas read = {score / pandas_read:.1f}x; target <= 10 s: {'met' if score <= 10 else 'NOT met'}")

        print("check")
        from sklearn.metrics import roc_auc_score

        y = frame["delirium"].to_numpy()
        x = np.random.default_rng(0).normal(size=len(y)) + y
        start = time.perf_counter()
        roc_auc_score(y, x)
        sk = time.perf_counter() - start
        print(f"  reference, scikit-learn roc_auc_score on {len(y):,} patients: {sk:.2f} s")
        check = timed("scorecard check (CLI, end to end, 200 bootstrap resamples)",
                      ["check", str(folder / "sheet.json"), "--model", str(folder / "model.json"), "--data",
                       str(folder / "cohort.csv"), "-o", str(folder / "report.pdf")])
        print(f"  check / roc_auc_score = {check / sk:.0f}x; check / pandas read = {check / pandas_read:.1f}x; "
              f"target <= 20 s: {'met' if check <= 20 else 'NOT met'}")
        if not options.skip_tamper:
            tamper_sweep(sheet, folder)


if __name__ == "__main__":
    main()
