"""`verify` against an attacker: every way of changing what a printed sheet shows, or what a reader extracts from
it, without changing the sheet document is refused (exit 3), and an untouched or merely re-saved PDF passes.

The edits are made with pypdf on the PDF itself, as a malicious user with a PDF editor would: content-stream edits
of the nomogram, an altered character map, boxes drawn over cells, text hidden in four ways, annotations, pages
moved, appended and renumbered, and metadata changed."""

from __future__ import annotations

import io
import re

import pytest
from click.testing import CliRunner
from pypdf import PdfReader, PdfWriter
from pypdf.annotations import FreeText
from pypdf.generic import (
    ArrayObject,
    ContentStream,
    DecodedStreamObject,
    DictionaryObject,
    FloatObject,
    NameObject,
    NumberObject,
    TextStringObject,
)

from scorecard.audit.pdf_tables import read_pdf_bytes
from scorecard.cli import main
from scorecard.commands.verify import verify_printed
from scorecard.jsondoc import pretty_text
from scorecard.render import load_layout, render_pdf
from scorecard.sheet import short_fingerprint
from tests.audit.handmade import compact_model_dict, sheet_dict

LAYOUT = "ward-a4"


@pytest.fixture(scope="module")
def sheet():
    return sheet_dict(compact_model_dict(), lpp=0.5)


@pytest.fixture(scope="module")
def clean(sheet):
    return render_pdf(sheet, load_layout(LAYOUT), short_fingerprint(sheet))


def blocks(sheet, data: bytes) -> set[str]:
    mismatches, _ = verify_printed(sheet, data, "tampered.pdf")
    return {m.block for m in mismatches}


def written(writer: PdfWriter) -> bytes:
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def edit_page(clean: bytes, page_index: int, change) -> bytes:
    """Apply `change(operations)` to one page's content stream (a list of (operands, operator))."""
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    page = writer.pages[page_index]
    content = ContentStream(page.get_contents(), writer)
    change(content.operations)
    page.replace_contents(content)
    return written(writer)


def shown(ops, text: str) -> int:
    """Index of the first text-showing operation that prints exactly `text`."""
    return next(i for i, (operands, op) in enumerate(ops) if op == b"Tj" and str(operands[0]) == text)


def points_cell(clean: bytes) -> tuple[int, object]:
    """(index of the Tj printing the points of row 2 of the first table on page 1, that word)."""
    page = read_pdf_bytes(clean)[0]
    table = next(t for t in sorted(page.tables, key=lambda t: (t.top, t.x0)) if t.rows[0].text() == "Age (years)")
    word = max(table.rows[2].words, key=lambda w: w.x1)
    ops = ContentStream(PdfReader(io.BytesIO(clean)).pages[0].get_contents(), None).operations
    return shown(ops, word.text), word


def test_untouched_and_resaved_pdfs_pass(sheet, clean):
    mismatches, summary = verify_printed(sheet, clean, "sheet.pdf")
    assert mismatches == [] and "identical bytes" in summary
    # re-saved by another PDF tool (new bytes, same pages, same look): still the sheet
    resaved = written(PdfWriter(clone_from=PdfReader(io.BytesIO(clean))))
    assert resaved != clean
    mismatches, summary = verify_printed(sheet, resaved, "sheet.pdf")
    assert mismatches == [], [m.line() for m in mismatches]
    assert "pixel for pixel" in summary


@pytest.mark.parametrize("old, new", [("27%", "2.7%"), ("2", "9")])
def test_a_nomogram_tick_edited_is_caught_where_it_is(sheet, clean, old, new):
    # the nomogram is on the last page of this layout; the read-back of tables never looks at it
    last = len(PdfReader(io.BytesIO(clean)).pages) - 1

    def change(ops):
        i = shown(ops, old)
        ops[i] = ([TextStringObject(new)], b"Tj")

    mismatches, _ = verify_printed(sheet, edit_page(clean, last, change), "t.pdf")
    pictures = [m for m in mismatches if m.block == "picture" and m.page == last + 1]
    assert pictures and any(m.block == "text layer" for m in mismatches)


def _cmap_edit(clean: bytes, code: int, to: str, also_show: tuple[int, str] | None) -> bytes:
    """Remap `code` of the regular font's character map to `to` (what a text extractor reads), and optionally
    make the content show another glyph at one place."""
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    font = next(f.get_object() for f in writer.pages[0]["/Resources"]["/Font"].values()
                if str(f.get_object().get("/BaseFont", "")).endswith("+DejaVuSans"))
    cmap = font["/ToUnicode"].get_object()
    data = cmap.get_data().decode("latin-1")
    data = re.sub(rf"<{code:02X}> <[0-9A-F]{{4}}>", f"<{code:02X}> <{ord(to):04X}>", data)
    cmap.set_data(data.encode("latin-1"))
    if also_show:
        index, text = also_show
        page = writer.pages[0]
        content = ContentStream(page.get_contents(), writer)
        content.operations[index] = ([TextStringObject(text)], b"Tj")
        page.replace_contents(content)
    return written(writer)


def test_an_altered_character_map_is_caught(sheet, clean):
    index, word = points_cell(clean)
    digit = word.text[-1]
    other = "9" if digit != "9" else "8"
    # the cell shows `other` while a text extractor reads the sheet's digit there (and everywhere `other` is drawn)
    shows_other = _cmap_edit(clean, ord(other), digit, (index, word.text[:-1] + other))
    found = blocks(sheet, shows_other)
    assert {"embedded font", "picture"} <= found
    # only the map changed: nothing looks different, but what a reader or a screen reader gets is wrong
    reads_other = _cmap_edit(clean, ord(digit), other, None)
    found = blocks(sheet, reads_other)
    assert "embedded font" in found and "text layer" in found


def _box(word, page_height: float, digit: bool) -> bytes:
    x0, x1, y0, y1 = word.x0 - 1, word.x1 + 1, page_height - word.bottom - 1, page_height - word.top + 1
    drawing = f"q 1 g {x0:.2f} {y0:.2f} {x1 - x0:.2f} {y1 - y0:.2f} re f Q\n"
    if digit:  # a hand-drawn 1: one stroke where the printed digit was
        mid = (x0 + x1) / 2
        drawing += f"q 0 G 0.8 w {mid:.2f} {y0 + 1:.2f} m {mid:.2f} {y1 - 1:.2f} l S Q\n"
    return drawing.encode("ascii")


@pytest.mark.parametrize("digit", [False, True])
def test_a_white_box_over_a_cell_is_caught_in_its_table_and_row(sheet, clean, digit):
    _, word = points_cell(clean)
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    page = writer.pages[0]
    drawn_over = DecodedStreamObject()  # the page's drawing, then the box on top
    drawn_over.set_data(page.get_contents().get_data() + b"\n" + _box(word, float(page.mediabox.height), digit))
    page.replace_contents(drawn_over)
    mismatches, _ = verify_printed(sheet, written(writer), "t.pdf")
    pictures = [m for m in mismatches if m.block == "picture" and m.page == 1]
    assert pictures, [m.line() for m in mismatches]
    assert any("table 'Age (years)', row 2: 70–79 1" in m.row for m in pictures), [m.line() for m in pictures]


def _hide(kind: str):
    def change(ops, index):
        operands, op = ops[index]
        if kind == "invisible":  # text render mode 3: neither filled nor stroked, still extracted
            ops[index:index + 1] = [([NumberObject(3)], b"Tr"), (operands, op), ([NumberObject(0)], b"Tr")]
        elif kind == "white":
            ops[index:index + 1] = [([FloatObject(1), FloatObject(1), FloatObject(1)], b"rg"), (operands, op),
                                    ([FloatObject(0), FloatObject(0), FloatObject(0)], b"rg")]
        elif kind == "tiny":  # 0.3 pt type: a speck on paper, full text to an extractor
            font = next(ops[k][0] for k in range(index, -1, -1) if ops[k][1] == b"Tf")
            ops[index:index + 1] = [([font[0], FloatObject(0.3)], b"Tf"), (operands, op), (font, b"Tf")]
        elif kind == "clipped":  # the text's block drawn inside an empty clipping path
            start = next(k for k in range(index, -1, -1) if ops[k][1] == b"BT")
            end = next(k for k in range(index, len(ops)) if ops[k][1] == b"ET")
            ops[end + 1:end + 1] = [([], b"Q")]
            ops[start:start] = [([], b"q"), ([NumberObject(0), NumberObject(0), NumberObject(0), NumberObject(0)], b"re"),
                                ([], b"W"), ([], b"n")]
    return change


@pytest.mark.parametrize("kind", ["invisible", "white", "tiny", "clipped"])
def test_a_cell_whose_text_is_hidden_is_caught(sheet, clean, kind):
    index, _ = points_cell(clean)
    data = edit_page(clean, 0, lambda ops: _hide(kind)(ops, index))
    found = blocks(sheet, data)
    assert "picture" in found, found


@pytest.mark.parametrize("kind", ["stamp", "free text"])
def test_an_annotation_showing_another_number_is_refused(sheet, clean, kind):
    _, word = points_cell(clean)
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    height = float(writer.pages[0].mediabox.height)
    rect = (word.x0 - 2, height - word.bottom - 2, word.x1 + 8, height - word.top + 2)
    if kind == "free text":
        annotation = FreeText(text="9", rect=rect, font_size="8pt", background_color="ffffff")
    else:
        annotation = DictionaryObject({NameObject("/Type"): NameObject("/Annot"), NameObject("/Subtype"): NameObject("/Stamp"),
                                       NameObject("/Rect"): ArrayObject([FloatObject(v) for v in rect]),
                                       NameObject("/Contents"): TextStringObject("9"), NameObject("/Name"): NameObject("/Approved")})
    writer.add_annotation(page_number=0, annotation=annotation)
    mismatches, _ = verify_printed(sheet, written(writer), "t.pdf")
    notes = [m for m in mismatches if m.block == "annotation" and m.page == 1]
    assert notes and ("Stamp" in notes[0].row or "FreeText" in notes[0].row)


def test_reordered_pages_are_caught(sheet, clean):
    reader = PdfReader(io.BytesIO(clean))
    writer = PdfWriter()
    for i in (1, 0, 2):
        writer.add_page(reader.pages[i])
    mismatches, _ = verify_printed(sheet, written(writer), "t.pdf")
    order = [m for m in mismatches if m.block == "pages" and m.row == "order"]
    assert {m.page for m in order} == {1, 2}
    assert any(m.block == "page number" for m in mismatches)


@pytest.mark.parametrize("appended", ["copy", "blank"])
def test_an_appended_page_is_caught(sheet, clean, appended):
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    if appended == "copy":
        writer.add_page(PdfReader(io.BytesIO(clean)).pages[-1])
    else:
        writer.add_blank_page()
    found = blocks(sheet, written(writer))
    assert "pages" in found and "page number" in found


def test_a_wrong_page_x_of_y_is_caught(sheet, clean):
    pages = len(PdfReader(io.BytesIO(clean)).pages)

    def change(ops):
        i = shown(ops, f"Page {pages} of {pages}")
        ops[i] = ([TextStringObject(f"Page {pages} of {pages + 1}")], b"Tj")

    mismatches, _ = verify_printed(sheet, edit_page(clean, pages - 1, change), "t.pdf")
    assert any(m.block == "page number" and m.page == pages for m in mismatches)
    assert any(m.block == "picture" and m.page == pages for m in mismatches)


def test_a_changed_metadata_fingerprint_is_caught(sheet, clean):
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    writer.add_metadata({"/Keywords": "sheet fingerprint " + "0" * 64})
    mismatches, _ = verify_printed(sheet, written(writer), "t.pdf")
    assert [m.row for m in mismatches if m.block == "metadata"] == ["Keywords"]


def test_the_command_lists_each_difference_and_exits_3(sheet, clean, tmp_path):
    (tmp_path / "sheet.json").write_text(pretty_text(sheet))
    writer = PdfWriter(clone_from=PdfReader(io.BytesIO(clean)))
    writer.add_metadata({"/Keywords": "sheet fingerprint " + "0" * 64})
    (tmp_path / "t.pdf").write_bytes(written(writer))
    result = CliRunner().invoke(main, ["verify", str(tmp_path / "t.pdf"), "--sheet", str(tmp_path / "sheet.json")])
    assert result.exit_code == 3
    assert "document, metadata, Keywords: printed 'sheet fingerprint 0000" in result.output
    # a PDF rendered with a layout file names it in its metadata: verify asks for that file
    custom = load_layout(LAYOUT)
    (tmp_path / "c.pdf").write_bytes(render_pdf(sheet, _renamed(custom, "our-ward"), short_fingerprint(sheet)))
    result = CliRunner().invoke(main, ["verify", str(tmp_path / "c.pdf"), "--sheet", str(tmp_path / "sheet.json")])
    assert result.exit_code == 2 and "not a shipped layout" in result.output and "--layout" in result.output


def _renamed(layout, name):
    import dataclasses

    return dataclasses.replace(layout, name=name)


# -- the range column of the conversion table (10th-90th percentile of model risk per total) ------------------


@pytest.fixture(scope="module")
def spread_sheet():
    return sheet_dict(compact_model_dict(), lpp=0.5, spread=True)


@pytest.fixture(scope="module")
def spread_clean(spread_sheet):
    return render_pdf(spread_sheet, load_layout(LAYOUT), short_fingerprint(spread_sheet))


def operands_of(ops, i):
    return ops[i][0][0]


def test_an_edited_range_cell_is_caught_in_its_row(spread_sheet, spread_clean):
    from scorecard.sheet.printed import spread_text

    assert verify_printed(spread_sheet, spread_clean, "sheet.pdf")[0] == []
    entry = spread_sheet["conversion"][3]
    printed = spread_text(entry)
    page = next(i for i, p in enumerate(PdfReader(io.BytesIO(spread_clean)).pages) if printed in p.extract_text())
    low, high = printed.split("\u2013")
    other = "0.1\u2013" + high  # another low end, same look otherwise

    def change(ops):
        # the dash is drawn from the font subset's own code, so the cell is found by its two ends
        i = next(i for i, (operands, op) in enumerate(ops) if op == b"Tj" and str(operands[0]).startswith(low)
                 and str(operands[0]).endswith(high))
        text = str(operands_of(ops, i))
        ops[i] = ([TextStringObject("0.1" + text[len(low):])], b"Tj")

    mismatches, _ = verify_printed(spread_sheet, edit_page(spread_clean, page, change), "t.pdf")
    rows = [m for m in mismatches if m.block == "conversion table"]
    assert any(m.row == f"total {entry['total']} range" and m.printed == other for m in rows), [m.line() for m in mismatches]
    assert any(m.block == "picture" for m in mismatches)


def test_a_print_without_the_range_column_is_caught(spread_sheet, tmp_path):
    from dataclasses import replace

    from scorecard.audit.readback import verify_pages

    # rendered as if the layout had no room for it: the page says so, so the read-back accepts the table, but the
    # fresh render of ward-a4 has the column: the print is not the sheet's
    dropped = render_pdf(spread_sheet, replace(load_layout(LAYOUT), conversion_spread=False), short_fingerprint(spread_sheet))
    assert verify_pages(spread_sheet, read_pdf_bytes(dropped)).mismatches == []
    assert "picture" in blocks(spread_sheet, dropped) or "text layer" in blocks(spread_sheet, dropped)
    # a sheet document without the spread, printed: the read-back itself names the column (both ways round)
    bare = {k: v for k, v in spread_sheet.items()}
    bare["conversion"] = [{k: v for k, v in c.items() if k != "spread"} for c in spread_sheet["conversion"]]
    plain = render_pdf(bare, load_layout(LAYOUT), short_fingerprint(spread_sheet))
    found = verify_pages(spread_sheet, read_pdf_bytes(plain)).mismatches
    assert any(m.row == "Range column" and m.printed == "(missing)" for m in found), [m.line() for m in found]
    found = verify_pages(bare, read_pdf_bytes(render_pdf(spread_sheet, load_layout(LAYOUT), short_fingerprint(spread_sheet)))).mismatches
    assert any(m.row == "Range column" and m.printed == "printed" for m in found), [m.line() for m in found]
