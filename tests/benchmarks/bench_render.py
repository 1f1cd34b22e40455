"""Speed of `scorecard render` on a 30-term sheet, against plain reportlab in the same run (prints figures).

    /work/venv/bin/python tests/benchmarks/bench_render.py [--terms 30] [--repeat 5] [--layout ward-a4]

Target (issue 5): a 30-term sheet renders in <= 3 s. The reference is reportlab itself laying out a plain
document with the same text volume (every row text and its points as one-row table lines, plus the conversion
table, in the same DejaVu font and size) - so the ratio says how much the layout work (columns, kept-together
blocks, nomogram, page x of y, the two-sided and page-limit checks) costs over platypus at its simplest.
Figures are the best of `--repeat` runs (the machine is shared; the best run is the least disturbed).
"""

from __future__ import annotations

import argparse
import io
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from reportlab.lib.pagesizes import A4  # noqa: E402
from reportlab.platypus import SimpleDocTemplate, Table  # noqa: E402

from scorecard.render import load_layout, render_pdf  # noqa: E402
from scorecard.pdf_plumbing import REGULAR, register_fonts  # noqa: E402
from scorecard.sheet import short_fingerprint  # noqa: E402
from tests.render.sheets import many_term_sheet  # noqa: E402


def plain_reference(sheet: dict, size: float) -> bytes:
    """The same texts as a plain platypus table document (no columns, no drawings, no page furniture)."""
    register_fonts()
    lines = []
    for term in sheet["terms"]:
        lines.append([term.get("label", term["name"]), ""])
        if term["kind"] == "pair":
            for axis_row, pts in zip(term["axes"][0]["rows"], term["points"]):
                lines.append([axis_row["text"], " ".join(str(p) for p in pts)])
        else:
            lines += [[row["text"], str(row["points"])] for row in term["rows"]]
    lines += [[str(r["total"]), r["text"]] for r in sheet["conversion"]]
    buffer = io.BytesIO()
    doc = SimpleDocTemplate(buffer, pagesize=A4, invariant=1)
    table = Table(lines, repeatRows=0)
    table.setStyle([("FONT", (0, 0), (-1, -1), REGULAR, size)])
    doc.build([table])
    return buffer.getvalue()


def best_time(fn, repeat: int) -> tuple[float, object]:
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - start)
    return best, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--terms", type=int, default=30)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--layout", default="ward-a4")
    args = parser.parse_args()
    sheet = many_term_sheet(args.terms)
    layout = load_layout(args.layout)
    fp = short_fingerprint(sheet)
    register_fonts()
    render_pdf(sheet, layout, fp)  # warm-up: font loading and imports are not what we time
    ours, pdf = best_time(lambda: render_pdf(sheet, layout, fp), args.repeat)
    ref, ref_pdf = best_time(lambda: plain_reference(sheet, layout.body_pt), args.repeat)
    rows = sum(len(t.get("rows", [])) or len(t["points"]) for t in sheet["terms"])
    print(f"sheet: {len(sheet['terms'])} terms, {rows} rows, {len(sheet['conversion'])} totals; layout {layout.name}")
    print(f"scorecard render : {ours:.3f} s (best of {args.repeat}), {len(pdf)} bytes  [target <= 3 s: "
          f"{'met' if ours <= 3 else 'MISSED'}]")
    print(f"plain reportlab  : {ref:.3f} s (best of {args.repeat}), {len(ref_pdf)} bytes")
    print(f"ratio            : {ours / ref:.1f}x the plain table document")


if __name__ == "__main__":
    main()
