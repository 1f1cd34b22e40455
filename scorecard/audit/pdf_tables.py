"""Reading ruled tables back from a PDF page with pdfplumber (a general-purpose extractor): words and rules only.

A printed table is found from its horizontal rules: rules sharing the same left and right ends, stacked one
under another, cut the table into *rows* (the bands between two rules); a band without any word is the gap
between two tables. Vertical rules strictly inside a table cut a row into *cells*. Nothing here knows what a
points sheet is; `scorecard.audit.readback` gives the tables their meaning.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

from scorecard.errors import UserError

_SAME_X = 1.0  # points: rules whose ends agree this closely belong to the same table
_SAME_Y = 0.8
HEX12 = re.compile(r"(?<![0-9a-f])[0-9a-f]{12}(?![0-9a-f])")


@dataclass
class Word:
    text: str
    x0: float
    x1: float
    top: float
    bottom: float
    bold: bool

    @property
    def middle(self) -> float:
        return (self.top + self.bottom) / 2


@dataclass
class Row:
    top: float
    bottom: float
    words: list[Word]
    cuts: list[float] = field(default_factory=list)  # x of inner vertical rules crossing this row

    def text(self, words: list[Word] | None = None) -> str:
        return " ".join(w.text for w in reading_order(self.words if words is None else words))

    def cells(self) -> list[list[Word]]:
        """Words per cell, left to right, split at the inner vertical rules."""
        edges = sorted(self.cuts)
        out: list[list[Word]] = [[] for _ in range(len(edges) + 1)]
        for w in self.words:
            k = sum(1 for x in edges if (w.x0 + w.x1) / 2 > x)
            out[k].append(w)
        return [reading_order(c) for c in out]


@dataclass
class PrintedTable:
    page: int  # 1-based
    x0: float
    x1: float
    rows: list[Row]

    @property
    def top(self) -> float:
        return self.rows[0].top


@dataclass
class PrintedPage:
    number: int
    text: str
    words: list[Word]
    tables: list[PrintedTable]

    def passages(self) -> list[str]:
        """The page's running text, one string per column of text (see `text_passages`)."""
        return text_passages(self.words)

    def tables_in_reading_order(self) -> list[PrintedTable]:
        """The tables as a reader meets them: down each column of the page, then the next column to the right.
        Tables that overlap horizontally share a column (a full-width table joins every column into one);
        ordering by height alone read a table continued at the top of the right column before the part it
        continues, lower in the left one."""
        columns: list[list[PrintedTable]] = []
        for table in sorted(self.tables, key=lambda t: t.x0):
            if columns and table.x0 < max(t.x1 for t in columns[-1]) - 1.0:
                columns[-1].append(table)
            else:
                columns.append([table])
        return [t for column in columns for t in sorted(column, key=lambda t: t.top)]


def _lines(words: list[Word]) -> list[list[Word]]:
    """Words grouped into lines, top to bottom: a word joins a line when its middle is within half a word
    height of the line's first word (words within a line keep their left-to-right sort only as a tie-break)."""
    lines: list[list[Word]] = []
    for w in sorted(words, key=lambda w: (w.middle, w.x0)):
        if lines and abs(w.middle - lines[-1][0].middle) <= 0.5 * max(w.bottom - w.top, 1.0):
            lines[-1].append(w)
        else:
            lines.append([w])
    return lines


def text_passages(words: list[Word]) -> list[str]:
    """Running text as it flows: a line is cut where the gap between two words is wider than a column gutter,
    and a piece continues on the next line when that line has a piece starting at the same left edge.
    Two columns of text therefore read as two passages instead of interleaved lines."""
    lines = _lines(words)
    pieces: list[list[Word]] = []
    for line in lines:
        line.sort(key=lambda w: w.x0)
        piece = [line[0]]
        for prev, w in zip(line, line[1:]):
            if w.x0 - prev.x1 > 1.2 * max(w.bottom - w.top, 1.0):
                pieces.append(piece)
                piece = [w]
            else:
                piece.append(w)
        pieces.append(piece)
    chains: list[list[list[Word]]] = []
    for piece in sorted(pieces, key=lambda p: (p[0].top, p[0].x0)):
        height = max(w.bottom - w.top for w in piece)
        home = next((c for c in reversed(chains)
                     if abs(c[-1][0].x0 - piece[0].x0) <= 3 and 0 < piece[0].top - c[-1][0].top <= 2.2 * height), None)
        if home is None:
            chains.append([piece])
        else:
            home.append(piece)
    return [" ".join(w.text for p in chain for w in p) for chain in chains]


def reading_order(words: list[Word]) -> list[Word]:
    """Top to bottom by line (words whose middles are within half a line share a line), then left to right."""
    return [w for line in _lines(words) for w in sorted(line, key=lambda w: w.x0)]


def _tables(page_number: int, words: list[Word], edges: list[dict]) -> list[PrintedTable]:
    rules = [e for e in edges if e.get("object_type") == "line"]
    horizontal = [e for e in rules if e["orientation"] == "h" and e["x1"] - e["x0"] > 20]
    vertical = [e for e in rules if e["orientation"] == "v"]
    groups: dict[tuple[int, int], list[float]] = {}
    for e in horizontal:
        key = next((k for k in groups if abs(k[0] - e["x0"]) <= _SAME_X and abs(k[1] - e["x1"]) <= _SAME_X), None)
        groups.setdefault(key or (round(e["x0"]), round(e["x1"])), []).append(e["top"])
    tables = []
    for (gx0, gx1), ys in groups.items():
        members = [e for e in horizontal if abs(e["x0"] - gx0) <= _SAME_X + 0.5 and abs(e["x1"] - gx1) <= _SAME_X + 0.5]
        x0, x1 = min(e["x0"] for e in members), max(e["x1"] for e in members)
        ys = sorted(ys)
        levels = [ys[0]]
        for y in ys[1:]:
            if y - levels[-1] > _SAME_Y:
                levels.append(y)
        inside = [w for w in words if w.x0 >= x0 - 1 and w.x1 <= x1 + 1]
        current: list[Row] = []
        for top, bottom in zip(levels[:-1], levels[1:]):
            row_words = [w for w in inside if top < w.middle < bottom]
            # a band crossed by another table's rule is the space between tables, not a row of this one; a rule
            # that starts at an inner column and stays inside is this table's own partial rule (a grid's)
            crossed = any(top + _SAME_Y < e["top"] < bottom - _SAME_Y and min(e["x1"], x1) > max(e["x0"], x0)
                          and not (e["x0"] > x0 + _SAME_X and e["x1"] <= x1 + _SAME_X)
                          for e in horizontal)
            if not row_words or crossed:
                if current:
                    tables.append(PrintedTable(page_number, x0, x1, current))
                current = []
                continue
            cuts = sorted({round(e["x0"], 1) for e in vertical
                           if x0 + 1.5 < e["x0"] < x1 - 1.5 and e["top"] <= top + 1 and e["bottom"] >= bottom - 1})
            current.append(Row(top, bottom, row_words, cuts))
        if current:
            tables.append(PrintedTable(page_number, x0, x1, current))
    return sorted(tables, key=lambda t: (t.x0, t.top))


def read_pdf(path: str | Path) -> list[PrintedPage]:
    """Every page's words (with bold marked) and ruled tables. Not a readable PDF -> one UserError line."""
    return read_pdf_bytes(read_pdf_file(path), str(path))


def read_pdf_file(path: str | Path) -> bytes:
    """The bytes of a file that must be a PDF, or one UserError line naming it."""
    p = Path(path)
    if not p.exists():
        raise UserError(f"{p}: no such file; check the path of the printed sheet PDF")
    if p.is_dir():
        raise UserError(f"{p}: is a folder, expected a PDF file")
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise UserError(f"{p}: cannot read ({exc.strerror}); check permissions") from None
    if not data[:1024].lstrip().startswith(b"%PDF"):
        raise UserError(f"{p}: is not a PDF file; give the PDF written by `scorecard render`")
    return data


def read_pdf_bytes(data: bytes, source: str = "PDF") -> list[PrintedPage]:
    """`read_pdf` of PDF bytes already in memory; `source` names them in errors."""
    import io

    import pdfplumber
    from pdfminer.pdfparser import PDFSyntaxError

    pages = []
    try:
        with pdfplumber.open(io.BytesIO(data)) as doc:
            for number, page in enumerate(doc.pages, start=1):
                raw = page.extract_words(keep_blank_chars=False, use_text_flow=False, extra_attrs=["fontname"])
                words = [Word(w["text"], w["x0"], w["x1"], w["top"], w["bottom"], "bold" in w["fontname"].lower()) for w in raw]
                pages.append(PrintedPage(number, " ".join(w.text for w in words), words, _tables(number, words, page.edges)))
    except (PDFSyntaxError, ValueError, KeyError, TypeError) as exc:
        raise UserError(f"{source}: cannot be read as a PDF ({type(exc).__name__}); give the PDF written by `scorecard render`") from None
    except Exception as exc:  # pdfminer raises many private error types for damaged files
        if type(exc).__module__.startswith(("pdfminer", "pdfplumber")):
            raise UserError(f"{source}: cannot be read as a PDF ({type(exc).__name__}); give the PDF written by `scorecard render`") from None
        raise
    if not pages:
        raise UserError(f"{source}: the PDF has no pages")
    return pages
