"""Layout files (TOML): page size, margins, type sizes, columns, which parts print, in what order, on which side.

A layout is found by name among the shipped layouts (package `scorecard.layouts`, which is the repo's
top-level `layouts/` folder) or read from a file path. Every field is checked once here, and a bad one is a
single `UserError` line naming the file and the field; the renderer trusts a loaded `PageLayout`.
The format is documented in docs/layouts.md.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from reportlab.lib.units import inch, mm

from scorecard.errors import UserError

# page sizes in points (portrait); ISO 216 and US paper sizes, index cards in inches (common practice)
PAGE_SIZES: dict[str, tuple[float, float]] = {
    "A3": (297 * mm, 420 * mm),
    "A4": (210 * mm, 297 * mm),
    "A5": (148 * mm, 210 * mm),
    "A6": (105 * mm, 148 * mm),
    "Letter": (8.5 * inch, 11 * inch),
    "Legal": (8.5 * inch, 14 * inch),
    "index-4x6": (4 * inch, 6 * inch),
    "index-5x8": (5 * inch, 8 * inch),
}

# what a section may print, in the order the layout lists them
PARTS = {
    "instructions": "how to score: the steps and the rounding rule",
    "terms": "one points table per term (pair terms as a grid), each with a write-in box",
    "total": "the total-points box",
    "record": "write-in fields recording the scoring: patient, date and time, scored by, total, band, action taken",
    "ranges": "what to do outside the printed ranges, the training ranges, terms left off the sheet",
    "conversion_table": "every reachable total with its risk (and band)",
    "conversion_curve": "the same conversion plotted as a curve",
    "bands": "the risk bands with the unit's own wording",
    "cautions": "the cautions in full, with the fingerprint check",
    "nomogram": "one line per term with its own points at each tick, then one total-to-risk scale with the bands shaded",
}
# a sheet that leaves any of these out could be misused at the bedside
REQUIRED_PARTS = ("terms", "total", "instructions", "ranges", "conversion_table", "cautions")

_TOP_KEYS = {"name", "description", "compact", "page", "type", "section"}
_PAGE_KEYS = {"size", "orientation", "margins_mm", "two_sided", "max_pages"}
_MARGIN_KEYS = {"top", "bottom", "left", "right"}
_TYPE_KEYS = {"min_pt", "body_pt", "heading_pt", "title_pt"}
_SECTION_KEYS = {"name", "columns", "parts", "max_pages", "side"}


@dataclass(frozen=True)
class Section:
    """A run of pages that starts on a new page (on a front side when the layout is two-sided)."""

    name: str
    parts: tuple[str, ...]
    columns: int = 1
    max_pages: int = 0  # 0 = as many as needed
    side: str = "any"  # two-sided layouts: start on a "front" (odd) or "back" (even) page, or "any"


@dataclass(frozen=True)
class PageLayout:
    name: str
    description: str
    source: str
    page_size: tuple[float, float]  # points, already turned for the orientation
    margins: dict[str, float]  # points
    two_sided: bool
    max_pages: int
    min_pt: float
    body_pt: float
    heading_pt: float
    title_pt: float
    sections: tuple[Section, ...] = field(default_factory=tuple)
    compact: bool = False  # run the scoring steps and the cautions together as paragraphs (small cards)
    conversion_spread: bool = True  # print the range column of the conversion table (off only to fit a page limit)

    @property
    def parts(self) -> list[str]:
        return [p for s in self.sections for p in s.parts]


def _shipped_folder():
    """The folder of shipped layouts: the installed package first, then the source checkout's layouts/."""
    try:
        folder = resources.files("scorecard.layouts")
        if any(str(p.name).endswith(".toml") for p in folder.iterdir()):
            return folder
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError):
        pass
    return Path(__file__).resolve().parents[2] / "layouts"


def shipped_layouts() -> dict[str, str]:
    """Shipped layout names -> their TOML text."""
    folder = _shipped_folder()
    out = {}
    try:
        entries = sorted(folder.iterdir(), key=lambda p: p.name)
    except (FileNotFoundError, NotADirectoryError):
        return out
    for entry in entries:
        if entry.name.endswith(".toml"):
            out[entry.name[: -len(".toml")]] = entry.read_text(encoding="utf-8")
    return out


DEFAULT_LAYOUT = "ward-a4"


def load_layout(name_or_path: str | None = None) -> PageLayout:
    """A shipped layout by name (e.g. 'ward-a4'), or a layout file by path (anything ending .toml or existing)."""
    given = name_or_path or DEFAULT_LAYOUT
    path = Path(given)
    if given.endswith(".toml") or "/" in given or "\\" in given or path.is_file():
        try:
            text = path.read_text(encoding="utf-8")
        except (FileNotFoundError, IsADirectoryError):
            raise UserError(f"{given}: no such layout file; give a path to a .toml file or a shipped layout name "
                            f"({', '.join(shipped_layouts()) or 'none found'})") from None
        except (OSError, UnicodeDecodeError) as exc:
            raise UserError(f"{given}: cannot read this layout file ({exc})") from None
        return parse_layout(text, source=str(given))
    shipped = shipped_layouts()
    if given not in shipped:
        raise UserError(f"--layout {given}: no shipped layout of that name; use one of {', '.join(shipped)} "
                        f"or a path to a .toml layout file")
    return parse_layout(shipped[given], source=f"layout {given}")


def _number(where: str, value, *, low: float, high: float, integer: bool = False) -> float:
    kind = "a whole number" if integer else "a number"
    if isinstance(value, bool) or not isinstance(value, (int, float)) or (integer and not isinstance(value, int)):
        raise UserError(f"{where} must be {kind} (got {value!r})")
    if not low <= value <= high:
        raise UserError(f"{where} must be between {low:g} and {high:g} (got {value!r})")
    return value


def _table(where: str, value) -> dict:
    if not isinstance(value, dict):
        raise UserError(f"{where} must be a table")
    return value


def _unknown(where: str, value: dict, allowed: set[str]) -> None:
    extra = sorted(set(value) - allowed)
    if extra:
        raise UserError(f"{where}: unknown field {extra[0]!r}; allowed fields are {', '.join(sorted(allowed))}")


def parse_layout(text: str, source: str = "layout") -> PageLayout:
    """Check every field of a layout's TOML text; one line naming the field on the first problem."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise UserError(f"{source}: not valid TOML ({exc})") from None
    _unknown(source, doc, _TOP_KEYS)
    name = doc.get("name")
    if not isinstance(name, str) or not name.strip():
        raise UserError(f"{source}: field 'name' must be a non-empty text")
    description = doc.get("description", "")
    if not isinstance(description, str):
        raise UserError(f"{source}: field 'description' must be text")

    compact = doc.get("compact", False)
    if not isinstance(compact, bool):
        raise UserError(f"{source}: field 'compact' must be true or false (got {compact!r})")
    page = _table(f"{source}: [page]", doc.get("page", {}))
    _unknown(f"{source}: [page]", page, _PAGE_KEYS)
    size_name = page.get("size", "A4")
    if size_name not in PAGE_SIZES:
        raise UserError(f"{source}: [page] size {size_name!r} is not known; use one of {', '.join(PAGE_SIZES)}")
    width, height = PAGE_SIZES[size_name]
    orientation = page.get("orientation", "portrait")
    if orientation not in ("portrait", "landscape"):
        raise UserError(f"{source}: [page] orientation must be 'portrait' or 'landscape' (got {orientation!r})")
    if orientation == "landscape":
        width, height = height, width
    margins_in = _table(f"{source}: [page] margins_mm", page.get("margins_mm", {}))
    _unknown(f"{source}: [page] margins_mm", margins_in, _MARGIN_KEYS)
    margins = {}
    for side in ("top", "bottom", "left", "right"):
        value = _number(f"{source}: [page] margins_mm.{side}", margins_in.get(side, 12), low=3, high=60)
        margins[side] = value * mm
    if margins["left"] + margins["right"] > width * 0.5 or margins["top"] + margins["bottom"] > height * 0.5:
        raise UserError(f"{source}: [page] margins_mm take more than half the page; make them smaller")
    two_sided = page.get("two_sided", False)
    if not isinstance(two_sided, bool):
        raise UserError(f"{source}: [page] two_sided must be true or false (got {two_sided!r})")
    max_pages = int(_number(f"{source}: [page] max_pages", page.get("max_pages", 0), low=0, high=100, integer=True))

    type_ = _table(f"{source}: [type]", doc.get("type", {}))
    _unknown(f"{source}: [type]", type_, _TYPE_KEYS)
    min_pt = _number(f"{source}: [type] min_pt", type_.get("min_pt", 9), low=6, high=36)
    sizes = {}
    for key, default in (("body_pt", min_pt), ("heading_pt", min_pt * 1.15), ("title_pt", min_pt * 1.5)):
        value = _number(f"{source}: [type] {key}", type_.get(key, default), low=6, high=72)
        if value < min_pt:
            raise UserError(f"{source}: [type] {key} ({value:g}) is below min_pt ({min_pt:g}); raise it to at least min_pt")
        sizes[key] = float(value)

    raw_sections = doc.get("section")
    if not isinstance(raw_sections, list) or not raw_sections:
        raise UserError(f"{source}: needs at least one [[section]] listing the parts to print")
    sections = []
    seen: dict[str, str] = {}
    for i, raw in enumerate(raw_sections, start=1):
        where = f"{source}: [[section]] {i}"
        raw = _table(where, raw)
        _unknown(where, raw, _SECTION_KEYS)
        sec_name = raw.get("name", f"section {i}")
        if not isinstance(sec_name, str):
            raise UserError(f"{where}: field 'name' must be text")
        columns = int(_number(f"{where} columns", raw.get("columns", 1), low=1, high=6, integer=True))
        sec_max = int(_number(f"{where} max_pages", raw.get("max_pages", 0), low=0, high=100, integer=True))
        parts = raw.get("parts")
        if not isinstance(parts, list) or not parts or not all(isinstance(p, str) for p in parts):
            raise UserError(f"{where} parts must be a non-empty list of part names ({', '.join(PARTS)})")
        for part in parts:
            if part not in PARTS:
                raise UserError(f"{where} parts: {part!r} is not a part; use {', '.join(PARTS)}")
            if part in seen:
                raise UserError(f"{where} parts: {part!r} is already printed in {seen[part]}; list each part once")
            seen[part] = sec_name
        side = raw.get("side", "any")
        if side not in ("any", "front", "back"):
            raise UserError(f"{where} side must be 'front', 'back' or 'any' (got {side!r})")
        if side != "any" and not two_sided:
            raise UserError(f"{where} side = {side!r} needs two_sided = true in [page]")
        sections.append(Section(name=sec_name, parts=tuple(parts), columns=columns, max_pages=sec_max, side=side))
    missing = [p for p in REQUIRED_PARTS if p not in seen]
    if missing:
        raise UserError(f"{source}: [[section]] parts must include {', '.join(missing)} (a sheet without them could be misread)")
    return PageLayout(name=name, description=description, source=source, page_size=(width, height), margins=margins,
                  two_sided=two_sided, max_pages=max_pages, min_pt=float(min_pt), body_pt=sizes["body_pt"],
                  heading_pt=sizes["heading_pt"], title_pt=sizes["title_pt"], sections=tuple(sections), compact=compact)
