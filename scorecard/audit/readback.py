"""Comparing a printed sheet PDF with its sheet document, cell by cell.

The PDF is read with pdfplumber (`scorecard.audit.pdf_tables`): ruled tables, their rows and cells, as words.
What each table must say comes from the sheet document alone:

- a points table per term: a heading row that reads the term's label (optionally followed by its unit in
  brackets), then one row per printed row: its text, then its points;
- a pair grid: heading, a header row with the second item's rows, one row per row of the first item with a
  points cell per column, then the not-measured row with its points;
- the conversion table: groups of Total | Risk | Range | Band columns, read down then across, every total in
  order (Range when the sheet stores the spread per total; a layout that cannot hold it says it left it off);
- the band table: per band its name, first and last total, and first and last risk;
- the sheet's short fingerprint on every page, and no other fingerprint anywhere;
- "Page x of y" on every page, x its place in the file and y the number of pages in the file.

Tables may run on to the next page (their heading row is repeated): rows are collected in page order.
Points and totals are compared as integers (a printed minus may be U+2212); texts word by word.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from scorecard.audit.pdf_tables import HEX12, PrintedPage, PrintedTable, Row, Word, read_pdf, reading_order
from scorecard.errors import UserError
from scorecard.sheet.approval import approval_line, signature_short
from scorecard.sheet.printed import SPREAD_LEFT_OFF, conversion_bands, pair_missing_text, prints_spread, row_label, spread_text

MINUS_SIGNS = ("\u2212", "-", "\u2013")


@dataclass
class Mismatch:
    page: int | None
    block: str
    row: str
    printed: str
    expected: str

    def line(self) -> str:
        where = f"page {self.page}" if self.page else "document"
        return f"{where}, {self.block}, {self.row}: printed {self.printed!r}, expected {self.expected!r}"


@dataclass
class VerifyResult:
    pages: int
    cells_checked: int
    mismatches: list[Mismatch]

    @property
    def passed(self) -> bool:
        return not self.mismatches


def parse_integer(text: str) -> int | None:
    """A printed whole number ('7', '+2', '−3' with a real minus) or None when it is not one."""
    t = text.strip()
    sign = 1
    if t[:1] in MINUS_SIGNS:
        sign, t = -1, t[1:]
    elif t[:1] == "+":
        t = t[1:]
    return sign * int(t) if t.isdigit() else None


def _norm(text: str) -> str:
    return " ".join(str(text).split())


def _heading_matches(text: str, term: dict) -> bool:
    label = _norm(term["label"])
    text = _norm(text)
    if term["kind"] == "pair":
        return text == label or text.startswith(label + ":")
    unit = term.get("unit") or ""
    if term.get("reading") == "completed":  # a block read in completed units says so in its heading
        unit = f"completed {unit or 'units'}"
    return text == label or (bool(unit) and text == f"{label} ({_norm(unit)})")


def _heading_rows(pages: list[PrintedPage], term: dict) -> list[tuple[PrintedTable, int]]:
    """Every (table, row index) whose row is this term's heading, in page order."""
    found = []
    for page in pages:
        for table in page.tables_in_reading_order():
            for i, row in enumerate(table.rows):
                words = reading_order(row.words)
                if words and words[0].bold and _heading_matches(row.text(), term):
                    found.append((table, i))
    return found


def _split_points(row: Row) -> tuple[str, str]:
    """(text, points) of a table row whose points sit right-aligned in the last column."""
    if not row.words:
        return "", ""
    last = max(row.words, key=lambda w: (w.x1, w.top))
    rest = [w for w in row.words if w is not last]
    return row.text(rest), last.text


class _Checker:
    def __init__(self, sheet: dict, pages: list[PrintedPage]):
        self.sheet = sheet
        self.pages = pages
        self.mismatches: list[Mismatch] = []
        self.cells = 0

    def text(self, page, block, row, printed: str, expected: str) -> None:
        self.cells += 1
        if _norm(printed) != _norm(expected):
            self.mismatches.append(Mismatch(page, block, row, _norm(printed), _norm(expected)))

    def number(self, page, block, row, printed: str, expected: int) -> None:
        self.cells += 1
        if parse_integer(printed) != int(expected):
            self.mismatches.append(Mismatch(page, block, row, _norm(printed), str(int(expected))))

    # -- points tables --------------------------------------------------------------------------------
    def term_rows(self, term: dict) -> list[tuple[int, Row]]:
        rows = []
        for table, at in _heading_rows(self.pages, term):
            rows += [(table.page, r) for r in table.rows[at + 1:]]
        return rows

    def single_term(self, term: dict) -> None:
        block = f"table {term['label']!r}"
        printed = self.term_rows(term)
        if not printed:
            self.mismatches.append(Mismatch(None, block, "heading", "(no table with this heading)", term["label"]))
            return
        for k, expected in enumerate(term["rows"]):
            name = f"row {k + 1}"
            if k >= len(printed):
                self.mismatches.append(Mismatch(printed[-1][0], block, name, "(missing)", f"{expected['text']} {expected['points']}"))
                continue
            page, row = printed[k]
            text, points = _split_points(row)
            self.text(page, block, f"{name} text", text, row_label(term, expected))
            self.number(page, block, f"{name} ({_norm(expected['text'])}) points", points, expected["points"])
        for page, row in printed[len(term["rows"]):]:
            self.mismatches.append(Mismatch(page, block, "extra row", row.text(), "(no such row on the sheet)"))

    def pair_term(self, term: dict) -> None:
        block = f"grid {term['label']!r}"
        printed = self.term_rows(term)
        if not printed:
            self.mismatches.append(Mismatch(None, block, "heading", "(no table with this heading)", term["label"]))
            return
        axis0, axis1 = term["axes"]
        # rows without inner rules before the grid are its header; the grid rows are cut into cells by rules;
        # the first row after the grid is the not-measured row
        first_grid = next((k for k, (_, r) in enumerate(printed) if r.cuts), len(printed))
        grid_end = next((k for k in range(first_grid, len(printed)) if not printed[k][1].cuts), len(printed))
        header, grid, tail = printed[:first_grid], printed[first_grid:grid_end], printed[grid_end:]
        page = printed[0][0]
        cuts = grid[0][1].cuts if grid else []
        columns = self._column_headings(header, cuts)
        for j, r in enumerate(axis1["rows"]):
            self.text(page, block, f"column {j + 1}", columns[j] if j < len(columns) else "(missing)", r["text"])
        for i, r in enumerate(axis0["rows"]):
            name = f"row {i + 1}"
            if i >= len(grid):
                self.mismatches.append(Mismatch(page, block, name, "(missing)", r["text"]))
                continue
            page, row = grid[i]
            cells = row.cells()
            self.text(page, block, f"{name} text", " ".join(w.text for w in cells[0]), r["text"])
            values = [" ".join(w.text for w in c) for c in cells[1:]]
            for j, p in enumerate(term["points"][i]):
                self.number(page, block, f"{name} ({_norm(r['text'])}) x column {j + 1} ({_norm(axis1['rows'][j]['text'])})",
                            values[j] if j < len(values) else "(missing)", p)
            if len(values) > len(term["points"][i]):
                self.mismatches.append(Mismatch(page, block, f"{name} extra cells", " | ".join(values[len(term['points'][i]):]), "(none)"))
        for page, row in grid[len(axis0["rows"]):]:
            self.mismatches.append(Mismatch(page, block, "extra grid row", row.text(), "(no such row on the sheet)"))
        words, points_expected = pair_missing_text(term)
        if tail:
            page, row = tail[0]
            if points_expected is None:
                self.text(page, block, "not measured line", row.text(), words)
            else:
                text, points = _split_points(row)
                self.text(page, block, "not measured line", text, words)
                self.number(page, block, "not measured points", points, points_expected)
        else:
            self.mismatches.append(Mismatch(page, block, "not measured row", "(missing)", words))
        for page, row in tail[1:]:
            self.mismatches.append(Mismatch(page, block, "extra row", row.text(), "(no such row on the sheet)"))

    @staticmethod
    def _column_headings(header: list[tuple[int, Row]], cuts: list[float]) -> list[str]:
        """Text of each grid column's heading: the lowest line of header words above that column."""
        words = [w for _, row in header for w in row.words]
        if not words or not cuts:
            return []
        edges = sorted(cuts)
        out = []
        for j in range(len(edges)):
            lo, hi = edges[j], edges[j + 1] if j + 1 < len(edges) else float("inf")
            inside = [w for w in words if lo < (w.x0 + w.x1) / 2 < hi]
            if not inside:
                out.append("(missing)")
                continue
            bottom = max(w.middle for w in inside)
            line = [w for w in inside if abs(w.middle - bottom) <= 0.5 * (w.bottom - w.top)]
            out.append(" ".join(w.text for w in sorted(line, key=lambda w: w.x0)))
        return out

    # -- conversion and bands -------------------------------------------------------------------------
    def conversion(self) -> None:
        block = "conversion table"
        bands = self.sheet.get("bands") or []
        entries: list[tuple[int, list[Word]]] = []
        with_range: set[bool] = set()
        for page in self.pages:
            for table in page.tables_in_reading_order():
                for i, row in enumerate(table.rows):
                    heads = [" ".join(w.text for w in c) for c in row.cells()]
                    if _is_conversion_header(row):
                        with_range |= {"Range" in h.split() for h in heads}
                        body = [r.cells() for r in table.rows[i + 1:]]
                        for g in range(len(heads)):  # read down, then across
                            entries += [(page.number, cells[g]) for cells in body if g < len(cells) and cells[g]]
                        break
        if not entries:
            self.mismatches.append(Mismatch(None, block, "table", "(no conversion table found)", "Total | Risk table"))
            return
        spread, read_range = prints_spread(self.sheet), True in with_range
        if with_range != {spread} and not (spread and with_range == {False} and self._says_range_left_off()):
            self.mismatches.append(Mismatch(None, block, "Range column", "printed" if read_range else "(missing)",
                                            "printed" if spread else "(none: the sheet stores no spread)"))
        members = conversion_bands(self.sheet)
        for k, row in enumerate(self.sheet["conversion"]):
            expected_band = bands[members[k]]["name"] if bands else None
            name = f"total {row['total']}"
            if k >= len(entries):
                self.mismatches.append(Mismatch(entries[-1][0], block, name, "(missing)", f"{row['total']} {row['text']}"))
                continue
            page, words = entries[k]
            texts = [w.text for w in words]
            self.number(page, block, f"entry {k + 1} total", texts[0], row["total"])
            self.text(page, block, f"{name} risk", texts[1] if len(texts) > 1 else "(missing)", row["text"])
            if read_range:
                self.text(page, block, f"{name} range", texts[2] if len(texts) > 2 else "(missing)", spread_text(row))
            if expected_band is not None:
                self.text(page, block, f"{name} band", " ".join(texts[3 if read_range else 2:]), expected_band)
        for page, words in entries[len(self.sheet["conversion"]):]:
            self.mismatches.append(Mismatch(page, block, "extra entry", " ".join(w.text for w in words), "(no such total)"))

    def _says_range_left_off(self) -> bool:
        """Whether a page says the range column was left off to fit (SPREAD_LEFT_OFF)."""
        wanted = " ".join(SPREAD_LEFT_OFF.split())
        return any(wanted in " ".join(" ".join(page.passages()).split()) for page in self.pages)

    def band_table(self) -> None:
        bands = self.sheet.get("bands") or []
        if not bands:
            return
        block = "band table"
        members = conversion_bands(self.sheet)
        for page in self.pages:
            for table in page.tables:
                for i, row in enumerate(table.rows):
                    words = reading_order(row.words)
                    if [w.text for w in words[:3]] != ["Band", "Totals", "Risk"]:
                        continue
                    starts = [words[1].x0 - 1, words[2].x0 - 1, words[3].x0 - 1 if len(words) > 3 else table.x1]
                    body = table.rows[i + 1:]
                    for b, band in enumerate(bands):
                        if b >= len(body):
                            self.mismatches.append(Mismatch(page.number, block, f"band {band['name']!r}", "(missing)", band["name"]))
                            continue
                        cols = [[], [], [], []]
                        for w in body[b].words:
                            cols[sum(1 for s in starts if w.x0 >= s)].append(w)
                        name, totals, risks = (" ".join(w.text for w in reading_order(c)) for c in cols[:3])
                        inside = [c for c, m in zip(self.sheet["conversion"], members) if m == b]
                        self.text(page.number, block, f"band {b + 1} name", name, band["name"])
                        want_totals = sorted({inside[0]["total"], inside[-1]["total"]}) if inside else []
                        got_totals = [parse_integer(t) for t in totals.split() if parse_integer(t) is not None]
                        self.cells += 1
                        if got_totals != want_totals:
                            self.mismatches.append(Mismatch(page.number, block, f"band {band['name']!r} totals", totals, " to ".join(map(str, want_totals)) or "(none)"))
                        want_risks = [inside[0]["text"]] + ([inside[-1]["text"]] if len(inside) > 1 else []) if inside else []
                        got_risks = [t for t in risks.split() if "%" in t]
                        self.cells += 1
                        if got_risks != want_risks:
                            self.mismatches.append(Mismatch(page.number, block, f"band {band['name']!r} risks", risks, " to ".join(want_risks) or "(none)"))
                    return
        self.mismatches.append(Mismatch(None, block, "table", "(no band table found)", "Band | Totals | Risk table"))

    # -- text printed around the tables -------------------------------------------------------------------
    def running_text(self) -> None:
        """Title, outcome, horizon, population and every caution on every page; the rounding rule and each
        training range somewhere in the document (these carry numbers too: '5 days', '69.5', '60–100')."""
        outcome = self.sheet["outcome"]
        per_page = [("title", self.sheet["title"]), ("outcome", outcome["event"]), ("horizon", outcome["horizon"]),
                    ("population", outcome["population"])]
        per_page += [(f"caution {k + 1}", c) for k, c in enumerate(self.sheet.get("cautions") or [])]
        if self.sheet.get("approval"):
            per_page.append(("approval", approval_line(self.sheet["approval"])))
        passages = {page.number: [_norm(t) for t in page.passages()] for page in self.pages}
        for page in self.pages:
            for name, text in per_page:
                self.cells += 1
                if not any(_norm(text) in t for t in passages[page.number]):
                    self.mismatches.append(Mismatch(page.number, "page text", name, "(not found)", text))
        model = self.sheet["model"]
        for page in self.pages:
            self.cells += 1
            if not any(_norm(model["name"]) in t and f"version {_norm(model['version'])}" in t for t in passages[page.number]):
                self.mismatches.append(Mismatch(page.number, "page text", "model", "(not found)", f"{model['name']} version {model['version']}"))
        # every printed copy of the rounding rule must be the whole rule (it carries the worked example)
        rule = _norm(self.sheet["rounding_rule"])
        opening = " ".join(rule.split()[:4])
        for page in self.pages:
            for t in passages[page.number]:
                if opening in t:
                    self.cells += 1
                    if rule not in t:
                        start = t.index(opening)
                        self.mismatches.append(Mismatch(page.number, "text", "rounding rule", t[start:start + len(rule)], rule))
        everywhere = [t for ts in passages.values() for t in ts]
        once = [("rounding rule", self.sheet["rounding_rule"])]
        for term in self.sheet["terms"]:
            rng = term.get("training_range") if term["kind"] == "continuous" else None
            if rng:
                d = int(term["decimals"])
                once.append((f"training range of {term['label']!r}", f"{term['label']} {_fixed(rng['min'], d)}\u2013{_fixed(rng['max'], d)}"))
        for name, text in once:
            self.cells += 1
            if not any(_norm(text) in t for t in everywhere):
                self.mismatches.append(Mismatch(None, "text", name, "(not found)", text))

    # -- fingerprint ----------------------------------------------------------------------------------
    def fingerprints(self, short: str, allowed: set[str] = frozenset()) -> None:
        """`allowed`: other 12-hex names the sheet prints (a recalibrated sheet's origin, an approval's signature)."""
        for page in self.pages:
            found = set(HEX12.findall(page.text))
            self.cells += 1
            others = sorted(found - {short} - set(allowed))
            if others:
                self.mismatches.append(Mismatch(page.number, "fingerprint", "another sheet version", ", ".join(others), short))
            elif short not in found:
                self.mismatches.append(Mismatch(page.number, "fingerprint", "page", "(none)", short))


    # -- page numbers -------------------------------------------------------------------------------------
    def page_numbers(self) -> None:
        """Each page says 'Page x of y' once, with x its place in the file and y the file's page count: a page
        appended, dropped or moved shows here even without the fresh render."""
        count = len(self.pages)
        for page in self.pages:
            said = PAGE_X_OF_Y.findall(page.text)
            self.cells += 1
            expected = f"Page {page.number} of {count}"
            if [f"Page {x} of {y}" for x, y in said] != [expected]:
                self.mismatches.append(Mismatch(page.number, "page number", "Page x of y", ", ".join(f"Page {x} of {y}" for x, y in said) or "(none)", expected))


PAGE_X_OF_Y = re.compile(r"\bPage (\d+) of (\d+)\b")


def _fixed(value: float, decimals: int) -> str:
    """A number at `decimals` places, rounded half up in decimal arithmetic (as the sheet prints it)."""
    from decimal import ROUND_HALF_UP, Decimal

    return str(Decimal(repr(float(value))).quantize(Decimal(1).scaleb(-decimals), rounding=ROUND_HALF_UP))


def _is_conversion_header(row: Row) -> bool:
    heads = [" ".join(w.text for w in c) for c in row.cells()]
    return bool(heads) and all(h in ("Total Risk Band", "Total Risk", "Total Risk Range Band", "Total Risk Range") for h in heads)



def verify_pages(sheet: dict, pages: list[PrintedPage], source: str = "PDF") -> VerifyResult:
    from scorecard.sheet import short_fingerprint

    short = short_fingerprint(sheet)
    any_heading = any(_heading_rows(pages, t) for t in sheet["terms"])
    any_conversion = any(_is_conversion_header(row) for p in pages for t in p.tables for row in t.rows)
    if not any_heading and not any_conversion:
        raise UserError(f"{source}: does not look like a printed points sheet (no points table and no conversion table found); "
                        "give the PDF written by `scorecard render`")
    check = _Checker(sheet, pages)
    lineage = sheet.get("recalibration")
    # the 12-hex names a page may print besides the sheet's own: its origin if recalibrated, its signature if approved
    allowed = {lineage["original_fingerprint"][:12] if lineage else None,
               signature_short(sheet["approval"]) if sheet.get("approval") else None} - {None}
    check.fingerprints(short, allowed)
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            check.pair_term(term)
        else:
            check.single_term(term)
    check.conversion()
    check.band_table()
    check.running_text()
    check.page_numbers()
    return VerifyResult(len(pages), check.cells, check.mismatches)


def verify_pdf(sheet: dict, pdf_path) -> VerifyResult:
    """Read the PDF back and compare every table, grid, conversion entry and fingerprint with the sheet."""
    return verify_pages(sheet, read_pdf(pdf_path), source=str(pdf_path))
