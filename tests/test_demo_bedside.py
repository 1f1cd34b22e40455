"""The demo as a ward would meet it: every page it writes says the data is invented, and only its outputs do.

One demo run (module fixture) feeds the checks; each page of each PDF is read back with pdfplumber, a library
outside the project, and every PNG preview is checked for the solid black band the mark is printed on.
"""

from pathlib import Path

import numpy as np
import pdfplumber
import pytest
from click.testing import CliRunner
from PIL import Image

from scorecard.cli import main
from scorecard.invented import MARK
from scorecard.sheet import load_sheet


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("bedside") / "demo"
    result = CliRunner().invoke(main, ["demo", "-o", str(out), "--rows", "10000"])
    assert result.exit_code == 0, result.output
    return out, result.output


def _page_texts(pdf: Path) -> list[str]:
    with pdfplumber.open(pdf) as document:
        return [page.extract_text() or "" for page in document.pages]


@pytest.mark.parametrize("name", ["sheet.pdf", "review.pdf", "check-report.pdf"])
def test_every_page_of_every_demo_pdf_carries_the_mark(demo, name):
    out, _ = demo
    texts = _page_texts(out / name)
    assert texts
    unmarked = [i + 1 for i, text in enumerate(texts) if text.count(MARK) < 2]  # top band and foot band
    assert not unmarked, f"{name}: pages without the invented-data mark at top and foot: {unmarked}"


@pytest.mark.parametrize("folder", ["sheet-previews", "review-previews"])
def test_every_preview_shows_the_black_band(demo, folder):
    out, _ = demo
    pngs = sorted((out / folder).glob("*.png"))
    assert pngs
    for png in pngs:
        grey = np.asarray(Image.open(png).convert("L"), dtype=float)
        top = grey[: grey.shape[0] // 12]
        # a band: some row of the top twelfth is mostly black (white letters take less than half of it)
        assert (top < 60).mean(axis=1).max() > 0.5, f"{png.name}: no black band at the top"


def test_the_demo_says_so_last_and_its_documents_record_it(demo):
    out, output = demo
    assert MARK in output.strip().splitlines()[-1]
    assert load_sheet(out / "sheet.json")["invented_data"] is True
    for name in ("true.model.json", "fitted.model.json", "edited.model.json"):
        assert '"invented_data": true' in (out / name).read_text()


def test_a_model_not_marked_invented_prints_no_mark(tmp_path, demo):
    """Only invented-data outputs carry the mark: the same sheet without the flag prints none."""
    out, _ = demo
    from scorecard.jsondoc import read_json_file
    from scorecard.sheet import save_sheet

    doc = read_json_file(out / "sheet.json", "sheet")
    del doc["invented_data"]
    save_sheet(doc, tmp_path / "real.sheet.json")
    result = CliRunner().invoke(main, ["render", str(tmp_path / "real.sheet.json"), "-o", str(tmp_path / "real.pdf")])
    assert result.exit_code == 0, result.output
    assert not any("INVENTED" in text for text in _page_texts(tmp_path / "real.pdf"))


def test_the_ward_sheet_records_the_scoring_and_says_when_to_score(demo, tmp_path):
    out, _ = demo
    sheet = load_sheet(out / "sheet.json")
    assert sheet["outcome"]["score_at"].startswith("once the operation is scheduled, before surgery")
    for layout in ("ward-a4", "ward-letter"):
        pdf = tmp_path / f"{layout}.pdf"
        result = CliRunner().invoke(main, ["render", str(out / "sheet.json"), "--layout", layout, "-o", str(pdf)])
        assert result.exit_code == 0, result.output
        pages = [" ".join(t.split()) for t in _page_texts(pdf)]
        # a sheet printing every one of its items on the 0-100 default fills the front with its points tables
        # and total box, and the record follows on page 2 (docs/quantization.md, defaults)
        first = next((t for t in pages[:2] if "RECORD OF THIS SCORING" in t), pages[0])
        for field in ("RECORD OF THIS SCORING", "Patient identifier", "Date and time scored", "Scored by",
                      "Total points", "Band (ring one) low / moderate / high", "Action taken"):
            assert field in first, (layout, field)
        assert "Score: once the operation is scheduled" in pages[0]
        if layout == "ward-letter":
            assert "Age (completed years)" in pages[0]


def test_levels_in_clinical_order_other_explained_and_left_off_terms_with_their_own_reason(demo):
    out, _ = demo
    sheet = load_sheet(out / "sheet.json")
    terms = {t["name"]: t for t in sheet["terms"]}
    assert [r["levels"] for r in terms["residence"]["rows"] if "levels" in r] == [["own_home"], ["with_family"], ["care_home"]]
    assert [r["levels"] for r in terms["anaesthesia"]["rows"] if "levels" in r] == [["spinal"], ["general"]]
    text = " ".join(" ".join(_page_texts(out / "sheet.pdf")).split())
    assert "Other (any not listed above)" in text and "a category its table does not list" in text
    review = next(d for d in sheet["dropped_terms"] if d["name"] == "geriatric_review")
    assert "care-process marker" in review["printed"]
    assert "hours" not in review["reason"].lower() and "medicines" not in review["reason"].lower()
    # a measured feature printed as one row says why (the cell may wrap around its points; verify, run by the
    # demo, compares the cell word for word)
    for term in sheet["terms"]:
        if term["kind"] == "continuous" and sum(not r.get("missing") for r in term["rows"]) == 1:
            assert all(word in text for word in term["single_row_note"].split())


def test_a_left_off_pair_is_named_in_words_as_the_combined_effect_of_its_two_features():
    from types import SimpleNamespace

    from scorecard.quantize.quantizer import _term_label

    pair = SimpleNamespace(features=[SimpleNamespace(label="Age"), SimpleNamespace(label="Cognitive screen")])
    assert _term_label(pair) == "Age with cognitive screen, their combined effect beyond each alone"


def test_large_print_keeps_the_total_box_and_the_conversion_table_together(demo, tmp_path):
    out, _ = demo
    pdf = tmp_path / "large.pdf"
    result = CliRunner().invoke(main, ["render", str(out / "sheet.json"), "--layout", "large-print-a4", "-o", str(pdf)])
    assert result.exit_code == 0, result.output
    texts = _page_texts(pdf)
    box = [i + 1 for i, t in enumerate(texts) if "TOTAL POINTS (" in t]
    table = [i + 1 for i, t in enumerate(texts) if "Total points \u2192 risk" in t]
    assert len(box) == 1 and table
    # the same page, or facing pages of a bound copy (an even left page and the odd right page after it)
    assert table[0] == box[0] or (box[0] % 2 == 0 and table[0] == box[0] + 1)
    assert min(t for t in texts if "Nomogram" in t)  # the nomogram still follows


@pytest.mark.parametrize("name", ["sheet.pdf", "review.pdf", "check-report.pdf"])
def test_a_pair_is_named_in_words_on_every_demo_pdf_and_in_the_messages(demo, name):
    # issue 13: a pair reads "Age with cognitive screen score (0–10)", never its JSON name "age x cognition"
    from scorecard.model import load_model
    from scorecard.sheet.printed import term_label

    out, output = demo
    text = " ".join(" ".join(_page_texts(out / name)).split())
    model = load_model(out / "declared.model.json")
    sheet = load_sheet(out / "sheet.json")
    printed = {t["name"] for t in sheet["terms"]} | {d["name"] for d in sheet["dropped_terms"]}
    for term in (t for t in model.terms if t.kind == "pair"):
        assert term.name not in text and term.name not in output
        if name == "review.pdf" or term.name in printed:
            # a wrapped grid heading or nomogram label interleaves with the column beside it in pdfplumber's
            # text order, so look for the name's words in order with a few others between
            assert _words_in_order(term_label(model, term).split(), text.split(), max_gap=8)
    assert " x cognition" not in text and "Age × " not in text


def _words_in_order(wanted: list[str], words: list[str], max_gap: int) -> bool:
    """`wanted` occurs in `words` in order, each next word at most `max_gap` words after the previous one."""
    words = [w.rstrip(":,.;") for w in words]  # a heading may end "(0–10): both together"
    for start in (i for i, w in enumerate(words) if w == wanted[0]):
        at, ok = start, True
        for word in wanted[1:]:
            ahead = [k for k in range(at + 1, min(at + 2 + max_gap, len(words))) if words[k] == word]
            if not ahead:
                ok = False
                break
            at = ahead[0]
        if ok:
            return True
    return False


@pytest.mark.parametrize("layout", ["ward-a4", "ward-letter", "large-print-a4"])
def test_the_conversion_runs_over_pages_one_part_a_page_and_how_to_score_fills_the_tables_last_page(demo, tmp_path, layout):
    """Widow and orphan control (common practice in typesetting) on the demo sheet's long conversion table: one
    part on each page, none of them a few stray totals; and on the ward sheets how to score follows the record on
    the page the tables end on (alone on a page of its own it left that page and the one before half empty), with
    the rules for values outside the printed ranges."""
    import re

    from scorecard.render.conversion import MIN_PART_ROWS

    out, _ = demo
    pdf = tmp_path / f"{layout}.pdf"
    result = CliRunner().invoke(main, ["render", str(out / "sheet.json"), "--layout", layout, "-o", str(pdf)])
    assert result.exit_code == 0, result.output
    row = re.compile(r"(?<!\S)\d+ [<>]?\d+(?:\.\d+)?%")
    parts = []
    for text in _page_texts(pdf):
        lines = text.splitlines()
        heads = [i for i, line in enumerate(lines) if line.startswith("Total Risk")]
        assert len(heads) <= 1, (layout, lines)
        if heads:
            rows = 0
            for line in lines[heads[0] + 1:]:
                if not row.findall(line):
                    break
                rows += len(row.findall(line))
            parts.append(rows)
    conversion = load_sheet(out / "sheet.json")["conversion"]
    assert sum(parts) == len(conversion), parts
    assert len(parts) == 1 or min(parts) >= MIN_PART_ROWS, parts
    if layout.startswith("ward"):
        pages = [" ".join(t.split()) for t in _page_texts(pdf)]
        record = [i for i, t in enumerate(pages) if "RECORD OF THIS SCORING" in t]
        how = [i for i, t in enumerate(pages) if "How to score" in t]
        assert record == how, (record, how)
        # what to do with a value outside the printed ranges, not measured or another category is a scoring
        # rule: it stands with how to score (it was two pages away, after the band table)
        edges = [i for i, t in enumerate(pages) if "Outside the printed ranges" in t]
        assert edges == how, (edges, how)
