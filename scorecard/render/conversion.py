"""The conversion from total points to risk: a table (every reachable total, in order), the same figures as a
plotted curve (vector graphics, text kept as text), and the risk bands with the unit's own wording.
Risks and their printed texts are the sheet's `conversion` entries; band membership uses the shared rule.
"""

from __future__ import annotations

import math

from reportlab.graphics.shapes import Circle, Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.platypus import Flowable, KeepTogether, Paragraph, Spacer, Table, TableStyle

from scorecard.pdf_plumbing import BOLD, REGULAR, text_width
from scorecard.render.styles import Styles
from scorecard.render.text import markup, total_text
from scorecard.sheet.printed import SPREAD_LEFT_OFF, band_edge_note, conversion_bands, prints_spread, spread_text

BAND_TINTS = [colors.white, colors.Color(0.9, 0.9, 0.9), colors.Color(0.8, 0.8, 0.8), colors.Color(0.7, 0.7, 0.7)]
PAD = 2.0
FIGURE_GAP = 2.0  # extra space before each right-aligned figure, so "37 99.6%" never runs together
BAND_GAP = 8.0
# a split conversion table starts a part only where at least this many rows per group fit: a sliver of a few
# totals at the foot of a page costs the reader a page turn for nearly every patient (measured: the large-print
# demo sheet put totals 0-2 alone under the total box, and took a page more)
MIN_PART_ROWS = 8


def band_tint(index: int, n_bands: int) -> colors.Color:
    """Lighter for lower bands; printable in black and white."""
    if n_bands <= 1:
        return colors.white
    step = min(index, len(BAND_TINTS) - 1)
    return BAND_TINTS[step]


def row_bands(sheet: dict) -> list[int | None]:
    bands = sheet.get("bands") or []
    if not bands:
        return [None] * len(sheet["conversion"])
    return conversion_bands(sheet)


class ConversionTable(Flowable):
    """Total | Risk | Range | Band, in as many side-by-side groups as the width allows, read down then across.
    Range is the 10th-90th percentile of the exact model's risk among the patients with that total (printed
    when the sheet stores it and `spread` is on; `spread_text`).

    When it does not fit the space left, it splits into two conversion tables (each read down then across),
    so reading order survives a page break.
    """

    def __init__(self, sheet: dict, styles: Styles, rows: list[dict] | None = None, bands: list | None = None,
                 continued: bool = False, spread: bool = True, continues: bool = False):
        super().__init__()
        self.sheet, self.styles = sheet, styles
        self.spread = spread and prints_spread(sheet)
        self.rows = sheet["conversion"] if rows is None else rows
        self.bands = row_bands(sheet) if bands is None else bands
        self.band_names = [b["name"] for b in sheet.get("bands") or []]
        # a part of a split table: `continued` starts mid-table (a heading over it names its totals),
        # `continues` has more after it (a line under it says where)
        self.continued, self.continues = continued, continues
        self._table = None
        self._groups = 1

    def _column_widths(self) -> list[float]:
        # widths from every total of the sheet, not this part's: each part of a split table has the columns
        # and side-by-side groups of the whole (a part of narrow figures would take more groups than the
        # rest, and the rest could then split again into the room left under it)
        s, every = self.styles.body_pt, self.sheet["conversion"]
        total_w = max(text_width("Total", s, bold=True), max(text_width(total_text(r["total"]), s, bold=True) for r in every)) + 2 * PAD + 2
        risk_w = max(text_width("Risk", s, bold=True), max(text_width(r["text"], s) for r in every)) + 2 * PAD + 2 + FIGURE_GAP
        widths = [total_w, risk_w]
        if self.spread:
            widths.append(max(text_width("Range", s, bold=True), max(text_width(spread_text(r), s) for r in every)) + 2 * PAD + 2 + FIGURE_GAP)
        if self.band_names:
            widths.append(max(text_width("Band", s, bold=True), max(text_width(n, s) for n in self.band_names)) + PAD + BAND_GAP + 2)
        return widths

    def _build(self, avail_width: float, rows_per_group: int | None = None) -> Table:
        widths = self._column_widths()
        group_w = sum(widths) + 6
        n = len(self.rows)
        groups = max(1, min(int(avail_width // group_w), math.ceil(n / 8)))
        per = rows_per_group or math.ceil(n / groups)
        groups = math.ceil(n / per)
        self._groups = groups
        scale = min(1.6, avail_width / (group_w * groups))
        col_widths = [w * scale for w in widths] * groups
        s = self.styles
        header = []
        for _ in range(groups):
            header += [Paragraph("<b>Total</b>", s.body_right), Paragraph("<b>Risk</b>", s.body_right)]
            if self.spread:
                header.append(Paragraph("<b>Range</b>", s.body_right))
            if self.band_names:
                header.append(Paragraph("<b>Band</b>", s.body))
        data = [header]
        commands = [
            ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
            ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
            ("TOPPADDING", (0, 0), (-1, -1), 0.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.0),
            ("LINEBELOW", (0, 0), (-1, 0), 0.8, colors.black),
            ("BOX", (0, 0), (-1, -1), 0.8, colors.black),
        ]
        k = len(widths)
        last = k - 1 if self.band_names else k  # columns before the band name
        for g in range(groups):  # the risk figures keep clear of the rule or band name after them
            for c in range(1, last):  # and keep clear of the figure before them
                commands.append(("RIGHTPADDING", (g * k + c, 0), (g * k + c, -1), PAD + 2))
                commands.append(("LEFTPADDING", (g * k + c, 0), (g * k + c, -1), PAD + FIGURE_GAP))
            if self.band_names:
                commands.append(("LEFTPADDING", (g * k + k - 1, 0), (g * k + k - 1, -1), BAND_GAP))
        for r in range(per):
            line = []
            for g in range(groups):
                i = g * per + r
                if i < n:
                    row = self.rows[i]
                    line += [Paragraph(f"<b>{total_text(row['total'])}</b>", s.body_right), Paragraph(markup(row["text"]), s.body_right)]
                    if self.spread:
                        line.append(Paragraph(markup(spread_text(row)), s.body_right))
                    if self.band_names:
                        band = self.bands[i]
                        line.append(Paragraph(markup(self.band_names[band]), s.body))
                        commands.append(("BACKGROUND", (g * k, r + 1), (g * k + k - 1, r + 1), band_tint(band, len(self.band_names))))
                else:
                    line += [""] * k
            data.append(line)
        for g in range(1, groups):
            commands.append(("LINEBEFORE", (g * k, 0), (g * k, -1), 1.2, colors.black))
        for r in range(1, per):
            commands.append(("LINEBELOW", (0, r), (-1, r), 0.25, colors.Color(0.6, 0.6, 0.6)))
        table = Table(data, colWidths=col_widths, hAlign="LEFT", repeatRows=1)
        table.setStyle(TableStyle(commands))
        return table

    def _notes(self, avail_width: float) -> tuple[tuple[Paragraph | None, float], tuple[Paragraph | None, float]]:
        """(note, height) over and under this part. Where the parts of a split table meet, each says where the
        other is: a nurse whose total is not in the part in front of her is told where to look, and a part
        that starts mid-table says what it is."""
        above = below = None
        if self.rows and self.continued:
            span = f"{total_text(self.rows[0]['total'])} to {total_text(self.rows[-1]['total'])}"
            above = Paragraph(f"<b>Total points \u2192 risk, continued:</b> totals {span}", self.styles.body)
        if self.rows and self.continues:
            below = Paragraph(f"Totals above {total_text(self.rows[-1]['total'])}: the table goes on in the next column "
                              "or page.", self.styles.small)
        return tuple((note, note.wrap(avail_width, 1e6)[1] + 2 if note else 0.0) for note in (above, below))

    def wrap(self, avail_width, avail_height):
        self._table = self._build(avail_width)
        table_w, table_h = self._table.wrap(avail_width, avail_height)
        (self._above, self._above_h), (self._below, self._below_h) = self._notes(avail_width)
        self.width, self.height = table_w, table_h + self._above_h + self._below_h
        return self.width, self.height

    def split(self, avail_width, avail_height):
        table = self._build(avail_width)
        _, height = table.wrap(avail_width, avail_height)
        notes_h = sum(h for _, h in self._notes(avail_width))
        if height + notes_h <= avail_height:
            return [self]
        row_h = max(table._rowHeights[1:] or [self.styles.body_pt * 1.5])
        header_h = table._rowHeights[0]
        per = int((avail_height - notes_h - header_h - 2) // row_h)
        if per < MIN_PART_ROWS:
            return []  # too little room here: start on the next frame
        if per * self._groups >= len(self.rows):
            return [self]
        # the first part lays out its own rows: its columns may be narrower or wider than the whole table's, so
        # its number of side-by-side groups and its row heights may differ. Take the most rows that really fit
        # (fewer would leave room under it that the rest then splits into again: two tables on one page).
        def head_of(first: int) -> "ConversionTable | None":
            head = ConversionTable(self.sheet, self.styles, self.rows[:first], self.bands[:first], self.continued, self.spread,
                                   continues=True)
            return head if head.wrap(avail_width, avail_height)[1] <= avail_height else None

        # fewer rows here: start on the next frame; and leave at least MIN_PART_ROWS for the rest, so that the
        # last totals are not a stray line or two overleaf that a reader may not look for
        low, high = MIN_PART_ROWS * self._groups, len(self.rows) - MIN_PART_ROWS
        if low > high:
            return []
        best = head_of(low)
        if best is None:
            return []
        while low < high:  # the largest head that fits (its height grows with its rows, nearly always)
            middle = (low + high + 1) // 2
            head = head_of(middle)
            if head is None:
                high = middle - 1
            else:
                low, best = middle, head
        first = low
        rest = ConversionTable(self.sheet, self.styles, self.rows[first:], self.bands[first:], continued=True,
                               spread=self.spread, continues=self.continues)
        for part in (best, rest):
            part.tracked_as = getattr(self, "tracked_as", None)
        return [best, rest]

    def draw(self):
        if self._above is not None:
            self._above.drawOn(self.canv, 0, self.height - self._above_h + 2)
        self._table.drawOn(self.canv, 0, self._below_h)
        if self._below is not None:
            self._below.drawOn(self.canv, 0, 0)


class LeadAndFirstRows(Flowable):
    """Blocks that lead into the conversion table (its heading; the total box, where the total is read off right
    after it) kept on the frame where the table starts, with at least its first rows. A KeepTogether of them
    with the table would move the lot to the next frame whenever the table is taller than the room left, and
    leave that room empty (a page holding only "How to score", measured on the demo sheet); this splits the
    table instead, so the lead moves on only when not even the table's first rows fit under it."""

    def __init__(self, lead: list[Flowable], table: ConversionTable):
        super().__init__()
        self.lead, self.table = lead, table
        self.tracked_many = tuple(dict.fromkeys(w for w in [getattr(f, "tracked_as", None) for f in lead]
                                                + [getattr(table, "tracked_as", None)] if w))

    def _lead_heights(self, avail_width, avail_height) -> list[float]:
        return [f.wrap(avail_width, avail_height)[1] for f in self.lead]

    def wrap(self, avail_width, avail_height):
        self._heights = self._lead_heights(avail_width, avail_height)
        lead_h = sum(self._heights)
        table_w, table_h = self.table.wrap(avail_width, max(0.0, avail_height - lead_h))
        self.width = max([table_w] + [f.width for f in self.lead if hasattr(f, "width")])
        self.height = lead_h + table_h
        return self.width, self.height

    def split(self, avail_width, avail_height):
        lead_h = sum(self._lead_heights(avail_width, avail_height))
        if lead_h >= avail_height:
            return []
        parts = self.table.split(avail_width, avail_height - lead_h)
        if len(parts) < 2:
            return []  # not even the first rows fit under the lead here: all of it starts on the next frame
        return [LeadAndFirstRows(self.lead, parts[0])] + parts[1:]

    def draw(self):
        y = self.height
        for flowable, height in zip(self.lead, self._heights):
            y -= height
            flowable.drawOn(self.canv, 0, y)
        self.table.drawOn(self.canv, 0, 0)


SPREAD_NOTE = ("<b>Range:</b> patients with the same total differ: 8 in 10 of those with this total had an exact-model "
               "risk in this range (10th to 90th percentile, among the patients the sheet was made and checked on); "
               "\u2013 where fewer than 10 had the total. Act on the risk; the range says how far one patient may be from it.")


def conversion_table_block(sheet: dict, styles: Styles, compact: bool = False, spread: bool = True,
                           lead: list[Flowable] = ()) -> list[Flowable]:
    """The heading and the table (with at least its first rows under `lead` and the heading), then the note on
    the range column."""
    # the outcome, horizon and population are in the header of this very page
    title = Paragraph("Total points \u2192 risk", styles.section)
    table = ConversionTable(sheet, styles, spread=spread)
    table.tracked_as = "the conversion table"
    out: list[Flowable] = [LeadAndFirstRows([*lead, title, Spacer(1, 3)], table)]
    if prints_spread(sheet):  # what the range column means, or that it was left off to fit: after the table and
        # not kept with it (a note above it, or kept with it, pushed a table that just fits a page off its page)
        note = Paragraph(SPREAD_NOTE if table.spread else SPREAD_LEFT_OFF, styles.small)
        note.spaceBefore = 2
        out.append(note)
    return out + [Spacer(1, styles.body_pt * (0.5 if compact else 1))]


def bands_block(sheet: dict, styles: Styles, width: float) -> list[Flowable]:
    """Band | totals | risk | what the unit does (its own wording, or the placeholder asking it to)."""
    bands = sheet.get("bands") or []
    title = Paragraph("Risk bands and your unit's actions", styles.section)
    if not bands:
        note = Paragraph("This sheet sets no risk bands: act on the risk as your local protocol says.", styles.body)
        return [KeepTogether([title, Spacer(1, 3), note]), Spacer(1, styles.body_pt)]
    members = row_bands(sheet)
    s = styles
    spread = any(b.get("other_band_per_100") is not None for b in bands)
    data = [[Paragraph("<b>Band</b>", s.body), Paragraph("<b>Totals</b>", s.body), Paragraph("<b>Risk</b>", s.body)]
            + ([Paragraph("<b>Exact model: other band</b>", s.body)] if spread else [])
            + [Paragraph("<b>What to do (your unit's protocol)</b>", s.body)]]
    commands = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("LINEBELOW", (0, 0), (-1, -1), 0.5, colors.black),
        ("BOX", (0, 0), (-1, -1), 0.8, colors.black),
    ]
    plain = []
    for b, band in enumerate(bands):
        rows = [row for row, m in zip(sheet["conversion"], members) if m == b]
        if rows:
            totals = f"{total_text(rows[0]['total'])} to {total_text(rows[-1]['total'])}" if len(rows) > 1 else total_text(rows[0]["total"])
            risks = f"{rows[0]['text']} to {rows[-1]['text']}" if len(rows) > 1 else rows[0]["text"]
        else:
            totals, risks = "no total reaches this band", ""
        # how many in 100 patients the sheet puts in this band the exact model puts in another one
        other = "" if band.get("other_band_per_100") is None else f"{band['other_band_per_100']} in 100"
        plain.append((band["name"], totals, risks, other))
        data.append([Paragraph(f"<b>{markup(band['name'])}</b>", s.body), Paragraph(markup(totals), s.body),
                     Paragraph(markup(risks), s.body)] + ([Paragraph(markup(other), s.body)] if spread else [])
                    + [Paragraph(markup(band["wording"]), s.body)])
        commands.append(("BACKGROUND", (0, b + 1), (-1, b + 1), band_tint(b, len(bands))))
    def col_w(column: int, header: str) -> float:
        texts = [entry[column] for entry in plain]
        return max([text_width(header, s.body_pt, bold=True)] + [text_width(t, s.body_pt, bold=column == 0) for t in texts]) + 2 * PAD + 5

    name_w, totals_w, risk_w = col_w(0, "Band"), col_w(1, "Totals"), col_w(2, "Risk")
    other_w = col_w(3, "Exact model:") if spread else 0.0
    rest = width - name_w - totals_w - risk_w - other_w
    if rest < width * 0.3:  # narrow column (pocket card): let the figures wrap instead of the wording
        name_w, totals_w, risk_w = width * 0.2, width * 0.17, width * 0.23
        other_w = width * 0.14 if spread else 0.0
        rest = width - name_w - totals_w - risk_w - other_w
    table = Table(data, colWidths=[name_w, totals_w, risk_w] + ([other_w] if spread else []) + [rest], hAlign="LEFT")
    table.setStyle(TableStyle(commands))
    table.tracked_as = "the risk bands"
    note = band_edge_note(sheet)
    under = [Spacer(1, 2), Paragraph(markup(note), s.small)] if note else []
    return [KeepTogether([title, Spacer(1, 3), table] + under), Spacer(1, styles.body_pt)]


def _nice_step(span: float, target: int) -> float:
    raw = span / max(1, target)
    for step in (1, 2, 5, 10, 20, 25, 50, 100):
        if step >= raw:
            return step
    return 100


class ConversionCurve(Flowable):
    """Risk (%) against total points: one dot per reachable total, bands as shaded spans of totals."""

    def __init__(self, sheet: dict, styles: Styles):
        super().__init__()
        self.sheet, self.styles = sheet, styles
        self.drawing = None

    def preferred_height(self, avail_width: float) -> float:
        return min(avail_width * 0.45, max(self.styles.body_pt * 16, avail_width * 0.3)) + self.styles.min_pt * 1.5

    def least_height(self, avail_width: float) -> float:
        """The shortest the curve may be drawn: a plot at least 9 lines of body type tall (type never shrinks)."""
        s = self.styles.min_pt
        legend_h = len(self._legend_rows(self.sheet.get("bands") or [], avail_width, s)) * s * 1.5
        return s * 3.4 + legend_h + s * 2.4 + self.styles.body_pt * 9

    def wrap(self, avail_width, avail_height):
        # the plot gives up height (never type) to finish the page rather than leave a page holding little else
        self.width = avail_width
        preferred = self.preferred_height(avail_width)
        self.height = preferred if avail_height >= preferred else max(self.least_height(avail_width), avail_height)
        return self.width, self.height

    def split(self, avail_width, avail_height):
        return []

    def draw(self):
        self._make(self.width, self.height).drawOn(self.canv, 0, 0)

    @staticmethod
    def _legend_rows(bands: list[dict], width: float, s: float) -> list[list[tuple[float, int, str]]]:
        """Swatch positions for the band key, wrapped to the width: [[(x, band index, text), ...], ...]."""
        rows, row, x = [], [], 0.0
        for b, band in enumerate(bands):
            label = f"{band['name']} risk"
            item_w = s * 2.0 + text_width(label, s) + s * 1.5
            if row and x + item_w > width:
                rows.append(row)
                row, x = [], 0.0
            row.append((x, b, label))
            x += item_w
        if row:
            rows.append(row)
        return rows

    def _make(self, width: float, height: float) -> Drawing:
        s = self.styles.min_pt
        rows = self.sheet["conversion"]
        totals = [r["total"] for r in rows]
        risks = [r["risk"] * 100 for r in rows]
        t_lo, t_hi = totals[0], totals[-1]
        y_step = _nice_step(max(risks), 5)
        y_top = min(100, y_step * math.ceil(max(risks) / y_step)) or y_step
        left = text_width("100%", s) + s * 2.4
        bands = self.sheet.get("bands") or []
        legend = self._legend_rows(bands, width, s)
        legend_h = len(legend) * s * 1.5
        bottom = s * 3.4 + legend_h
        top_pad = s * 2.4
        plot_w = width - left - s
        plot_h = height - bottom - top_pad
        d = Drawing(width, height)

        def x_of(total):
            return left + (total - t_lo + 0.5) / (t_hi - t_lo + 1) * plot_w

        def y_of(pct):
            return bottom + pct / y_top * plot_h

        members = row_bands(self.sheet)
        # a key under the axis names every band's shading, even where a band is too narrow to label
        for r, row in enumerate(legend):
            y = legend_h - (r + 1) * s * 1.5 + s * 0.3
            for x, b, label in row:
                d.add(Rect(x, y - 1, s * 1.6, s, fillColor=band_tint(b, len(bands)), strokeColor=colors.black, strokeWidth=0.5))
                d.add(String(x + s * 2.0, y, label, fontName=REGULAR, fontSize=s))
        if bands:
            for b, band in enumerate(bands):
                inside = [t for t, m in zip(totals, members) if m == b]
                if not inside:
                    continue
                x0, x1 = x_of(inside[0] - 0.5), x_of(inside[-1] + 0.5)
                d.add(Rect(x0, bottom, x1 - x0, plot_h, fillColor=band_tint(b, len(bands)), strokeColor=None))
        # axes and grid
        d.add(Line(left, bottom, left + plot_w, bottom, strokeWidth=0.8))
        d.add(Line(left, bottom, left, bottom + plot_h, strokeWidth=0.8))
        pct = 0.0
        while pct <= y_top + 1e-9:
            y = y_of(pct)
            d.add(Line(left - 3, y, left + plot_w, y, strokeWidth=0.25, strokeColor=colors.Color(0.5, 0.5, 0.5)))
            d.add(String(left - 4, y - s * 0.35, f"{pct:g}%", fontName=REGULAR, fontSize=s, textAnchor="end"))
            pct += y_step
        label_w = max(text_width(total_text(t), s) for t in (t_lo, t_hi)) + s
        x_step = 1
        while plot_w / (t_hi - t_lo + 1) * x_step < label_w:
            x_step = {1: 2, 2: 5, 5: 10}.get(x_step, x_step * 2)
        for t in totals:
            x = x_of(t)
            d.add(Line(x, bottom, x, bottom - 2, strokeWidth=0.5))
            if t % x_step == 0:
                d.add(String(x, bottom - s * 1.45, total_text(t), fontName=REGULAR, fontSize=s, textAnchor="middle"))
        d.add(String(left + plot_w / 2, bottom - s * 2.85, "Total points", fontName=BOLD, fontSize=s, textAnchor="middle"))
        d.add(String(0, bottom + plot_h + s * 1.0, "Risk", fontName=BOLD, fontSize=s, textAnchor="start"))
        points = []
        for t, r in zip(totals, risks):
            points += [x_of(t), y_of(r)]
        d.add(PolyLine(points, strokeWidth=1.0, strokeColor=colors.black))
        radius = max(1.0, min(2.0, plot_w / (t_hi - t_lo + 1) / 4))
        for t, r in zip(totals, risks):
            d.add(Circle(x_of(t), y_of(r), radius, fillColor=colors.black, strokeColor=None))
        return d


class _TitledCurve(Flowable):
    """The curve's title and the curve, kept together; the curve shortens to fit the space left (down to its
    least height), so the curve does not move to a page of its own when a shorter plot would finish this one."""

    def __init__(self, title: Paragraph, curve: ConversionCurve, gap: float):
        super().__init__()
        self.title, self.curve, self.gap = title, curve, gap
        self.tracked_as = "the conversion curve"

    def wrap(self, avail_width, avail_height):
        _, self.title_h = self.title.wrap(avail_width, avail_height)
        _, curve_h = self.curve.wrap(avail_width, avail_height - self.title_h - self.gap - 1)  # 1 pt spare for rounding
        self.width, self.height = avail_width, self.title_h + self.gap + curve_h
        return self.width, self.height

    def split(self, avail_width, avail_height):
        return []

    def draw(self):
        self.title.drawOn(self.canv, 0, self.height - self.title_h)
        self.curve.drawOn(self.canv, 0, 0)


def conversion_curve_block(sheet: dict, styles: Styles) -> list[Flowable]:
    title = Paragraph("The same conversion as a curve (read the figures from the table)", styles.section)
    curve = ConversionCurve(sheet, styles)
    curve.tracked_as = "the conversion curve"
    block = _TitledCurve(title, curve, 3)
    # space as spaceBefore/After (not Spacers): a frame drops them at its edges, so no page holds a lone spacer
    block.spaceBefore, block.spaceAfter = styles.body_pt * 0.6, styles.body_pt
    return [block]
