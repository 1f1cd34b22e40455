"""`verify`: the printed PDF read back with pdfplumber agrees cell by cell with the sheet; every changed number is
caught (100 % detection), the untouched PDF raises no alarm, another sheet version and non-sheets are refused."""

from __future__ import annotations

import copy
import io
import itertools
import re

import pytest
from click.testing import CliRunner
from pypdf import PdfReader, PdfWriter
from pypdf.generic import ContentStream, TextStringObject

from scorecard.audit.pdf_tables import read_pdf
from scorecard.audit.readback import verify_pages, verify_pdf
from scorecard.cli import main
from scorecard.jsondoc import pretty_text
from scorecard.render import load_layout, render_pdf, shipped_layouts
from scorecard.sheet import short_fingerprint
from tests.audit.handmade import compact_model_dict, sheet_dict


def bump(text: str) -> str:
    """The same text with its last digit changed (9 -> 0)."""
    digits = [m.start() for m in re.finditer(r"\d", text)]
    k = digits[-1]
    return text[:k] + str((int(text[k]) + 1) % 10) + text[k + 1:]


def pdf_pages(data: bytes, tmp_path, name="x.pdf"):
    path = tmp_path / name
    path.write_bytes(data)
    return read_pdf(path)


@pytest.fixture(scope="module")
def compact():
    return sheet_dict(compact_model_dict(), lpp=0.5, spread=True)


@pytest.mark.parametrize("layout", sorted(shipped_layouts()))
def test_untouched_pdf_matches_in_every_shipped_layout(layout, tmp_path):
    sheet = sheet_dict()
    result = verify_pages(sheet, pdf_pages(render_pdf(sheet, load_layout(layout), short_fingerprint(sheet)), tmp_path))
    assert result.mismatches == [], [m.line() for m in result.mismatches]
    # every row text, points cell, grid cell and conversion entry was compared
    rows = sum(len(t["rows"]) for t in sheet["terms"] if t["kind"] != "pair")
    assert result.cells_checked >= 2 * rows + 2 * len(sheet["conversion"])


@pytest.mark.parametrize("which, layout", [("twelve", "ward-a4"), ("many", "large-print-a4")])
def test_untouched_pdf_of_larger_sheets_matches(which, layout, tmp_path):
    # the renderer's own test sheets (tests/render/sheets.py): negative points with signs, markup characters,
    # many blocks running over several pages and columns
    from tests.render.sheets import many_term_sheet, twelve_term_sheet

    sheet = twelve_term_sheet() if which == "twelve" else many_term_sheet()
    result = verify_pages(sheet, pdf_pages(render_pdf(sheet, load_layout(layout), short_fingerprint(sheet)), tmp_path))
    assert result.mismatches == [], [m.line() for m in result.mismatches]


def _add(sheet: dict, path: tuple, delta: int) -> None:
    node = sheet
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] += delta


def _bump_text(sheet: dict, path: tuple) -> None:
    node = sheet
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = bump(node[path[-1]])


def _scale_spread(sheet: dict, k: int, end: str, factor: float) -> None:
    """One end of a printed range moved towards 0 (so low stays below high)."""
    spread = sheet["conversion"][k]["spread"]
    spread[end] = spread[end] * factor if end == "low" else spread["low"] + (spread["high"] - spread["low"]) * factor


def numeric_cells(sheet: dict) -> dict[str, list[tuple[str, str, object]]]:
    """Every printed cell of the sheet document that holds a number, grouped by the table printing it:
    {group: [(block, where the mismatch must be reported, function altering the cell)]}."""
    groups: dict[str, list] = {}
    for ti, term in enumerate(sheet["terms"]):
        cells = groups.setdefault(term["name"], [])
        if term["kind"] == "pair":
            block = f"grid {term['label']!r}"
            for i, row in enumerate(term["points"]):
                for j in range(len(row)):
                    cells.append((block, f"row {i + 1} (.*) x column {j + 1} ", lambda s, p=("terms", ti, "points", i, j): _add(s, p, 1)))
            cells.append((block, "not measured points", lambda s, p=("terms", ti, "missing_points"): _add(s, p, 1)))
            for a, axis in enumerate(term["axes"]):
                for r, row in enumerate(axis["rows"]):
                    if re.search(r"\d", row["text"]):
                        where = f"row {r + 1} text" if a == 0 else f"column {r + 1}"
                        cells.append((block, where, lambda s, p=("terms", ti, "axes", a, "rows", r, "text"): _bump_text(s, p)))
            continue
        block = f"table {term['label']!r}"
        for r, row in enumerate(term["rows"]):
            cells.append((block, f"row {r + 1} (.*) points", lambda s, p=("terms", ti, "rows", r, "points"): _add(s, p, 1)))
            if re.search(r"\d", row["text"]):
                cells.append((block, f"row {r + 1} text", lambda s, p=("terms", ti, "rows", r, "text"): _bump_text(s, p)))
    for k, entry in enumerate(sheet["conversion"]):
        # one unit down for the first total, up for the others, so the printed table keeps its ends in order
        step = -1 if k == 0 else 1
        groups.setdefault("conversion totals", []).append(
            ("conversion table", f"entry {k + 1} total", lambda s, p=("conversion", k, "total"), d=step: _add(s, p, d)))
        groups.setdefault("conversion risks", []).append(
            ("conversion table", f"total {entry['total']} risk", lambda s, p=("conversion", k, "text"): _bump_text(s, p)))
        if (entry.get("spread") or {}).get("low") is not None:  # the range column: both ends
            groups.setdefault("conversion range lows", []).append(
                ("conversion table", f"total {entry['total']} range", lambda s, k=k: _scale_spread(s, k, "low", 0.5)))
            groups.setdefault("conversion range highs", []).append(
                ("conversion table", f"total {entry['total']} range", lambda s, k=k: _scale_spread(s, k, "high", 0.6)))
    return groups


TABLES_ONLY = """
name = "tables-only"
description = "ward-a4 without the curve and the nomogram: every table the audit reads, nothing drawn from totals"
[page]
size = "A4"
orientation = "portrait"
margins_mm = { top = 10, bottom = 10, left = 12, right = 12 }
two_sided = false
[type]
min_pt = 9
body_pt = 9
heading_pt = 9.5
title_pt = 13
[[section]]
name = "point tables"
columns = 2
parts = ["terms", "total"]
[[section]]
name = "conversion"
columns = 1
parts = ["instructions", "conversion_table", "bands", "ranges", "cautions"]
"""


def test_every_changed_number_is_caught(compact, tmp_path):
    """Render from a copy of the sheet with exactly one printed number changed, but the approved sheet's
    fingerprint on every page (a doctored print): verify against the approved sheet must flag it. The layout
    leaves out the curve and nomogram, which cannot be drawn from a conversion table whose totals are doctored."""
    (tmp_path / "tables-only.toml").write_text(TABLES_ONLY)
    layout = load_layout(str(tmp_path / "tables-only.toml"))
    clean = verify_pages(compact, pdf_pages(render_pdf(compact, layout, short_fingerprint(compact)), tmp_path))
    assert clean.mismatches == []  # no false alarm in this layout either
    groups = numeric_cells(compact)
    assert sum(len(c) for c in groups.values()) > 40
    # one doctored print per round, each round changing one cell in every table (so each change is reported
    # in its own table and row); every changed cell must appear among the mismatches
    missed = []
    for round_cells in itertools.zip_longest(*groups.values()):
        doctored = copy.deepcopy(compact)
        cells = [c for c in round_cells if c is not None]
        for _, _, alter in cells:
            alter(doctored)
        result = verify_pages(compact, pdf_pages(render_pdf(doctored, layout, short_fingerprint(compact)), tmp_path))
        for block, where, _ in cells:
            if not any(m.block == block and re.match(where, m.row) for m in result.mismatches):
                missed.append((block, where))
    assert missed == []  # 100 % detection


def test_content_stream_edit_of_any_points_cell_is_caught(compact, tmp_path):
    """Edit the PDF itself (pypdf): change the digit of every number drawn on the points-table page."""
    clean = render_pdf(compact, load_layout("ward-a4"), short_fingerprint(compact))
    reader = PdfReader(io.BytesIO(clean))
    ops = ContentStream(reader.pages[0].get_contents(), reader).operations
    targets = [i for i, (operands, op) in enumerate(ops) if op == b"Tj" and re.fullmatch(r"[+\-\u2212]?\d+", str(operands[0]))]
    assert len(targets) >= 15
    missed = []
    for i in targets:
        writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
        page = writer.pages[0]
        content = ContentStream(page.get_contents(), writer)
        operands, op = content.operations[i]
        content.operations[i] = ([TextStringObject(bump(str(operands[0])))], op)
        page.replace_contents(content)
        out = io.BytesIO()
        writer.write(out)
        result = verify_pages(compact, pdf_pages(out.getvalue(), tmp_path))
        if not result.mismatches:
            missed.append(str(operands[0]))
    assert missed == []


def test_another_sheet_version_is_caught_on_every_page(compact, tmp_path):
    newer = copy.deepcopy(compact)
    newer["title"] = "Delirium risk after hip-fracture surgery (revised)"
    newer.pop("fingerprint")
    pdf = render_pdf(newer, load_layout("ward-a4"), short_fingerprint(newer))
    result = verify_pages(compact, pdf_pages(pdf, tmp_path))
    pages = {m.page for m in result.mismatches if m.block == "fingerprint"}
    assert pages == set(range(1, len(pdf_pages(pdf, tmp_path)) + 1))


def test_verify_command_exit_codes(compact, tmp_path):
    (tmp_path / "sheet.json").write_text(pretty_text(compact))
    (tmp_path / "sheet.pdf").write_bytes(render_pdf(compact, load_layout("ward-a4"), short_fingerprint(compact)))
    ok = CliRunner().invoke(main, ["verify", str(tmp_path / "sheet.pdf"), "--sheet", str(tmp_path / "sheet.json")])
    assert ok.exit_code == 0, ok.output
    doctored = copy.deepcopy(compact)
    doctored["terms"][0]["rows"][1]["points"] += 1
    (tmp_path / "bad.pdf").write_bytes(render_pdf(doctored, load_layout("ward-a4"), short_fingerprint(compact)))
    bad = CliRunner().invoke(main, ["verify", str(tmp_path / "bad.pdf"), "--sheet", str(tmp_path / "sheet.json")])
    assert bad.exit_code == 3
    assert "page 1, table 'Age', row 2 (70–79) points: printed" in bad.output
    # not a PDF, and a PDF that is not a sheet: exit 2 with one line
    (tmp_path / "notes.pdf").write_text("hello")
    for path in (tmp_path / "notes.pdf", tmp_path / "sheet.json"):
        result = CliRunner().invoke(main, ["verify", str(path), "--sheet", str(tmp_path / "sheet.json")])
        assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1
    from reportlab.pdfgen import canvas  # a real PDF that is a letter, not a sheet

    letter = io.BytesIO()
    c = canvas.Canvas(letter, invariant=1)
    c.drawString(72, 720, "Dear colleague, the ward meeting moved to Thursday.")
    c.save()
    (tmp_path / "letter.pdf").write_bytes(letter.getvalue())
    result = CliRunner().invoke(main, ["verify", str(tmp_path / "letter.pdf"), "--sheet", str(tmp_path / "sheet.json")])
    assert result.exit_code == 2 and "does not look like a printed points sheet" in result.output


def test_verify_pdf_reads_a_file(compact, tmp_path):
    path = tmp_path / "s.pdf"
    path.write_bytes(render_pdf(compact, load_layout("pocket-card"), short_fingerprint(compact)))
    assert verify_pdf(compact, path).passed


@pytest.mark.parametrize("needle", ["5 days", "69.5", "version 1"])
def test_numbers_in_the_running_text_are_caught(compact, tmp_path, needle):
    """The horizon in the page header, the worked example of the rounding rule and the model version in the
    footer carry numbers too: a content-stream edit of any of them is caught on the page where it happens."""
    clean = render_pdf(compact, load_layout("ward-a4"), short_fingerprint(compact))
    pages = len(PdfReader(io.BytesIO(clean)).pages)
    edits = 0
    for page_index in range(pages):
        ops = ContentStream(PdfReader(io.BytesIO(clean)).pages[page_index].get_contents(), PdfReader(io.BytesIO(clean))).operations
        for i in [i for i, (operands, op) in enumerate(ops) if op == b"Tj" and needle in str(operands[0])]:
            writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
            page = writer.pages[page_index]
            content = ContentStream(page.get_contents(), writer)
            operands, op = content.operations[i]
            text = str(operands[0])
            at = text.index(needle) + needle.index(next(ch for ch in needle if ch.isdigit()))
            content.operations[i] = ([TextStringObject(text[:at] + str((int(text[at]) + 1) % 10) + text[at + 1:])], op)
            page.replace_contents(content)
            out = io.BytesIO()
            writer.write(out)
            result = verify_pages(compact, pdf_pages(out.getvalue(), tmp_path))
            assert any(m.page == page_index + 1 for m in result.mismatches), (needle, page_index)
            edits += 1
    assert edits >= 1


@pytest.mark.parametrize("lpp, printed", [(0.2, True), (0.15, False)])
def test_pocket_card_prints_the_range_where_it_fits_and_says_so_where_not(lpp, printed, tmp_path):
    """The pocket card (one back side) prints the range column when the conversion fits with it (28 totals);
    with 36 totals only the table without it fits: the card then says the range is left off, and the read-back
    accepts that table (the fresh render, made the same way, is identical)."""
    from scorecard.commands.verify import verify_printed
    from scorecard.sheet.printed import SPREAD_LEFT_OFF

    sheet = sheet_dict(lpp=lpp, spread=True)
    data = render_pdf(sheet, load_layout("pocket-card"), short_fingerprint(sheet))
    pages = pdf_pages(data, tmp_path)
    text = " ".join(" ".join(p.passages()) for p in pages)
    assert ("Range" in [w.text for p in pages for w in p.words]) == printed
    assert (" ".join(SPREAD_LEFT_OFF.split()) in " ".join(text.split())) == (not printed)
    mismatches, summary = verify_printed(sheet, data, "card.pdf")
    assert mismatches == [] and "identical bytes" in summary, [m.line() for m in mismatches]


CONVERSION_IN_COLUMNS = TABLES_ONLY.replace('name = "tables-only"', 'name = "conversion-in-columns"').replace(
    'parts = ["terms", "total"]', 'parts = ["ranges", "total", "conversion_table", "terms"]').replace(
    'parts = ["instructions", "conversion_table", "bands", "ranges", "cautions"]', 'parts = ["instructions", "bands", "cautions"]')


def test_a_table_continued_at_the_top_of_the_next_column_is_read_after_the_part_it_continues(tmp_path):
    """Reading order of a two-column page (common practice in typesetting: down a column, then the next): the
    conversion table starts low in the left column, under the range rules and the total box, and goes on at
    the top of the right column. Read by height alone, the right column's totals came first and every entry
    was reported as a difference."""
    from tests.render.sheets import wide_total_sheet

    sheet = wide_total_sheet()
    (tmp_path / "columns.toml").write_text(CONVERSION_IN_COLUMNS)
    pages = pdf_pages(render_pdf(sheet, load_layout(str(tmp_path / "columns.toml")), short_fingerprint(sheet)), tmp_path)
    first = pages[0]
    left, right = sorted((t for t in first.tables if any(row.text().startswith("Total Risk") for row in t.rows)),
                         key=lambda t: t.x0)
    assert right.x0 > left.x1 and right.top < left.top  # the case under test: the rest is higher, to the right
    assert verify_pages(sheet, pages).mismatches == []
