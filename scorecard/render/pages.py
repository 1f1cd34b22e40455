"""Assemble the pages: a story of flowables per layout section, a header and footer on every page (title,
outcome, horizon, population, model, fingerprint, print-date write-in, cautions, page x of y), and the checks
that the layout's page limits hold. Page breaks and overflow come from platypus; this module only says which
page template (number of columns) each section uses and reads back where things landed.
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field, replace

from reportlab.lib import colors
from reportlab.platypus import (BaseDocTemplate, Flowable, Frame, NextPageTemplate, PageBreak, PageTemplate,
                                Paragraph, Spacer)

from scorecard import __version__
from scorecard.errors import UserError
from scorecard.render.conversion import bands_block, conversion_curve_block, conversion_table_block
from scorecard.invented import band_height, draw_band, is_invented
from scorecard.pdf_plumbing import BOLD, REGULAR, page_x_of_y_canvas, text_width, wrap_words
from scorecard.render.layout import PAGE_SIZES, PageLayout
from scorecard.render.nomogram import nomogram_block
from scorecard.render.styles import Styles, styles_for
from scorecard.render.tables import (
    cautions_block,
    cautions_line,
    instructions_block,
    ranges_block,
    record_block,
    term_block,
    total_block,
)
from scorecard.render.text import markup, sheet_has_negative_points
from scorecard.render.too_long import LayoutError, too_long_message
from scorecard.sheet.approval import approval_line
from scorecard.sheet.printed import MEASURE_FIRST_RULE, number_text, prints_spread, units


class _SectionStart(Flowable):
    """Zero-size marker: records the page a section starts on."""

    def __init__(self, index: int):
        super().__init__()
        self.section_start = index

    def wrap(self, avail_width, avail_height):
        return 0, 0

    def draw(self):
        pass


@dataclass
class _Placement:
    section_pages: dict[int, int] = field(default_factory=dict)
    placed: list[tuple[str, int]] = field(default_factory=list)
    pages: int = 0


class _SheetDoc(BaseDocTemplate):
    def __init__(self, *args, placement: _Placement, **kwargs):
        super().__init__(*args, **kwargs)
        self.placement = placement

    def afterFlowable(self, flowable):
        for what in getattr(flowable, "tracked_many", None) or [getattr(flowable, "tracked_as", None)]:
            if what:
                self.placement.placed.append((what, self.page))
        index = getattr(flowable, "section_start", None)
        if index is not None:
            self.placement.section_pages.setdefault(index, self.page)


# units of the International System a US chart does not use (it writes °F, g/dL, mg/dL)
SI_UNITS = ("°C", "g/L", "mmol/L", "µmol/L", "umol/L", "mg/L", "nmol/L", "kPa")
US_PAPER = tuple(tuple(sorted(PAGE_SIZES[name])) for name in ("Letter", "Legal"))  # either orientation


def si_units_on(sheet: dict) -> list[str]:
    """The SI units the sheet's measured tables are printed in, in print order."""
    found = []
    for term in sheet["terms"]:
        for block in term["axes"] if term["kind"] == "pair" else [term]:
            unit = block.get("unit") or ""
            if block["kind"] == "continuous" and unit in SI_UNITS and unit not in found:
                found.append(unit)
    return found


def training_range_texts(sheet: dict) -> list[str]:
    """'Age 60–101 years' for each continuous term, at the decimals the sheet prints for it."""
    out = []
    for term in sheet["terms"]:
        if term["kind"] == "continuous" and term.get("training_range"):
            d = int(term["decimals"])
            lo = number_text(units(term["training_range"]["min"], d), d)
            hi = number_text(units(term["training_range"]["max"], d), d)
            unit = f" {term['unit']}" if term.get("unit") else ""
            out.append(f"{term['label']} {lo}\u2013{hi}{unit}")
    return out


class _Furniture:
    """Header and footer drawn on every page, sized once per layout."""

    def __init__(self, sheet: dict, layout: PageLayout, styles: Styles, short_fingerprint: str):
        self.layout, self.styles = layout, styles
        width, height = layout.page_size
        m = layout.margins
        self.x0, self.inner_w = m["left"], width - m["left"] - m["right"]
        self.top, self.bottom = height - m["top"], m["bottom"]
        outcome = sheet["outcome"]
        model = sheet["model"]
        self.title = Paragraph(markup(sheet["title"]), styles.title)
        when = f" \u00b7 <b>Score:</b> {markup(outcome['score_at'])}" if outcome.get("score_at") else ""
        si = si_units_on(sheet) if tuple(sorted(layout.page_size)) in US_PAPER else []
        if si:  # a US ward reads °F, g/dL, mg/dL: say plainly that these tables are not in those units
            when += f" \u00b7 <b>Units: SI</b> ({markup(', '.join(si))}), not US units"
        self.outcome = Paragraph(
            f"<b>Outcome:</b> {markup(outcome['event'])} \u00b7 <b>Horizon:</b> {markup(outcome['horizon'])} \u00b7 "
            f"<b>For:</b> {markup(outcome['population'])}{when}", styles.small)
        self.ident = f"Fingerprint {short_fingerprint} \u00b7 model {model['name']} version {model['version']}"
        lineage = sheet.get("recalibration")
        if lineage:  # scorecard recalibrate: the version this one was recalibrated from, and on what
            self.ident += (f" \u00b7 recalibrated from {lineage['original_fingerprint'][:12]} on {lineage['n']:,} patients "
                           f"of {lineage['data']['file']}")
        approval = sheet.get("approval")
        if approval:  # scorecard approve: who approved this sheet, and the signature to compare by eye
            self.ident += " \u00b7 " + approval_line(approval)
        self.printed_label = "Printed on:"
        self.cautions = Paragraph(markup(cautions_line(sheet, short_fingerprint)), styles.small)
        s = styles.min_pt
        # a sheet from invented data carries a black band with the mark at the top and foot of every page,
        # inside the margins so no printer crops it (scorecard.invented)
        self.invented = is_invented(sheet)
        self.band_h = band_height(s) + s * 0.4 if self.invented else 0.0
        self.line_h = s * 1.25
        _, self.title_h = self.title.wrap(self.inner_w, height)
        _, self.outcome_h = self.outcome.wrap(self.inner_w, height)
        self.header_h = self.band_h + self.title_h + 2 + self.outcome_h + 3
        _, self.cautions_h = self.cautions.wrap(self.inner_w, height)
        self.page_label_w = text_width("Page 888 of 888", s)
        ident_room = self.inner_w - self.page_label_w - s
        self.print_w = text_width(self.printed_label, s) + 26 * s / 3
        self.ident_lines = wrap_words(self.ident, s, ident_room)
        if len(self.ident_lines) > 1:
            # the print-date field sits at the right of the second line: the lines after the first stop short of
            # it (a long approval or recalibration text printed over "Printed on:")
            rest = wrap_words(" ".join(self.ident_lines[1:]), s, self.inner_w - self.print_w - s)
            self.ident_lines = self.ident_lines[:1] + rest
        # identity, print-date field and page number share one line when they fit, else the field goes below
        self.one_line = len(self.ident_lines) == 1 and (
            text_width(self.ident, s) + self.print_w + self.page_label_w + 2 * s <= self.inner_w)
        lines = 1 if self.one_line else max(len(self.ident_lines), 2)
        self.footer_h = 3 + self.cautions_h + 2 + lines * self.line_h + self.band_h
        self.gap = s * 0.8

    @property
    def body_top(self) -> float:
        return self.top - self.header_h - self.gap

    @property
    def body_bottom(self) -> float:
        return self.bottom + self.footer_h + self.gap

    def draw(self, canv, doc) -> None:
        canv.saveState()
        if self.invented:
            draw_band(canv, self.x0, self.inner_w, self.top, BOLD, self.styles.min_pt)
            draw_band(canv, self.x0, self.inner_w, self.bottom + band_height(self.styles.min_pt), BOLD, self.styles.min_pt)
        y = self.top - self.band_h - self.title_h
        self.title.drawOn(canv, self.x0, y)
        y -= 2 + self.outcome_h
        self.outcome.drawOn(canv, self.x0, y)
        canv.setStrokeColor(colors.black)
        canv.setLineWidth(0.6)
        canv.line(self.x0, self.top - self.header_h, self.x0 + self.inner_w, self.top - self.header_h)
        # footer: rule, cautions, identity lines (page x of y and the print-date field go on the right)
        y = self.bottom + self.footer_h
        canv.setStrokeColor(colors.black)
        canv.line(self.x0, y, self.x0 + self.inner_w, y)
        y -= 3 + self.cautions_h
        self.cautions.drawOn(canv, self.x0, y)
        s = self.styles.min_pt
        canv.setFont(REGULAR, s)
        for i, line in enumerate(self.ident_lines):
            canv.drawString(self.x0, y - 2 - (i + 1) * self.line_h + s * 0.25, line)
        right = self.x0 + self.inner_w
        base = y - 2 - self.line_h + s * 0.25
        if self.one_line:
            label_x, field_right, field_base = right - self.page_label_w - s - self.print_w, right - self.page_label_w - s, base
        else:
            label_x, field_right, field_base = right - self.print_w, right, base - self.line_h
        canv.drawString(label_x, field_base, self.printed_label)
        canv.setLineWidth(0.5)
        canv.line(label_x + text_width(self.printed_label, s) + 2, field_base - 1.5, field_right, field_base - 1.5)
        canv.restoreState()
        self.page_number_at = (right, base)


def _canvas_class(furniture: _Furniture):
    """A canvas that stamps 'Page x of y' where the page furniture left room for it."""

    def stamp(canvas, page: int, total: int) -> None:
        right, base = furniture.page_number_at
        canvas.setFont(REGULAR, furniture.styles.min_pt)
        canvas.drawRightString(right, base, f"Page {page} of {total}")

    return page_x_of_y_canvas(stamp)


def _story(sheet: dict, layout: PageLayout, styles: Styles, short_fingerprint: str, furniture: _Furniture,
           blank_before: set[int]) -> list[Flowable]:
    signed = sheet_has_negative_points(sheet)
    gap = styles.body_pt * 1.2
    story: list[Flowable] = []
    for index, section in enumerate(layout.sections):
        width = (furniture.inner_w - gap * (section.columns - 1)) / section.columns
        if index > 0:
            story += [NextPageTemplate(f"cols-{section.columns}"), PageBreak()]
        if index in blank_before:
            story += [Paragraph("This side is left blank on purpose (two-sided printing).", styles.body),
                      PageBreak()]
        story.append(_SectionStart(index))
        skip_conversion = False
        for part in section.parts:
            if part == "instructions":
                story.append(instructions_block(sheet, styles, layout.compact))
            elif part == "terms" and "instructions" not in section.parts[:section.parts.index("terms")]:
                # the tables need the rounding rule where they are; the full instructions may come after them
                how = (" Note the points of the patient's row in each table." if layout.compact else
                       " Write the points of the patient's row in the box beside each table's heading.")
                story.append(Paragraph(markup(sheet["rounding_rule"]) + how + " " + markup(MEASURE_FIRST_RULE),
                                       styles.body))
                story.append(Spacer(1, styles.body_pt * 0.5))
                story += [term_block(term, styles, signed, width) for term in sheet["terms"]]
            elif part == "terms":
                story += [term_block(term, styles, signed, width) for term in sheet["terms"]]
            elif part == "total":
                box = total_block(styles, width, layout.compact)
                if _next_part(section, part) == "conversion_table":
                    # the total is read off in the table right after it: keep the box on the page the table
                    # starts on, so the reader never turns a page between adding up and reading the risk
                    story += conversion_table_block(sheet, styles, layout.compact, layout.conversion_spread,
                                                    lead=box.flowables_tracked())
                    skip_conversion = True
                else:
                    story.append(box)
            elif part == "record":
                story.append(record_block(sheet, styles, width))
            elif part == "ranges":
                story.append(ranges_block(sheet, styles, training_range_texts(sheet), layout.compact))
            elif part == "conversion_table":
                if skip_conversion:
                    skip_conversion = False
                    continue
                story += conversion_table_block(sheet, styles, layout.compact, layout.conversion_spread)
            elif part == "conversion_curve":
                story += conversion_curve_block(sheet, styles)
            elif part == "bands":
                story += bands_block(sheet, styles, width)
            elif part == "cautions":
                story.append(cautions_block(sheet, styles, short_fingerprint, width, layout.compact,
                                            run_together=layout.compact or section.columns > 1))
            elif part == "nomogram":
                story += nomogram_block(sheet, styles, signed, furniture.body_top - furniture.body_bottom)
    return story


def _next_part(section, part: str) -> str | None:
    parts = list(section.parts)
    at = parts.index(part)
    return parts[at + 1] if at + 1 < len(parts) else None


def _build(sheet: dict, layout: PageLayout, styles: Styles, short_fingerprint: str, blank_before: set[int]) -> tuple[bytes, _Placement]:
    furniture = _Furniture(sheet, layout, styles, short_fingerprint)
    placement = _Placement()
    buffer = io.BytesIO()
    doc = _SheetDoc(
        buffer, placement=placement, pagesize=layout.page_size, invariant=1,
        leftMargin=layout.margins["left"], rightMargin=layout.margins["right"],
        topMargin=layout.margins["top"], bottomMargin=layout.margins["bottom"],
        title=sheet["title"], author="scorecard", subject=f"points sheet {short_fingerprint} ({layout.name})",
        creator=f"scorecard {__version__}", keywords=f"sheet fingerprint {sheet.get('fingerprint', '')}",
        producer=f"scorecard {__version__}",
    )
    gap = styles.body_pt * 1.2
    templates = []
    seen = set()
    for section in layout.sections:
        if section.columns in seen:
            continue
        seen.add(section.columns)
        col_w = (furniture.inner_w - gap * (section.columns - 1)) / section.columns
        frames = [Frame(furniture.x0 + i * (col_w + gap), furniture.body_bottom, col_w, furniture.body_top - furniture.body_bottom,
                        leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0, id=f"c{section.columns}-{i}")
                  for i in range(section.columns)]
        templates.append(PageTemplate(id=f"cols-{section.columns}", frames=frames, onPage=furniture.draw))
    doc.addPageTemplates(templates)
    story = _story(sheet, layout, styles, short_fingerprint, furniture, blank_before)
    doc.build(story, canvasmaker=_canvas_class(furniture))
    placement.pages = doc.page
    return buffer.getvalue(), placement


def render_pdf(sheet: dict, layout: PageLayout, short_fingerprint: str) -> bytes:
    """The PDF of `sheet` laid out by `layout` (same inputs, same bytes).

    UserError when the layout's page limits cannot hold the sheet, naming what does not fit.
    """
    styles = styles_for(layout)
    try:
        data, placement = _render_sides(sheet, layout, styles, short_fingerprint)
    except LayoutError:
        message = too_long_message(sheet, layout.name, lambda trial: _lays_out(trial, layout, styles, short_fingerprint))
        raise UserError(message or f"the sheet does not fit layout '{layout.name}': a text or table is taller "
                        "than a page; shorten the longest labels or choose another layout") from None
    moved = _cautions_moved_on(layout, placement)
    if moved is not None:
        # the cautions box landed on a page with nothing else: print it in the next section instead
        data2, placement2 = _render_sides(sheet, moved, styles, short_fingerprint)
        if placement2.pages <= placement.pages and _cautions_moved_on(moved, placement2) is None:
            layout, data, placement = moved, data2, placement2
    try:
        _check_limits(layout, placement)
    except UserError:
        if not (layout.conversion_spread and prints_spread(sheet)):
            raise
        # a layout with page limits (the pocket card) that the range column overfills: the conversion is
        # printed without it, and says so, rather than refusing the sheet
        return render_pdf(sheet, replace(layout, conversion_spread=False), short_fingerprint)
    return data


def _lays_out(sheet: dict, layout: PageLayout, styles: Styles, short_fingerprint: str) -> bool:
    try:
        _render_sides(sheet, layout, styles, short_fingerprint)
    except LayoutError:
        return False
    return True


def _render_sides(sheet: dict, layout: PageLayout, styles: Styles, short_fingerprint: str) -> tuple[bytes, _Placement]:
    blank_before: set[int] = set()
    for _ in range(len(layout.sections) + 1):
        data, placement = _build(sheet, layout, styles, short_fingerprint, blank_before)
        if not layout.two_sided:
            break
        # in a two-sided layout a section may ask to start on a front (odd) or back (even) page
        wanted = {i: s.side for i, s in enumerate(layout.sections)}
        wrong = {i for i, page in placement.section_pages.items()
                 if (wanted[i] == "front" and page % 2 == 0) or (wanted[i] == "back" and page % 2 == 1)}
        if not wrong - blank_before:
            break
        blank_before |= wrong
    return data, placement


def _cautions_moved_on(layout: PageLayout, placement: _Placement) -> PageLayout | None:
    """When the cautions box is the only block on its page and a later section follows, the layout with the box
    moved into that section (before its curve, or first); None when the box shares its page or cannot move.
    A page holding the cautions alone is easily skipped, and wastes paper."""
    pages = {page for what, page in placement.placed if what == "the cautions"}
    if len(pages) != 1:
        return None
    page = pages.pop()
    if any(what != "the cautions" for what, p in placement.placed if p == page):
        return None
    index = next((i for i, s in enumerate(layout.sections) if "cautions" in s.parts), None)
    if index is None or index + 1 >= len(layout.sections) or layout.sections[index].max_pages:
        return None
    here, there = layout.sections[index], layout.sections[index + 1]
    parts = list(there.parts)
    at = parts.index("conversion_curve") if "conversion_curve" in parts else 0
    parts.insert(at, "cautions")
    sections = list(layout.sections)
    sections[index] = replace(here, parts=tuple(p for p in here.parts if p != "cautions"))
    sections[index + 1] = replace(there, parts=tuple(parts))
    return replace(layout, sections=tuple(sections))


def _check_limits(layout: PageLayout, placement: _Placement) -> None:
    starts = [placement.section_pages.get(i, 0) for i in range(len(layout.sections))]
    ends = starts[1:] + [placement.pages + 1]
    for i, section in enumerate(layout.sections):
        used = ends[i] - starts[i]
        if section.max_pages and used > section.max_pages:
            last_allowed = starts[i] + section.max_pages - 1
            spill = [what for what, page in placement.placed if last_allowed < page < ends[i]]
            names = ", ".join(dict.fromkeys(spill)) or "the end of the section"
            room = "one page" if section.max_pages == 1 else f"{section.max_pages} pages"
            raise UserError(
                f"layout {layout.name}: the {section.name} part may take {room} and these do not fit on it at "
                f"{layout.min_pt:g} pt: {names}. Use a larger layout (e.g. ward-a4) or build a sheet with fewer rows")
    if layout.max_pages and placement.pages > layout.max_pages:
        raise UserError(f"layout {layout.name}: the sheet needs {placement.pages} pages but the layout allows "
                        f"{layout.max_pages}; use a larger layout (e.g. ward-a4) or build a sheet with fewer rows")
