"""Comparing a printed sheet PDF with a fresh render of its sheet document: bytes, pages, pixels, text layer,
annotations, metadata and embedded fonts.

The renderer gives the same bytes for the same sheet and layout, so a PDF whose bytes equal a fresh render is
the sheet as printed by this version of scorecard. Any other PDF must look the same page by page: every page of
both is rasterised (pypdfium2) and compared pixel for pixel, and every differing region is reported with the
table and row of the fresh render it lies in. The text layer (what a reader or a search extracts) must equal the
fresh render's word for word, so invisible, white, clipped or tiny text shows up even where no pixel changed.
The PDF may carry no annotations or form fields (stamps and free-text notes print over the sheet), its pages
must be those of the fresh render in the same order, its metadata the same, and its embedded fonts the same
programs with the same character maps (an altered map makes a cell show one digit and read as another).

This module compares two PDFs; it does not render anything (the `verify` command passes the fresh render), so
the audit keeps no dependency on the renderer's internals. What a cell must say is checked separately against
the sheet document itself (`scorecard.audit.readback`).
"""

from __future__ import annotations

import hashlib
import re
import io
from dataclasses import dataclass

import numpy as np
import pypdfium2
from pypdf import PdfReader
from pypdf.errors import PdfReadError
from pypdf.generic import ArrayObject, DictionaryObject, IndirectObject, StreamObject
from scipy import ndimage

from scorecard.audit.pdf_tables import PrintedPage, Word
from scorecard.audit.readback import Mismatch
from scorecard.errors import UserError

# 100 dots per inch: a pixel is 0.25 mm, finer than the thinnest stroke of the smallest printed digit (6 pt type);
# rasterising a 3-page A4 sheet twice takes about 0.05 s (docs/audit.md)
RASTER_DPI = 100
# differing pixels closer than this (in pixels, about 1.5 mm) are reported as one region
_REGION_GAP = 6
_MAX_REGIONS = 12  # per page; the rest are counted


@dataclass
class Comparison:
    identical_bytes: bool
    pages: int
    mismatches: list[Mismatch]


def compare_with_fresh_render(candidate: bytes, fresh: bytes, fresh_pages: list[PrintedPage],
                              candidate_pages: list[PrintedPage], source: str = "PDF") -> Comparison:
    """Every way `candidate` differs from `fresh` (the sheet rendered again), as mismatches naming the page,
    the check and, for pixels, the table and row of the fresh render the difference lies in."""
    if candidate == fresh:
        return Comparison(True, len(fresh_pages), [])
    ours, theirs = _reader(candidate, source), _reader(fresh, "fresh render")
    found: list[Mismatch] = []
    found += _annotations_and_forms(ours)
    found += _metadata(ours, theirs)
    found += _fonts(ours, theirs)
    ours_px, theirs_px = rasterise(candidate, source), rasterise(fresh, "fresh render")
    ours_hash = [hashlib.sha256(p.tobytes() + bytes(str(p.shape), "ascii")).hexdigest() for p in ours_px]
    theirs_hash = [hashlib.sha256(p.tobytes() + bytes(str(p.shape), "ascii")).hexdigest() for p in theirs_px]
    if len(ours_px) != len(theirs_px):
        found.append(Mismatch(None, "pages", "page count", str(len(ours_px)), f"{len(theirs_px)} (as rendered from the sheet)"))
    for i, digest in enumerate(ours_hash):
        number = i + 1
        if i < len(theirs_hash) and digest == theirs_hash[i]:
            found += _text_layer(number, candidate_pages[i] if i < len(candidate_pages) else None, fresh_pages[i])
            continue
        elsewhere = [j + 1 for j, d in enumerate(theirs_hash) if d == digest and j != i]
        if elsewhere:
            found.append(Mismatch(number, "pages", "order", f"this page is the sheet's page {elsewhere[0]}",
                                  f"page {number}" if i < len(theirs_hash) else "(no such page)"))
            continue
        if i >= len(theirs_px):
            found.append(Mismatch(number, "pages", "extra page", _page_words(candidate_pages, i), "(no such page on the sheet)"))
            continue
        found += _pixel_regions(number, ours_px[i], theirs_px[i], fresh_pages[i])
        found += _text_layer(number, candidate_pages[i] if i < len(candidate_pages) else None, fresh_pages[i])
    for j in range(len(ours_px), len(theirs_px)):
        if theirs_hash[j] not in ours_hash:
            found.append(Mismatch(j + 1, "pages", "missing page", "(missing)", _page_words(fresh_pages, j)))
    return Comparison(False, len(ours_px), found)


# -- reading ---------------------------------------------------------------------------------------------


def _reader(data: bytes, source: str) -> PdfReader:
    try:
        reader = PdfReader(io.BytesIO(data))
        len(reader.pages)
        return reader
    except (PdfReadError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise UserError(f"{source}: cannot be read as a PDF ({type(exc).__name__}); give the PDF written by `scorecard render`") from None


def rasterise(data: bytes, source: str = "PDF", dpi: int = RASTER_DPI) -> list[np.ndarray]:
    """Every page as a greyscale array at `dpi` (pypdfium2, annotations and form fields drawn as printed)."""
    try:
        document = pypdfium2.PdfDocument(data)
    except pypdfium2.PdfiumError as exc:
        raise UserError(f"{source}: cannot be rasterised as a PDF ({exc}); give the PDF written by `scorecard render`") from None
    pictures = []
    try:
        for i in range(len(document)):
            page = document[i]
            bitmap = page.render(scale=dpi / 72, grayscale=True, may_draw_forms=True, draw_annots=True)
            pictures.append(np.array(bitmap.to_numpy()[:, :, 0] if bitmap.to_numpy().ndim == 3 else bitmap.to_numpy()))
            page.close()
    finally:
        document.close()
    return pictures


def _page_words(pages: list[PrintedPage], i: int, limit: int = 12) -> str:
    if i >= len(pages):
        return "(page)"
    words = [w.text for w in pages[i].words[:limit]]
    return " ".join(words) + (" ..." if len(pages[i].words) > limit else "") or "(a page without text)"


# -- annotations, metadata, fonts ------------------------------------------------------------------------


def _annotations_and_forms(reader: PdfReader) -> list[Mismatch]:
    found = []
    for number, page in enumerate(reader.pages, start=1):
        annots = page.get("/Annots")
        for annot in (annots.get_object() if annots is not None else []) or []:
            a = annot.get_object()
            kind = str(a.get("/Subtype", "/Annot")).lstrip("/")
            shown = str(a.get("/Contents", "") or "").strip()
            found.append(Mismatch(number, "annotation", f"{kind} annotation", shown or "(drawn over the page)",
                                  "(none: a printed sheet carries no annotations)"))
    root = reader.trailer["/Root"].get_object()
    if "/AcroForm" in root:
        found.append(Mismatch(None, "form", "form fields", "the PDF has fillable form fields", "(none)"))
    return found


# a tool that only re-saves a file sets these two; every other entry must be the renderer's
_RESAVE_KEYS = ("/Producer", "/ModDate")


def _metadata(ours: PdfReader, theirs: PdfReader) -> list[Mismatch]:
    a, b = ({k: v for k, v in dict(r.metadata or {}).items() if k not in _RESAVE_KEYS} for r in (ours, theirs))
    found = []
    for key in sorted(set(a) | set(b)):
        if str(a.get(key, "")) != str(b.get(key, "")):
            found.append(Mismatch(None, "metadata", key.lstrip("/"), str(a.get(key, "(none)")), str(b.get(key, "(none)"))))
    if ("/Metadata" in ours.trailer["/Root"]) != ("/Metadata" in theirs.trailer["/Root"]):
        found.append(Mismatch(None, "metadata", "XMP metadata stream", "present", "(none)"))
    return found


def _digest(value, depth: int = 0) -> str:
    """A stable digest of a PDF object: dictionaries by sorted keys, streams by their decoded bytes."""
    if depth > 12:
        return "..."
    if isinstance(value, IndirectObject):
        value = value.get_object()
    if isinstance(value, StreamObject):
        head = _digest(DictionaryObject({k: v for k, v in value.items() if k not in ("/Length", "/Filter", "/DecodeParms")}), depth + 1)
        return "stream" + head + hashlib.sha256(value.get_data()).hexdigest()
    if isinstance(value, DictionaryObject):
        return "{" + ",".join(f"{k}:{_digest(v, depth + 1)}" for k, v in sorted(value.items()) if k != "/Parent") + "}"
    if isinstance(value, ArrayObject):
        return "[" + ",".join(_digest(v, depth + 1) for v in value) + "]"
    return repr(value)


def _font_digests(reader: PdfReader) -> dict[str, set[str]]:
    """{font name: digests of every font object of that name} over all pages and their form XObjects."""
    out: dict[str, set[str]] = {}

    def visit(resources, depth=0):
        if resources is None or depth > 4:
            return
        resources = resources.get_object()
        fonts = resources.get("/Font")
        for font in (fonts.get_object().values() if fonts is not None else []):
            f = font.get_object()
            out.setdefault(str(f.get("/BaseFont", "(unnamed)")).lstrip("/"), set()).add(hashlib.sha256(_digest(f).encode()).hexdigest())
        xobjects = resources.get("/XObject")
        for x in (xobjects.get_object().values() if xobjects is not None else []):
            x = x.get_object()
            if x.get("/Subtype") == "/Form":
                visit(x.get("/Resources"), depth + 1)

    for page in reader.pages:
        visit(page.get("/Resources"))
    return out


def _fonts(ours: PdfReader, theirs: PdfReader) -> list[Mismatch]:
    a, b = _font_digests(ours), _font_digests(theirs)
    found = []
    for name in sorted(a):
        if name not in b:
            found.append(Mismatch(None, "embedded font", name, "a font the renderer does not use", "(none)"))
        elif a[name] - b[name]:
            found.append(Mismatch(None, "embedded font", name, "glyphs or character map changed",
                                  "the renderer's font (same glyphs, same character map)"))
    return found


# -- pixels and text layer -------------------------------------------------------------------------------


def _pixel_regions(number: int, ours: np.ndarray, theirs: np.ndarray, fresh: PrintedPage) -> list[Mismatch]:
    if ours.shape != theirs.shape:
        to_mm = 25.4 / RASTER_DPI
        return [Mismatch(number, "picture", "page size", f"{ours.shape[1] * to_mm:.0f} x {ours.shape[0] * to_mm:.0f} mm",
                         f"{theirs.shape[1] * to_mm:.0f} x {theirs.shape[0] * to_mm:.0f} mm")]
    differs = ours != theirs
    # differing pixels a few pixels apart form one region; each region is then measured by its own pixels
    labels, _ = ndimage.label(ndimage.binary_dilation(differs, iterations=_REGION_GAP // 2))
    boxes = ndimage.find_objects(labels * differs)
    found = []
    regions = sorted((b for b in boxes if b is not None), key=lambda b: (b[0].start, b[1].start))
    points, mm = 72 / RASTER_DPI, 25.4 / 72
    for k, (rows, cols) in enumerate(regions):
        if k == _MAX_REGIONS:
            found.append(Mismatch(number, "picture", f"{len(regions) - k} more regions", "differ", "as rendered from the sheet"))
            break
        x0, x1, top, bottom = cols.start * points, cols.stop * points, rows.start * points, rows.stop * points
        pixels = int(differs[rows, cols].sum())
        found.append(Mismatch(number, "picture", f"region {x0 * mm:.0f}-{x1 * mm:.0f} mm from the left, {top * mm:.0f}-{bottom * mm:.0f} mm "
                              f"from the top ({where_on_page(fresh, x0, x1, top, bottom)})",
                              f"{pixels} pixel(s) differ", "as rendered from the sheet"))
    return found


def where_on_page(page: PrintedPage, x0: float, x1: float, top: float, bottom: float) -> str:
    """The table and row of `page` a box lies in, or the nearest printed words."""
    for table in page.tables:
        if table.x0 - 2 <= x1 and x0 <= table.x1 + 2 and table.rows[0].top - 2 <= bottom and top <= table.rows[-1].bottom + 2:
            heading = table.rows[0].text()
            rows = [r for r in table.rows if r.top < bottom and top < r.bottom]
            if rows:
                named = "; ".join(f"row {table.rows.index(r)}: {r.text()}" if table.rows.index(r) else f"heading: {r.text()}" for r in rows[:3])
                return f"table '{heading}', {named}"
            return f"table '{heading}'"
    near = [w for w in page.words if w.x0 - 4 <= x1 and x0 <= w.x1 + 4 and w.top - 4 <= bottom and top <= w.bottom + 4]
    if near:
        return "near '" + " ".join(w.text for w in near[:8]) + "'"
    return "a drawing or blank space"


def _word_key(w: Word) -> tuple:
    return (w.text, round(w.x0, 1), round(w.top, 1), round(w.x1, 1), round(w.bottom, 1), w.bold)


def _text_layer(number: int, ours: PrintedPage | None, fresh: PrintedPage) -> list[Mismatch]:
    """Words a reader extracts from the page that the fresh render does not have, and the reverse."""
    a = [_word_key(w) for w in (ours.words if ours else [])]
    b = [_word_key(w) for w in fresh.words]
    extra = _multiset_minus(a, b)
    missing = _multiset_minus(b, a)
    found = []
    for key in extra[:_MAX_REGIONS]:
        found.append(Mismatch(number, "text layer", f"word at {key[1]:.0f},{key[2]:.0f} pt ({where_on_page(fresh, key[1], key[3], key[2], key[4])})",
                              key[0], "(not in the text of the sheet as rendered)"))
    for key in missing[:_MAX_REGIONS]:
        found.append(Mismatch(number, "text layer", f"word at {key[1]:.0f},{key[2]:.0f} pt ({where_on_page(fresh, key[1], key[3], key[2], key[4])})",
                              "(missing, moved or resized)", key[0]))
    return found


def _multiset_minus(a: list, b: list) -> list:
    from collections import Counter

    left = Counter(a) - Counter(b)
    return sorted(left.elements(), key=lambda k: (k[2], k[1]))


_LAYOUT_IN_SUBJECT = re.compile(r"^points sheet [0-9a-f]{12} \((.+)\)$")


def layout_named_in(data: bytes, source: str = "PDF") -> str | None:
    """The layout name `scorecard render` writes into the PDF's Subject ('points sheet 1a2b3c4d5e6f (ward-a4)')."""
    subject = str((_reader(data, source).metadata or {}).get("/Subject", "") or "")
    match = _LAYOUT_IN_SUBJECT.match(subject.strip())
    return match.group(1) if match else None
