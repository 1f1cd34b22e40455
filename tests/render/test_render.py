"""Render checks read the PDF back with pdfplumber (an outside PDF reader), never our own drawing code.

Page sizes are checked against ISO 216 (A4 = 210 x 297 mm) and ANSI/ASME Y14.1 (US Letter = 8.5 x 11 in).
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import pdfplumber
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.render import load_layout, render_pdf, shipped_layouts
from scorecard.render.text import points_text, sheet_has_negative_points
from scorecard.sheet import save_sheet, short_fingerprint, validate_sheet_dict
from tests.render.sheets import many_term_sheet, twelve_term_sheet, wide_total_sheet, with_markup_labels, without_negative_points

MM = 72 / 25.4


@pytest.fixture(scope="module")
def sheet():
    doc = twelve_term_sheet()
    validate_sheet_dict(doc)  # the fixture follows the sheet contract (the project's own validator)
    return doc


_RENDERED: dict[tuple[str, str], bytes] = {}


def _render(sheet, name):
    """Render once per (sheet fingerprint, layout) in this test run; the determinism test renders afresh."""
    key = (sheet["fingerprint"], name)
    if key not in _RENDERED:
        _RENDERED[key] = render_pdf(sheet, load_layout(name), short_fingerprint(sheet))
    return _RENDERED[key]


@pytest.fixture(scope="module")
def ward_pdf(sheet):
    return render_pdf(sheet, load_layout("ward-a4"), short_fingerprint(sheet))


_PAGES: dict[bytes, list] = {}


def _pages(pdf: bytes):
    if pdf not in _PAGES:
        _PAGES[pdf] = _read_pages(pdf)
    return _PAGES[pdf]


def _read_pages(pdf: bytes):
    with pdfplumber.open(io.BytesIO(pdf)) as doc:
        return [(p.width, p.height, p.extract_words(keep_blank_chars=False), list(p.chars), p.extract_text(), len(p.images))
                for p in doc.pages]


def _column_lines(pdf: bytes, page_no: int, layout_name: str, columns: int) -> list[str]:
    """Text lines of one page read column by column (left column top to bottom, then the next)."""
    layout = load_layout(layout_name)
    gap_guess = 0  # columns are cut at equal widths of the inner page; the gutter holds no text
    with pdfplumber.open(io.BytesIO(pdf)) as doc:
        page = doc.pages[page_no]
        left = layout.margins["left"]
        inner = page.width - left - layout.margins["right"]
        lines = []
        for c in range(columns):
            x0 = left + c * inner / columns - gap_guess
            x1 = left + (c + 1) * inner / columns
            crop = page.crop((max(0, x0), 0, min(page.width, x1 + 0.1), page.height))
            lines += [line.strip() for line in (crop.extract_text() or "").splitlines()]
        return lines


def _heading(term):
    if term["kind"] == "pair":
        return term["label"]
    return f"{term['label']} ({term['unit']})" if term.get("unit") else term["label"]


def test_every_row_and_its_points_in_its_table_in_order_on_page_one(sheet, ward_pdf):
    _assert_rows_in_order(sheet, _column_lines(ward_pdf, 0, "ward-a4", 2))


def _assert_rows_in_order(sheet, lines):
    signed = sheet_has_negative_points(sheet)
    flat = "\n".join(lines)
    cursor = 0
    for term in sheet["terms"]:
        # the heading may wrap in a narrow column: find its first word after the previous table
        first_word = _heading(term).split()[0]
        start = next(i for i in range(cursor, len(lines)) if lines[i].startswith(first_word))
        if term["kind"] == "pair":
            expected = [f"{axis_row['text']} " + " ".join(points_text(p, signed) for p in pts)
                        for axis_row, pts in zip(term["axes"][0]["rows"], term["points"])]
            expected.append(f"If either is not measured: {points_text(term['missing_points'], signed)}")
        else:
            expected = [f"{row['text']} {points_text(row['points'], signed)}" for row in term["rows"]]
        found = []
        i = start
        for want in expected:
            while i < len(lines) and lines[i] != want:
                i += 1
            assert i < len(lines), f"{term['name']}: row {want!r} not found in order after its heading\n{flat}"
            found.append(i)
            i += 1
        # the rows follow each other directly: no other table's row in between
        assert found == list(range(found[0], found[0] + len(found))), (term["name"], found)
        assert found[0] - start <= (7 if term["kind"] == "pair" else 4), f"{term['name']}: rows do not start just under the heading"
        cursor = found[-1] + 1
    assert "TOTAL POINTS" in flat


def test_negative_points_carry_a_real_minus_and_positive_a_plus(sheet, ward_pdf):
    text = _pages(ward_pdf)[0][4]
    assert "\u22121" in text  # temperature 36.0–37.4 scores −1, printed with U+2212
    assert "+7" in text and "+4" in text
    assert not re.search(r"(?<![\d–])-1\b", text), "a hyphen-minus would be misread or lost on a copy"
    plain = _render(without_negative_points(sheet), "ward-a4")
    plain_text = _pages(plain)[0][4]
    assert "+7" not in plain_text and re.search(r"≥ 90 7\b", plain_text)


def test_header_and_footer_on_every_page(sheet, ward_pdf):
    pages = _pages(ward_pdf)
    total = len(pages)
    assert total >= 3
    fp = short_fingerprint(sheet)
    for number, (_, _, _, _, text, _) in enumerate(pages, start=1):
        flat = " ".join(text.split())
        assert sheet["title"] in flat
        assert sheet["outcome"]["event"] in flat and sheet["outcome"]["horizon"] in flat
        assert sheet["outcome"]["population"] in flat
        assert fp in flat
        assert f"model {sheet['model']['name']} version {sheet['model']['version']}" in flat
        assert "Printed on:" in flat
        assert f"Page {number} of {total}" in flat
        for caution in sheet["cautions"]:
            assert caution in flat, caution


def test_conversion_table_pairs_every_total_with_its_risk(sheet, ward_pdf):
    text = next(p[4] for p in _pages(ward_pdf) if "Total points \u2192 risk" in p[4])
    tokens = text.split()
    for row in sheet["conversion"]:
        total = str(row["total"]).replace("-", "\u2212")
        hits = [i for i in range(len(tokens) - 1) if tokens[i] == total and tokens[i + 1] == row["text"]]
        assert hits, f"total {row['total']} is not printed beside {row['text']}"
    # the unit's band wording (here the placeholder) is printed, never an invented action
    assert "Write your unit's agreed action here (local protocol)." in " ".join(text.split())


def test_nomogram_page_has_every_term_and_row_as_text(sheet, ward_pdf):
    pages = [p for p in _pages(ward_pdf) if "Nomogram" in p[4]]  # it may run on to a second page
    flat = " ".join(" ".join(p[4].split()) for p in pages)
    words = [w for p in pages for w in p[2]]
    assert all(p[5] == 0 for p in pages)  # drawn as vector graphics and text, nothing rasterised
    assert "Total points" in flat and "Risk" in flat and "Shading: the risk bands by total points" in flat
    assert "Points (continued)" not in flat and not any(w["text"] == "Points" for w in words)  # no shared ruler
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            continue
        for row in term["rows"]:
            assert row["text"] in flat, (term["name"], row["text"])


def test_page_sizes_follow_the_paper_standards(sheet, ward_pdf):
    w, h = _pages(ward_pdf)[0][:2]
    assert abs(w - 210 * MM) < 0.5 and abs(h - 297 * MM) < 0.5  # ISO 216 A4
    letter = _render(sheet, "ward-letter")
    w, h = _pages(letter)[0][:2]
    assert abs(w - 612) < 0.5 and abs(h - 792) < 0.5  # US Letter, 8.5 x 11 in


def _overlaps(words):
    boxes = sorted((w["x0"], w["top"], w["x1"], w["bottom"], w["text"]) for w in words)
    clashes = []
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            if b[0] >= a[2] - 0.3:
                break
            if min(a[3], b[3]) - max(a[1], b[1]) > 0.5 and min(a[2], b[2]) - max(a[0], b[0]) > 0.3:
                clashes.append((a[4], b[4]))
    return clashes


@pytest.mark.parametrize("layout_name", ["ward-a4", "ward-letter", "pocket-card", "large-print-a4"])
def test_no_overlap_inside_margins_and_no_type_below_the_minimum(sheet, layout_name):
    layout = load_layout(layout_name)
    pdf = _render(sheet, layout_name)
    m = layout.margins
    for number, (width, height, words, chars, _, images) in enumerate(_pages(pdf), start=1):
        assert images == 0
        assert _overlaps(words) == [], f"page {number}: text boxes overlap"
        for ch in chars:
            if not ch["text"].strip():
                continue
            assert ch["x0"] >= m["left"] - 0.5 and ch["x1"] <= width - m["right"] + 0.5, (number, ch["text"], ch["x0"], ch["x1"])
            assert ch["top"] >= m["top"] - 0.5 and ch["bottom"] <= height - m["bottom"] + 0.5, (number, ch["text"], ch["top"])
            assert ch["size"] >= layout.min_pt - 0.01, (number, ch["text"], ch["size"])


@pytest.mark.parametrize("layout_name", ["ward-a4", "ward-letter"])
def test_twelve_terms_fit_the_front_of_one_page_at_nine_point(sheet, layout_name):
    pdf = _render(sheet, layout_name)
    _assert_rows_in_order(sheet, _column_lines(pdf, 0, layout_name, 2))
    width, height, words, chars, text, _ = _pages(pdf)[0]
    assert min(ch["size"] for ch in chars if ch["text"].strip()) >= 9 - 0.01


def test_same_sheet_and_layout_give_identical_bytes(sheet, ward_pdf, tmp_path):
    assert render_pdf(sheet, load_layout("ward-a4"), short_fingerprint(sheet)) == ward_pdf
    path = tmp_path / "s.sheet.json"
    save_sheet(sheet, path)
    runner = CliRunner()
    outs = []
    for name in ("a.pdf", "b.pdf"):
        result = runner.invoke(main, ["render", str(path), "--layout", "pocket-card", "-o", str(tmp_path / name)])
        assert result.exit_code == 0, result.output
        outs.append((tmp_path / name).read_bytes())
    assert outs[0] == outs[1]


def test_markup_characters_print_literally(sheet):
    odd = with_markup_labels(sheet)
    pdf = _render(odd, "ward-a4")
    tables = " ".join(_column_lines(pdf, 0, "ward-a4", 2))
    flat = " ".join(" ".join([tables] + [p[4] for p in _pages(pdf)[1:]]).split())
    assert "Care home & nursing <24h>" in flat
    assert "<home & care>" in flat
    assert "<older-people> team & daily screen" in flat
    assert "&amp;" not in flat and "&lt;" not in flat


def test_pocket_card_overflow_exits_2_naming_what_does_not_fit(tmp_path):
    path = tmp_path / "big.sheet.json"
    save_sheet(many_term_sheet(30), path)
    out = tmp_path / "card.pdf"
    result = CliRunner().invoke(main, ["render", str(path), "--layout", "pocket-card", "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert "pocket-card" in result.output and "do not fit" in result.output
    assert "Laboratory value 18" in result.output
    assert "Traceback" not in result.output
    assert not out.exists()  # nothing half-written


def test_twelve_terms_fit_the_two_sided_pocket_card(sheet):
    pdf = _render(sheet, "pocket-card")
    pages = _pages(pdf)
    assert len(pages) == 2
    front, back = (" ".join(p[4].split()) for p in pages)
    assert "TOTAL POINTS" in front and "Total points \u2192 risk" not in front
    assert "Total points \u2192 risk" in back and "Before you use this sheet" in back


BAD_LAYOUTS = [
    ('name = "x"\n[type]\nmin_pt = "nine"\n', "min_pt"),
    ('name = "x"\n[page]\nsize = "B7"\n', "size"),
    ('name = "x"\n[page]\nmargins_mm = { top = 1 }\n', "margins_mm.top"),
    ('name = "x"\n[type]\nmin_pt = 9\nbody_pt = 8\n', "body_pt"),
    ('name = "x"\n[[section]]\nparts = ["terms", "chart"]\n', "'chart'"),
    ('name = "x"\n[[section]]\nparts = ["terms", "total"]\n', "instructions"),
    ('name = "x"\n[page]\npaper = "A4"\n', "'paper'"),
    ('name = "x"\n[page\n', "not valid TOML"),
]


@pytest.mark.parametrize("text,field", BAD_LAYOUTS)
def test_bad_layout_file_exits_2_naming_the_field(sheet, tmp_path, text, field):
    sheet_path = tmp_path / "s.sheet.json"
    save_sheet(sheet, sheet_path)
    layout_path = tmp_path / "bad.toml"
    layout_path.write_text(text)
    out = tmp_path / "x.pdf"
    result = CliRunner().invoke(main, ["render", str(sheet_path), "--layout", str(layout_path), "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert field in result.output and str(layout_path) in result.output
    assert len(result.output.strip().splitlines()) == 1 and "Traceback" not in result.output
    assert not out.exists()


def test_shipped_layouts_are_found_and_valid():
    names = set(shipped_layouts())
    assert {"ward-a4", "ward-letter", "pocket-card", "large-print-a4"} <= names
    for name in names:
        layout = load_layout(name)
        assert layout.name == name
    assert load_layout("pocket-card").two_sided
    assert load_layout("large-print-a4").min_pt >= 14


def test_render_refuses_to_overwrite_its_input_and_writes_previews(sheet, tmp_path):
    sheet_path = tmp_path / "s.sheet.json"
    save_sheet(sheet, sheet_path)
    runner = CliRunner()
    result = runner.invoke(main, ["render", str(sheet_path), "-o", str(sheet_path)])
    assert result.exit_code == 2
    result = runner.invoke(main, ["render", str(sheet_path), "-o", str(tmp_path / "s.pdf"), "--preview", str(tmp_path / "png")])
    assert result.exit_code == 0, result.output
    pngs = sorted(Path(tmp_path / "png").glob("*.png"))
    pages = len(_pages((tmp_path / "s.pdf").read_bytes()))
    assert [p.name for p in pngs] == [f"s-{i:02d}.png" for i in range(1, pages + 1)]
    assert all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in pngs)


def test_tampered_sheet_is_refused(sheet, tmp_path):
    sheet_path = tmp_path / "s.sheet.json"
    save_sheet(sheet, sheet_path)
    sheet_path.write_text(sheet_path.read_text().replace('"points": 7', '"points": 6'))
    result = CliRunner().invoke(main, ["render", str(sheet_path), "-o", str(tmp_path / "s.pdf")])
    assert result.exit_code == 2 and "fingerprint" in result.output


def test_category_by_flag_grid_and_a_sheet_without_bands(tmp_path):
    from tests.render.sheets import categorical_pair_sheet

    doc = categorical_pair_sheet()
    validate_sheet_dict(doc)
    pdf = _render(doc, "ward-a4")
    lines = _column_lines(pdf, 0, "ward-a4", 2)
    start = next(i for i, line in enumerate(lines) if " with " in line)  # the pair heading (it wraps in a column)
    grid = lines[start:start + 12]
    assert "Care home 0 +2" in grid and "If either is not measured: +1" in grid, grid
    conversion = next(text for text in (" ".join(page[4].split()) for page in _pages(pdf)) if "Total points → risk" in text)
    assert "sets no risk bands" in conversion and "Band" not in conversion.split("Total points → risk")[1][:200]


def test_same_bytes_from_a_separate_process(sheet, ward_pdf, tmp_path):
    import subprocess
    import sys

    path = tmp_path / "s.sheet.json"
    save_sheet(sheet, path)
    out = tmp_path / "p.pdf"
    root = Path(__file__).resolve().parents[2]
    done = subprocess.run([sys.executable, "-m", "scorecard", "render", str(path), "-o", str(out)], cwd=root,
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert out.read_bytes() == ward_pdf


@pytest.mark.parametrize("layout_name", ["ward-a4", "pocket-card"])
def test_the_audit_reader_finds_every_printed_cell_as_the_sheet_says(sheet, tmp_path, layout_name):
    # `scorecard verify` rebuilds every table from the PDF's words and rules (written separately from render)
    sheet_path = tmp_path / "s.sheet.json"
    save_sheet(sheet, sheet_path)
    pdf_path = tmp_path / "s.pdf"
    runner = CliRunner()
    assert runner.invoke(main, ["render", str(sheet_path), "--layout", layout_name, "-o", str(pdf_path)]).exit_code == 0
    result = runner.invoke(main, ["verify", str(pdf_path), "--sheet", str(sheet_path)])
    assert result.exit_code == 0, result.output
    assert "all match" in result.output


def test_layouts_are_found_as_installed_package_data(tmp_path):
    # an installed wheel maps the repo's layouts/ to the package scorecard.layouts (pyproject package-dir);
    # rebuild that shape away from the checkout and check the loader finds the layouts through importlib.resources
    import shutil
    import subprocess
    import sys

    root = Path(__file__).resolve().parents[2]
    site = tmp_path / "site"
    shutil.copytree(root / "scorecard", site / "scorecard", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(root / "layouts", site / "scorecard" / "layouts", ignore=shutil.ignore_patterns("__pycache__"))
    code = ("import scorecard.render.layout as m, pathlib; f = m._shipped_folder(); "
            "print(pathlib.Path(str(f)).resolve()); print(','.join(m.shipped_layouts())); print(m.load_layout('pocket-card').name)")
    done = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, env={"PYTHONPATH": str(site), "PATH": ""},
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    folder, names, card = done.stdout.split("\n")[:3]
    assert Path(folder) == (site / "scorecard" / "layouts").resolve()
    assert {"ward-a4", "ward-letter", "pocket-card", "large-print-a4"} <= set(names.split(","))
    assert card == "pocket-card"


# The demo sheet as `scorecard quantize` wrote it from the demo's true model (`scorecard demo -o d`,
# `scorecard quantize d/true.model.json -o demo.sheet.json`): 12 terms plus a 6 x 6 pair grid. Its numbers were
# put in the canonical form (jsondoc) by load_sheet(check_fingerprint=False) + save_sheet when that form came.
DEMO_SHEET = Path(__file__).parent / "data" / "demo.sheet.json"


@pytest.mark.parametrize("layout_name", ["ward-a4", "ward-letter"])
def test_the_quantized_demo_sheet_fits_the_front_page_at_nine_point_and_reads_back(layout_name, tmp_path):
    from scorecard.sheet import load_sheet

    doc = load_sheet(DEMO_SHEET)
    pdf = _render(doc, layout_name)
    _assert_rows_in_order(doc, _column_lines(pdf, 0, layout_name, 2))
    chars = _pages(pdf)[0][3]
    assert min(ch["size"] for ch in chars if ch["text"].strip()) >= 9 - 0.01
    assert "TOTAL POINTS" in _pages(pdf)[0][4]
    out = tmp_path / "demo.pdf"
    out.write_bytes(pdf)
    result = CliRunner().invoke(main, ["verify", str(out), "--sheet", str(DEMO_SHEET)])
    assert result.exit_code == 0, result.output


@pytest.mark.parametrize("layout_name", ["ward-a4", "ward-letter", "large-print-a4"])
@pytest.mark.parametrize("which", ["twelve", "demo"])
def test_the_cautions_box_shares_its_page_and_no_page_holds_it_alone(sheet, layout_name, which):
    from scorecard.sheet import load_sheet

    doc = sheet if which == "twelve" else load_sheet(DEMO_SHEET)
    pages = _pages(_render(doc, layout_name))
    with_box = [p[4] for p in pages if "Before you use this sheet" in p[4]]
    assert len(with_box) == 1
    # the box sits with the total box or the conversion, never on a page of its own (a nurse skips such a page)
    assert ("TOTAL POINTS" in with_box[0] or "RECORD OF THIS SCORING" in with_box[0] or "Outside the printed ranges" in with_box[0]
            or "Total points \u2192 risk" in with_box[0] or "Risk bands" in with_box[0])


def test_a_term_left_off_prints_its_label_or_its_name_in_words():
    from scorecard.render.tables import dropped_label

    sheet = twelve_term_sheet()
    pair = next(t for t in sheet["terms"] if t["kind"] == "pair")
    feature = pair["features"][1]
    printed = {pair["labels"][1]} | {t["label"] for t in sheet["terms"] if t.get("feature") == feature}
    assert dropped_label(sheet, {"name": feature, "reason": "x"}) in printed
    assert dropped_label(sheet, {"name": "geriatric_review", "reason": "x"}) == "geriatric review"
    assert dropped_label(sheet, {"name": "geriatric_review", "label": "Geriatric review", "reason": "x"}) == "Geriatric review"
    flat = " ".join(" ".join(page[4].split()) for page in _pages(_render(sheet, "ward-a4")))
    assert "Left off this sheet: hearing (" in flat


def _label_boxes_and_leaders(axis):
    """(side level, x0, x1) for every drawn line of every label, and (side, depth, x) for every leader."""
    boxes, leaders = [], []
    for label in axis.labels:
        sign = 1 if label.level > 0 else -1
        for i in range(label.slots):  # the points box and every line of values
            boxes.append((sign * (abs(label.level) + i), label.x - label.width / 2, label.x + label.width / 2, label.text))
        if abs(label.level) > 1:
            leaders.append((sign, abs(label.level), label.tick_x, label.text))
    return boxes, leaders


@pytest.mark.parametrize("which", ["twelve", "demo"])
def test_each_nomogram_line_carries_its_own_points_under_its_ticks(which):
    """No shared ruler: every tick of an item carries a tag with the points of its rows in a box (as the points
    table prints them) next to the line, and the values beyond it."""
    from scorecard.render.nomogram import NomogramBlock
    from scorecard.render.styles import styles_for
    from scorecard.render.text import points_text
    from scorecard.sheet import load_sheet

    doc = {"twelve": twelve_term_sheet, "demo": lambda: load_sheet(DEMO_SHEET)}[which]()
    layout = load_layout("ward-a4")
    signed = sheet_has_negative_points(doc)
    block = NomogramBlock(doc, styles_for(layout), signed)
    block.wrap(layout.page_size[0] - layout.margins["left"] - layout.margins["right"], 1e5)
    for axis in block._term_axes:
        if axis.is_pair:
            continue
        by_points = {}
        for row in axis.term["rows"]:
            by_points.setdefault(row["points"], []).append(row["text"])
        assert sorted(l.points for l in axis.labels) == sorted(points_text(p, signed) for p in by_points)
        for label in axis.labels:
            points = next(p for p, texts in by_points.items() if label.text == " / ".join(texts))
            assert label.points == points_text(points, signed)  # the values and their own points share one tag
            assert label.tick_x == block.x_of(points)
            assert label.x - label.width / 2 <= label.tick_x <= label.x + label.width / 2  # the tag covers its tick
        # a common points scale: ticks are in the order of their points
        xs = [block.x_of(p) for p in sorted(by_points)]
        assert xs == sorted(xs)


@pytest.mark.parametrize("layout_name", ["ward-a4", "large-print-a4"])
@pytest.mark.parametrize("which", ["twelve", "thirty", "demo"])
def test_nomogram_labels_never_cover_each_other_or_a_leader(layout_name, which):
    from scorecard.render.nomogram import NomogramBlock
    from scorecard.render.styles import styles_for
    from scorecard.sheet import load_sheet

    doc = {"twelve": twelve_term_sheet, "thirty": many_term_sheet, "demo": lambda: load_sheet(DEMO_SHEET)}[which]()
    layout = load_layout(layout_name)
    block = NomogramBlock(doc, styles_for(layout), sheet_has_negative_points(doc))
    block.wrap(layout.page_size[0] - layout.margins["left"] - layout.margins["right"], 1e5)
    for axis in block._term_axes:
        if axis.is_pair:
            continue
        boxes, leaders = _label_boxes_and_leaders(axis)
        assert all(b[0] != 0 for b in boxes), axis.heading  # every label found a level
        for i, a in enumerate(boxes):
            for b in boxes[i + 1:]:
                assert a[0] != b[0] or a[2] <= b[1] or b[2] <= a[1], (axis.heading, a[3], b[3])
        for sign, depth, x, text in leaders:  # a leader runs from the axis out to its label's level
            for level, x0, x1, other in boxes:
                if other != text and level * sign > 0 and abs(level) < depth:
                    assert not x0 < x < x1, (axis.heading, text, other)


@pytest.mark.parametrize("field", ["label", "title"])
def test_a_text_too_long_for_the_layout_is_named_with_the_length_that_fits(tmp_path, field):
    # issue 14: a 2,000-character unbreakable text was a LayoutError traceback; now one line, exit 2, naming the
    # field and how long it may be, and no PDF written. The length is checked by rendering it (reportlab).
    from tests.render.sheets import finish
    sheet = twelve_term_sheet()
    if field == "label":
        sheet["terms"][0]["label"] = "X" * 2000
        path = "terms[0].label"
    else:
        sheet["title"] = "Y" * 2000
        path = "title"
    finish(sheet)
    source = tmp_path / "long.sheet.json"
    save_sheet(sheet, source)
    out = tmp_path / "long.pdf"
    result = CliRunner().invoke(main, ["render", str(source), "-o", str(out)])
    assert result.exit_code == 2, result.output
    message = result.output.strip()
    assert "\n" not in message and message.startswith(f"error: {path}: 2,000 characters")
    fits = int(re.search(r"at most ([\d,]+) characters", message).group(1).replace(",", ""))
    assert 40 <= fits < 2000 and not out.exists()
    # the length it names really is the longest that lays out
    if field == "label":
        sheet["terms"][0]["label"] = "X" * fits
    else:
        sheet["title"] = "Y" * fits
    finish(sheet)
    assert render_pdf(sheet, load_layout("ward-a4"), short_fingerprint(sheet))[:5] == b"%PDF-"


def test_a_long_conversion_table_splits_over_large_print_pages():
    # a long conversion split over large-print pages keeps every total, each once in reading order; the demo's
    # own 0-96 table with its range column once made the first part too tall to split ("Splitting error"),
    # which ConversionTable.split now guards by laying each first part out before offering it
    from tests.render.sheets import finish
    sheet = twelve_term_sheet()
    sheet["terms"][0]["rows"][-1]["points"] += 60
    finish(sheet)
    assert len(sheet["conversion"]) > 90
    pdf = render_pdf(sheet, load_layout("large-print-a4"), short_fingerprint(sheet))
    with pdfplumber.open(io.BytesIO(pdf)) as doc:
        text = " ".join((page.extract_text() or "") for page in doc.pages)
    totals = {int(t.replace("\u2212", "-")) for t in re.findall(r"([\u2212-]?\d+) [<>]?[\d.]+%", text)}
    assert {c["total"] for c in sheet["conversion"]} <= totals


LONG_TEXTS = {  # where a careless user can put 2,000 characters without a space, and the field the error names
    "label": (lambda s: s["terms"][0].update(label="X" * 2000), "terms[0].label"),
    "level row": (lambda s: next(r for t in s["terms"] if t["kind"] == "categorical" for r in t["rows"]
                                 if r.get("levels")).update(text="W" * 2000), ".rows[0].text"),
    "title": (lambda s: s.update(title="Y" * 2000), "title"),
}


@pytest.mark.parametrize("layout", sorted(shipped_layouts()))
@pytest.mark.parametrize("case", sorted(LONG_TEXTS))
def test_a_long_unbreakable_text_is_one_line_in_every_shipped_layout(tmp_path, layout, case):
    # issue 14: each layout once ended in reportlab's LayoutError; now exit 2, one line, no PDF. The pocket card
    # has a one-page front: a long title there pushes tables off it, and the line names those (see _check_limits)
    from tests.audit.handmade import sheet_dict
    from tests.render.sheets import finish
    sheet = sheet_dict()
    change, field = LONG_TEXTS[case]
    change(sheet)
    finish(sheet)
    source = tmp_path / "long.sheet.json"
    save_sheet(sheet, source)
    out = tmp_path / "long.pdf"
    result = CliRunner().invoke(main, ["render", str(source), "--layout", layout, "-o", str(out)])
    assert result.exit_code == 2, result.output
    message = result.output.strip()
    assert "\n" not in message and not out.exists(), message
    if layout == "pocket-card" and case == "title":
        assert "do not fit on it" in message
    else:
        assert field in message and "2,000 characters do not fit layout" in message and "at most" in message


ROW_OF_CONVERSION = re.compile(r"(?<!\S)[−-]?\d+ [<>]?\d+(?:\.\d+)?%")


@pytest.mark.parametrize("name", ["ward-a4", "ward-letter", "large-print-a4"])
def test_a_split_conversion_table_is_one_part_a_page_and_never_a_stray_line_or_two(name):
    """Widow and orphan control (common practice in typesetting): a conversion table that runs over pages puts
    one part on each page (a second part under the first, with other columns, was found on the large-print
    demo sheet), and neither the first nor the last part is a sliver of a few totals."""
    from scorecard.render.conversion import MIN_PART_ROWS

    sheet = wide_total_sheet()
    parts = []
    for page in _pages(_render(sheet, name)):
        lines = page[4].splitlines()
        heads = [i for i, line in enumerate(lines) if line.startswith("Total Risk")]
        assert len(heads) <= 1, (name, lines)
        if heads:
            rows = 0
            for line in lines[heads[0] + 1:]:
                found = len(ROW_OF_CONVERSION.findall(line))
                if not found:
                    break
                rows += found
            parts.append(rows)
    assert sum(parts) == len(sheet["conversion"]) and len(parts) >= 2, parts  # the test sheet runs over a page
    assert min(parts) >= MIN_PART_ROWS, parts


@pytest.mark.parametrize("name", ["ward-a4", "large-print-a4"])
def test_each_part_of_a_split_conversion_table_says_where_the_other_totals_are(name):
    """A nurse whose total is past the foot of a part is told where the table goes on, and a part that starts
    mid-table names its totals (continuation lines: common practice in typesetting tables over pages)."""
    sheet = wide_total_sheet()
    parts = []  # (first total, last total, page text) per part
    for page in _pages(_render(sheet, name)):
        text = page[4]
        lines = text.splitlines()
        heads = [i for i, line in enumerate(lines) if line.startswith("Total Risk")]
        if not heads:
            continue
        totals = []
        for line in lines[heads[0] + 1:]:
            found = ROW_OF_CONVERSION.findall(line)
            if not found:
                break
            totals += [int(cell.split()[0].replace("\u2212", "-")) for cell in found]
        parts.append((min(totals), max(totals), " ".join(lines)))
    assert len(parts) >= 2, parts
    for k, (first, last, text) in enumerate(parts):
        continues = f"Totals above {last}: the table goes on in the next column or page."
        continued = f"Total points \u2192 risk, continued: totals {first} to {last}"
        assert (continues in text) == (k < len(parts) - 1), (k, last, text)
        assert (continued in text) == (k > 0), (k, first, last, text)


def test_a_conversion_table_on_one_page_carries_no_continuation_line():
    from tests.audit.handmade import sheet_dict
    from tests.render.sheets import finish
    sheet = sheet_dict()
    finish(sheet)
    text = " ".join(page[4] for page in _pages(_render(sheet, "ward-a4")))
    assert "Total Risk" in text
    assert "the table goes on" not in text and "continued: totals" not in text
