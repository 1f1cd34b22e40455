"""Benchmark: building and writing the review PDF of the demo's true model (15 pages) on a demo cohort.

Prints seconds for each stage and the ratio against a reference measured in the same run: matplotlib writing
15 A4 pages that each hold one step line and one bar chart of the same sizes (the floor any review pays).
Run: /work/venv/bin/python tests/benchmarks/bench_review.py [ROWS]
"""

from __future__ import annotations

import io
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np  # noqa: E402
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from scorecard.demo import generate_cohort, true_model  # noqa: E402
from scorecard.review.report import build_review, pdf_bytes  # noqa: E402


def reference_pdf(pages: int) -> float:
    start = time.perf_counter()
    buffer = io.BytesIO()
    with PdfPages(buffer) as pdf:
        for _ in range(pages):
            fig = Figure(figsize=(8.27, 11.69))
            ax = fig.add_axes([0.1, 0.5, 0.8, 0.4])
            ax.step(np.arange(45), np.sin(np.arange(45) / 7), where="post")
            fig.add_axes([0.1, 0.2, 0.8, 0.2]).bar(np.arange(45), np.arange(45) % 7)
            pdf.savefig(fig)
    return time.perf_counter() - start


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 3000
    model = true_model()
    cohort = generate_cohort(rows, seed=0).astype(str)
    cohort.attrs["source"] = "demo"
    t0 = time.perf_counter()
    figures, ranking, flags = build_review(model, cohort, cohort_name="demo", sheet_preview_wanted=False)
    t1 = time.perf_counter()
    data = pdf_bytes(figures)
    t2 = time.perf_counter()
    with_preview, *_ = build_review(model, cohort, cohort_name="demo")
    t3 = time.perf_counter()
    reference = reference_pdf(len(figures))
    print(f"review of {len(model.terms)} terms on {rows} patients: {len(figures)} pages, {len(flags)} flags, {len(data) / 1024:.0f} KiB")
    print(f"build figures {t1 - t0:.2f} s, write PDF {t2 - t1:.2f} s, total {t2 - t0:.2f} s (--no-sheet-preview)")
    print(f"build figures with the default-sheet preview (one quantize_model run) {t3 - t2:.2f} s; "
          f"ratio to without {(t3 - t2) / (t1 - t0):.1f}x")
    print(f"reference (plain matplotlib, {len(figures)} simple pages) {reference:.2f} s; ratio {(t2 - t0) / reference:.1f}x")


if __name__ == "__main__":
    main()
