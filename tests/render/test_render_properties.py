"""Property test: random valid sheets (texts from the shared printed-text rules) always render inside the
margins, without overlapping text, at or above the minimum type size, and read back cell for cell.

The read-back is the audit's PDF reader (`scorecard.audit`, written separately from render, on pdfplumber).
"""

from __future__ import annotations

import io
import tempfile
from pathlib import Path

import pdfplumber
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from scorecard.audit.pdf_tables import read_pdf
from scorecard.audit.readback import verify_pages
from scorecard.render import load_layout, render_pdf
from scorecard.sheet import CAUTIONS, short_fingerprint, validate_sheet_dict
from scorecard.sheet.printed import range_text
from tests.render.sheets import PLACEHOLDER, finish, twelve_term_sheet

WORD = st.text(alphabet="abcdefghijklmnopqrstuvwxyzABCDEFGH&<>()-", min_size=1, max_size=11)
LABEL = st.lists(WORD, min_size=1, max_size=4).map(" ".join)
POINTS = st.integers(min_value=-3, max_value=9)


@st.composite
def continuous_rows(draw, decimals):
    cuts = sorted(set(draw(st.lists(st.integers(min_value=-50, max_value=400), min_size=1, max_size=6))))
    bounds = [None] + [c / 10**decimals for c in cuts] + [None]
    rows = [{"lower": lo, "upper": hi, "text": range_text(lo, hi, decimals), "points": draw(POINTS)}
            for lo, hi in zip(bounds, bounds[1:])]
    return cuts, rows


@st.composite
def term(draw, index):
    kind = draw(st.sampled_from(["continuous", "continuous", "categorical", "flag"]))
    name = f"f{index}"
    label = f"{draw(LABEL)} {index}"  # distinct headings: a reader finds a table by its heading
    if kind == "continuous":
        decimals = draw(st.integers(min_value=0, max_value=1))
        cuts, rows = draw(continuous_rows(decimals))
        if draw(st.booleans()):
            rows.append({"missing": True, "text": "not measured", "points": draw(POINTS)})
        return {"name": name, "kind": kind, "feature": name, "label": label, "unit": draw(st.sampled_from(["", "mmol/L", "°C"])),
                "decimals": decimals, "training_range": {"min": (cuts[0] - 5) / 10**decimals, "max": (cuts[-1] + 5) / 10**decimals},
                "rows": rows}
    if kind == "categorical":
        n = draw(st.integers(min_value=2, max_value=5))
        rows = [{"levels": [f"level{k}"], "text": draw(LABEL), "points": draw(POINTS)} for k in range(n)]
        return {"name": name, "kind": kind, "feature": name, "label": label, "unseen": "error", "rows": rows}
    return {"name": name, "kind": "flag", "feature": name, "label": label,
            "rows": [{"value": False, "text": "No", "points": draw(POINTS)}, {"value": True, "text": "Yes", "points": draw(POINTS)}]}


@st.composite
def sheets(draw):
    doc = twelve_term_sheet()
    n = draw(st.integers(min_value=1, max_value=12))
    terms = [draw(term(i)) for i in range(n)]
    if draw(st.booleans()):  # keep the fixture's pair grid, over two of the fixture's features
        terms.append(doc["terms"][-1])
    doc["terms"] = terms
    doc["cautions"] = list(CAUTIONS)
    cut = draw(st.sampled_from([[], [0.1], [0.05, 0.3]]))
    doc["bands"] = [{"name": f"band {k + 1}", "upper_risk": u, "wording": PLACEHOLDER} for k, u in enumerate(cut)]
    if cut:
        doc["bands"].append({"name": "top band", "upper_risk": None, "wording": draw(LABEL)})
    return finish(doc)


@settings(max_examples=5, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(sheets())
def test_random_sheets_stay_inside_the_page_and_read_back_exactly(doc):
    validate_sheet_dict(doc)
    layout = load_layout("ward-a4")
    pdf = render_pdf(doc, layout, short_fingerprint(doc))
    m = layout.margins
    with pdfplumber.open(io.BytesIO(pdf)) as reader:
        for page in reader.pages:
            words = page.extract_words()
            boxes = sorted((w["x0"], w["top"], w["x1"], w["bottom"]) for w in words)
            for i, a in enumerate(boxes):
                for b in boxes[i + 1:]:
                    if b[0] >= a[2] - 0.3:
                        break
                    overlap_y = min(a[3], b[3]) - max(a[1], b[1])
                    assert not (overlap_y > 0.5 and min(a[2], b[2]) - max(a[0], b[0]) > 0.3), (page.page_number, a, b)
            for ch in page.chars:
                if ch["text"].strip():
                    assert m["left"] - 0.5 <= ch["x0"] and ch["x1"] <= page.width - m["right"] + 0.5, (page.page_number, ch["text"])
                    assert m["top"] - 0.5 <= ch["top"] and ch["bottom"] <= page.height - m["bottom"] + 0.5, (page.page_number, ch["text"])
                    assert ch["size"] >= layout.min_pt - 0.01
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "sheet.pdf"
        path.write_bytes(pdf)
        result = verify_pages(doc, read_pdf(path))
    assert not result.mismatches, [m.line() for m in result.mismatches[:5]]
