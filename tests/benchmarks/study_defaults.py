"""Study behind the quantizer's default limits and bounds (issue 10, 2e), on a demo run's own files.

Run: scorecard demo -o DIR, then  python tests/benchmarks/study_defaults.py DIR [ROWS,POINTS ...]
(default grid below; about 15 s per setting on a shared core).

For each setting (rows per term, total-points cap, per-patient bounds) the quantizer is run as `scorecard
quantize` runs it (chosen on two thirds of DIR/cohort.csv, confirmed on the held-out third, the demo's bands),
the sheet is measured by `scorecard check`'s own code on DIR/audit-cohort.csv (patients it never saw), and
rendered with the ward-a4 layout: pages, and whether every points table and the total box fit on page 1
(the front) at the layout's 9 pt. A setting whose bounds cannot be met is reported with the search's reason.
"""

from __future__ import annotations

import os
import sys
import time
from dataclasses import replace
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from scorecard.audit.agreement import check_agreement  # noqa: E402
from scorecard.errors import CheckFailed, UserError  # noqa: E402
from scorecard.model import load_model  # noqa: E402
from scorecard.quantize import Bound, parse_bands, quantize_model  # noqa: E402
from scorecard.render.layout import load_layout  # noqa: E402
from scorecard.render.pages import render_pdf  # noqa: E402
from scorecard.sheet import sheet_fingerprint, short_fingerprint  # noqa: E402
from scorecard.tabular import read_csv  # noqa: E402

DEMO_BANDS = "low<10,moderate<25,high"  # as `scorecard demo` gives them

# (rows per term, total-points cap, band agreement at least, p95 at most, largest at most)
GRID = [
    (8, 40, 0.80, 0.10, None),
    (8, 60, 0.85, 0.08, None),
    (10, 60, 0.90, 0.07, None),
    (10, 60, 0.90, 0.06, None),
    (10, 80, 0.92, 0.06, None),
    (10, 100, 0.93, 0.05, None),
    (10, 100, 0.95, 0.05, 0.15),
    (8, 100, 0.93, 0.05, None),
    (12, 100, 0.95, 0.05, 0.15),
]


def pages_and_front(sheet: dict) -> tuple[int, bool]:
    """Pages on ward-a4, and whether the points tables and the total box fit on its first page."""
    layout = load_layout("ward-a4")
    try:
        pdf = render_pdf(sheet, layout, short_fingerprint(sheet))
    except UserError:  # e.g. a pair grid wider than the layout's column
        return 0, False
    import io

    from pypdf import PdfReader

    pages = len(PdfReader(io.BytesIO(pdf)).pages)
    front = [s for s in layout.sections if "terms" in s.parts][0]
    tight = replace(front, parts=tuple(p for p in front.parts if p in ("terms", "total")), max_pages=1)
    rest = tuple(replace(s, max_pages=0) for s in layout.sections if s is not front)
    moved = tuple(p for p in front.parts if p not in ("terms", "total"))
    rest = (replace(rest[0], parts=moved + rest[0].parts),) + rest[1:]
    try:
        render_pdf(sheet, replace(layout, sections=(tight,) + rest), short_fingerprint(sheet))
        fits = True
    except UserError:
        fits = False
    return pages, fits


def run(folder: Path, setting: tuple) -> None:
    rows, points, band, p95, largest = setting
    model = load_model(folder / "edited.model.json")
    cohort, audit = read_csv(folder / "cohort.csv"), read_csv(folder / "audit-cohort.csv")
    bound = Bound(max_rows=rows, max_total_points=points, min_band_agreement=band, max_percentile_risk_error=p95,
                  max_largest_risk_error=largest)
    t0 = time.perf_counter()
    label = f"{rows:2d} rows {points:3d} pts  bounds band>={band} p95<={p95} largest<={largest}"
    try:
        doc = quantize_model(model, cohort, bound, bands=parse_bands(DEMO_BANDS), bootstrap=0)
    except CheckFailed as exc:
        print(f"{label}: NOT MET ({str(exc)[:160]}...)", flush=True)
        return
    doc["fingerprint"] = sheet_fingerprint(doc)
    report = check_agreement(doc, model, audit, replicates=20)
    a = report["agreement"]
    pages, fits = pages_and_front(doc)
    h = doc["achieved"]
    print(f"{label}: held out band {h['band_agreement']:.3f} p95 {h['p95_abs_risk_error'] * 100:.1f} pp; "
          f"{doc['report']['printed_rows']} rows, totals {doc['total']['min']}-{doc['total']['max']}, "
          f"ward-a4 {pages} pages, tables on one front: {'yes' if fits else 'NO'} | audit: band {a['band_agreement']:.3f}, "
          f"p95 {a['p95_abs_risk_error'] * 100:.1f} pp, largest {a['max_abs_risk_error'] * 100:.1f} pp, "
          f"mean {a['mean_abs_risk_error'] * 100:.2f} pp, ΔAUC {a['auc_loss']:.4f}, all bounds {'PASS' if report['passed'] else 'FAIL'} "
          f"({time.perf_counter() - t0:.0f} s)", flush=True)


def main() -> None:
    folder = Path(sys.argv[1])
    grid = GRID
    if len(sys.argv) > 2:
        grid = []
        for item in sys.argv[2:]:
            r, p, b, q, l = item.split(",")
            grid.append((int(r), int(p), float(b), float(q), None if l == "none" else float(l)))
    for setting in grid:
        run(folder, setting)


if __name__ == "__main__":
    main()
