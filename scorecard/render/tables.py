"""The front of the sheet as platypus flowables: one points table per term, pair grids, the total box, how to
score, what to do outside the printed ranges, and the cautions. Every text and number printed is the sheet's
own (row `text`, integer `points`); nothing is recomputed here.
"""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.platypus import Flowable, KeepTogether, Paragraph, Spacer, Table, TableStyle

from scorecard.errors import UserError
from scorecard.pdf_plumbing import text_width
from scorecard.render.styles import Styles
from scorecard.render.text import MINUS, markup, points_text, term_heading
from scorecard.sheet.printed import MEASURE_FIRST_RULE, OTHER_EXPLAINED, pair_missing_text, row_label

RULE = colors.Color(0.55, 0.55, 0.55)
TINT = colors.Color(0.92, 0.92, 0.92)
ZEBRA = colors.Color(0.96, 0.96, 0.96)
PAD = 2.0

def cautions_line(sheet: dict, short_fingerprint: str) -> str:
    """The sheet's cautions, verbatim, as one run printed at the foot of every page, with this sheet's fingerprint."""
    return " ".join(sheet["cautions"]) + f" This sheet's fingerprint: {short_fingerprint}."


class WriteInBox(Flowable):
    """An empty ruled box for a handwritten number."""

    def __init__(self, width: float, height: float, line_width: float = 1.2):
        super().__init__()
        self.width, self.height, self.line_width = width, height, line_width

    def wrap(self, avail_width, avail_height):
        return self.width, self.height

    def draw(self):
        self.canv.setLineWidth(self.line_width)
        self.canv.rect(0, 0, self.width, self.height, stroke=1, fill=0)


class NamedTable(Table):
    """A table whose pieces keep its name when it runs on to the next column or page."""

    def split(self, avail_width, avail_height):
        parts = super().split(avail_width, avail_height)
        for part in parts:
            if hasattr(self, "tracked_as"):
                part.tracked_as = self.tracked_as
        return parts


class Tracked(KeepTogether):
    """A block kept together whose page is recorded once drawn (to say what does not fit on a card)."""

    def __init__(self, flowables, what: str):
        super().__init__(flowables)
        self.what = what
        for f in flowables:
            f.tracked_as = what

    def flowables_tracked(self) -> list[Flowable]:
        """The blocks kept together, each carrying the name, to lead into a block that keeps them itself."""
        return list(self._content)


def points_column_width(styles: Styles) -> float:
    widest = max(text_width(t, styles.body_pt, bold=True) for t in (f"{MINUS}88", "+88"))
    return max(widest, styles.body_pt * 2.6) + 2 * PAD + 2


def _box_height(styles: Styles) -> float:
    return styles.body_pt * 2.0


def term_block(term: dict, styles: Styles, signed: bool, width: float) -> Flowable:
    """Heading (label and unit) with the write-in box beside it, then one row per printed range, category or
    'not measured', each with its points."""
    if term["kind"] == "pair":
        return pair_block(term, styles, signed, width)
    points_w = points_column_width(styles)
    # a wide column would leave the eye a long way to travel from a range to its points: cap the table
    width = min(width, styles.body_pt * 24)
    text_w = width - points_w
    box_w = points_w - 2 * PAD
    data = [[Paragraph(markup(term_heading(term)), styles.heading), WriteInBox(box_w, _box_height(styles))]]
    for row in term["rows"]:
        data.append([Paragraph(markup(row_label(term, row)), styles.body), Paragraph(points_text(row["points"], signed), styles.points)])
    table = NamedTable(data, colWidths=[text_w, points_w], repeatRows=1, hAlign="LEFT")
    commands = [
        ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 0.6), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2),
        ("TOPPADDING", (0, 0), (-1, 0), 1.5), ("BOTTOMPADDING", (0, 0), (-1, 0), 1.5),
        ("BACKGROUND", (0, 0), (0, 0), TINT),
        ("ROWBACKGROUNDS", (0, 1), (-1, -1), [colors.white, ZEBRA]),  # every other row, to keep the eye on its row
        ("LINEBELOW", (0, 0), (-1, 0), 0.8, colors.black),
        ("LINEBELOW", (0, 1), (-1, -2), 0.3, RULE),
        ("BOX", (0, 0), (-1, -1), 0.8, colors.black),
    ]
    table.setStyle(TableStyle(commands))
    return Tracked([table, Spacer(1, styles.body_pt * 0.6)], what=term["label"])


def pair_block(term: dict, styles: Styles, signed: bool, width: float) -> Flowable:
    """A pair term as a small grid: rows of the first feature, columns of the second, points in the cells."""
    axis0, axis1 = term["axes"]
    label0, label1 = term["labels"]
    points_w = points_column_width(styles)
    n_cols = len(axis1["rows"])
    box_w = points_w - 2 * PAD

    def axis_title(label, axis):
        unit = axis.get("unit")
        return f"{label} ({unit})" if unit else label

    # row labels get what their longest text needs (within a third to a half of the width), the cells share the rest
    needed = max([text_width(axis_title(label0, axis0), styles.body_pt)]
                 + [text_width(r["text"], styles.body_pt) for r in axis0["rows"]]) + 2 * PAD + 2
    first_w = min(width * 0.5, max(width * 0.3, needed))
    # a cell must hold its column's printed range on one line and the widest points
    widest_points = max(text_width(points_text(p, signed), styles.body_pt, bold=True) for row in term["points"] for p in row)
    min_cell = max([widest_points] + [text_width(r["text"], styles.body_pt) for r in axis1["rows"]]) + 2 * PAD + 1
    box_cells = 1 if n_cols == 1 else 2  # the write-in box sits over the last one or two cells
    min_first = max(text_width(w, styles.body_pt) for r in axis0["rows"] for w in r["text"].split()) + 2 * PAD + 2
    if min_first + n_cols * min_cell > width + 0.01 or box_cells * min_cell < points_w - 0.01:
        raise UserError(
            f"the grid {term_heading(term)!r} needs {min_first + n_cols * min_cell:.0f} pt across at "
            f"{styles.body_pt:g} pt but a column of this layout is {width:.0f} pt wide; use a layout with fewer "
            "columns or wider paper")
    cell_w = (width - first_w) / n_cols
    if cell_w < min_cell:  # many columns: give the cells their minimum and let the row labels wrap
        cell_w = min_cell
        first_w = width - n_cols * cell_w

    # the write-in box sits over the last one or two cells; the heading spans the others
    box = WriteInBox(box_w, _box_height(styles))
    title = Paragraph(markup(f"{term_heading(term)}: both together"), styles.heading)
    # the box sits over the last cell when it is wide enough, else over the last two; the heading spans the
    # rest (a heading squeezed into the row-label column alone wrapped to six lines in a narrow column)
    box_span = 1 if n_cols == 1 or cell_w >= points_w else 2
    heading = [title] + [""] * (n_cols - box_span) + [box] + [""] * (box_span - 1)
    # the second feature's name spans its columns, the first feature's name heads the row labels
    over = [""] + [Paragraph(markup(axis_title(label1, axis1)), styles.body_center)] + [""] * (n_cols - 1)
    header = [Paragraph(markup(axis_title(label0, axis0)), styles.body)] + [
        Paragraph(markup(r["text"]), styles.body_center) for r in axis1["rows"]]
    data = [heading, over, header]
    for i, row in enumerate(axis0["rows"]):
        data.append([Paragraph(markup(row["text"]), styles.body)]
                    + [Paragraph(points_text(p, signed), styles.points_center) for p in term["points"][i]])
    words, missing = pair_missing_text(term)
    tail = f" <b>{markup(points_text(missing, signed))}</b>" if missing is not None else ""
    data.append([Paragraph(markup(words) + tail, styles.body)] + [""] * n_cols)
    last = len(data) - 1
    col_widths = [first_w] + [cell_w] * n_cols
    table = NamedTable(data, colWidths=col_widths, hAlign="LEFT")
    commands = [
        ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 0.6), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2),
        ("BACKGROUND", (0, 0), (-1 - box_span, 0), TINT),
        ("LINEBELOW", (0, 0), (-1, 0), 0.8, colors.black),
        ("SPAN", (1, 1), (-1, 1)),
        ("ALIGN", (-1, 0), (-1, 0), "RIGHT"),
        ("GRID", (1, 2), (-1, last - 1), 0.3, RULE),
        ("LINEBELOW", (0, 2), (-1, -2), 0.3, RULE),
        ("LINEBELOW", (0, 2), (-1, 2), 0.8, colors.black),
        ("SPAN", (0, last), (-1, last)),
        ("BOX", (0, 0), (-1, -1), 0.8, colors.black),
    ]
    if n_cols > box_span:
        commands.append(("SPAN", (0, 0), (-1 - box_span, 0)))
    if box_span == 2:
        commands += [("SPAN", (-2, 0), (-1, 0)), ("ALIGN", (-2, 0), (-1, 0), "RIGHT")]
    table.setStyle(TableStyle(commands))
    return Tracked([table, Spacer(1, styles.body_pt * 0.6)], what=term_heading(term))


def total_block(styles: Styles, width: float, compact: bool = False) -> Flowable:
    """The box for the sum of the term boxes, and where to read the risk. A card (compact) is kept and reused,
    so it asks for the sum of the rows found, not of boxes written on it."""
    points_w = points_column_width(styles)
    box = WriteInBox(points_w + styles.body_pt, styles.body_pt * 2.6, line_width=2)
    how = "add the points of the rows found" if compact else "add the boxes of every table"
    data = [[Paragraph(f"<b>TOTAL POINTS</b> ({how})", styles.heading), box],
            [Paragraph("Read the risk for this total in the conversion table.", styles.body), ""]]
    table = Table(data, colWidths=[width - box.width - 2 * PAD - 2, box.width + 2 * PAD + 2], hAlign="LEFT")
    table.setStyle(TableStyle([
        ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
        ("SPAN", (1, 0), (1, 1)),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("BOX", (0, 0), (-1, -1), 1.2, colors.black),
        ("BACKGROUND", (0, 0), (0, -1), TINT),
    ]))
    return Tracked([table, Spacer(1, styles.body_pt * 0.6)], what="the total box")


RECORD_FIELDS = ("Patient identifier", "Date and time scored", "Scored by (name, role)", "Total points")


def record_block(sheet: dict, styles: Styles, width: float) -> Flowable:
    """Where the scoring is recorded, so the sheet kept in the notes says who scored whom, when, and what
    was done: patient, date and time, scorer, total, band (ringed) and the action taken under local protocol."""
    label_w = max(text_width(f, styles.body_pt) for f in RECORD_FIELDS + ("Action taken",)) + 2 * PAD + 4
    line_h = styles.body_pt * 2.1
    rows = [[Paragraph(markup(f), styles.body), ""] for f in RECORD_FIELDS]
    bands = [b["name"] for b in sheet.get("bands") or []]
    spans = [("SPAN", (0, 0), (-1, 0))]
    heights = [line_h] * len(rows)
    if bands:
        choices = "   /   ".join(bands)
        if text_width(choices, styles.body_pt) + 2 * PAD + 1 <= width - label_w:
            rows.append([Paragraph("Band (ring one)", styles.body), Paragraph(markup(choices), styles.body)])
            heights.append(line_h)
        else:  # a narrow column: the band names go on a line of their own under the label, not into the rule
            rows.append([Paragraph("Band (ring one)<br/>" + markup(choices), styles.body), ""])
            spans.append(("SPAN", (0, len(rows)), (-1, len(rows))))
            heights.append(line_h + styles.body.leading)
    rows += [[Paragraph("Action taken", styles.body), ""], ["", ""]]
    heights += [line_h, line_h]
    title = [[Paragraph("<b>RECORD OF THIS SCORING</b> (keep with the patient's notes)", styles.heading), ""]]
    table = Table(title + rows, colWidths=[label_w, width - label_w], rowHeights=[None] + heights, hAlign="LEFT")
    table.setStyle(TableStyle(spans + [
        ("VALIGN", (0, 0), (-1, -1), "BOTTOM"),
        ("LEFTPADDING", (0, 0), (-1, -1), PAD), ("RIGHTPADDING", (0, 0), (-1, -1), PAD),
        ("BACKGROUND", (0, 0), (-1, 0), TINT),
        ("LINEBELOW", (1, 1), (1, -1), 0.5, colors.black),  # the write-in lines
        ("LINEBELOW", (0, -1), (0, -1), 0.5, colors.black),
        ("BOX", (0, 0), (-1, -1), 1.0, colors.black),
    ]))
    return Tracked([table, Spacer(1, styles.body_pt * 0.6)], what="the record fields")


def _paragraphs(lines: list[str], style, what: str, title: str, styles: Styles, compact: bool = False) -> Flowable:
    if compact:
        lines = [" ".join(lines)]
    flow = [Paragraph(markup(title), styles.section), Spacer(1, 2)]
    for line in lines:
        flow.append(Paragraph(line, style))
        flow.append(Spacer(1, 2))
    flow.append(Spacer(1, styles.body_pt * (0.1 if compact else 0.4)))
    return Tracked(flow, what=what)


def instructions_block(sheet: dict, styles: Styles, compact: bool = False) -> Flowable:
    steps = [
        f"1. {markup(sheet['rounding_rule'])}",
        ("2. In each table find the patient's row and note its points. " if compact else
         "2. In each table find the patient's row and write its points in the box beside the table's heading. ")
        + markup(MEASURE_FIRST_RULE),
        "3. Add the points and write the sum in the TOTAL POINTS box." if not compact else
        "3. Add the points: that is the total.",
        "4. Find the total in the conversion table and read the risk." + (
            " Record the total, band and action in the patient's notes." if compact else
            " Fill in the record of this scoring."),
    ]
    if sheet["outcome"].get("score_at"):
        steps.insert(0, f"When to score: {markup(sheet['outcome']['score_at'])}.")
    return _paragraphs(steps, styles.body, "the scoring steps", "How to score", styles, compact)


def dropped_label(sheet: dict, dropped: dict) -> str:
    """What a reader knows a left-off term by: its own `label` when the entry carries one, else the label the
    sheet prints for that feature elsewhere (a pair grid's axis), else its name with '_' read as spaces."""
    if dropped.get("label"):
        return dropped["label"]
    name = dropped["name"]
    for term in sheet["terms"]:
        if term.get("feature") == name or term.get("name") == name:
            return term["label"]
        for feature, label in zip(term.get("features") or [], term.get("labels") or []):
            if feature == name:
                return label
    return name.replace("_", " ")


def ranges_block(sheet: dict, styles: Styles, training_ranges: list[str], compact: bool = False) -> Flowable:
    """What to do outside the printed ranges and for values not measured; the terms left off the sheet."""
    lines = [
        "A value below the first printed row or above the last belongs to that end row (the rows marked "
        "\u2264 and \u2265).",
    ]
    if training_ranges:
        lines.append("The model was not trained beyond these ranges, so points for values outside them are less "
                     "certain: " + "; ".join(markup(t) for t in training_ranges) + ".")
    lines.append(f"Not measured: use the \u2018not measured\u2019 row. {MEASURE_FIRST_RULE}")
    if any(r.get("other") for t in sheet["terms"] if t["kind"] == "categorical" for r in t["rows"]):
        lines.append(markup(OTHER_EXPLAINED))
    if sheet.get("dropped_terms"):
        dropped = "; ".join(markup(f"{dropped_label(sheet, d)} ({d.get('printed') or d['reason']})")
                            for d in sheet["dropped_terms"])
        lines.append(f"Left off this sheet: {dropped}.")
    return _paragraphs(lines, styles.body, "the range rules", "Outside the printed ranges", styles, compact)


def _checked_by_line(width: float, size: float) -> str:
    """'Approved version checked by: ____ date: ____' with blanks as long as fit on one line (at most 20 and 12)."""
    words = "Approved version checked by:  date: "
    room = width - text_width(words, size) - size
    n = max(6, min(32, int(room // text_width("_", size))))
    name, date = max(4, min(20, n * 5 // 8)), max(4, min(12, n - n * 5 // 8))
    return f"Approved version checked by: {'_' * name}  date: {'_' * date}"


def cautions_block(sheet: dict, styles: Styles, short_fingerprint: str, width: float, compact: bool = False,
                   run_together: bool | None = None) -> Flowable:
    """The cautions in full inside a box, with a place to confirm the fingerprint was checked (not on a card).
    `run_together` (default: `compact`) prints the items as one paragraph, which in a narrow column takes
    about half the height of one item a line."""
    items = [markup(c) for c in sheet["cautions"]] + [
        f"This sheet's fingerprint, printed on every page: <b>{markup(short_fingerprint)}</b>."]
    lines = [Paragraph("Before you use this sheet", styles.section)]
    run_together = compact if run_together is None else run_together
    if run_together:
        lines.append(Paragraph(" ".join(f"\u2022 {c}" for c in items), styles.body))
    else:
        lines += [Paragraph(f"\u2022 {c}", styles.body) for c in items]
    if not compact:  # a card is checked against the ward sheet it was cut from
        lines.append(Paragraph(_checked_by_line(width - 8, styles.body_pt), styles.body))
    table = Table([[line] for line in lines], colWidths=[width], hAlign="LEFT")
    table.setStyle(TableStyle([
        ("BOX", (0, 0), (-1, -1), 1.0, colors.black),
        ("LEFTPADDING", (0, 0), (-1, -1), 4), ("RIGHTPADDING", (0, 0), (-1, -1), 4),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
        ("TOPPADDING", (0, -1), (-1, -1), styles.body_pt * (0.5 if run_together else 0.9)),
    ]))
    return Tracked([Spacer(1, styles.body_pt * (0.2 if run_together else 0.5)), table], what="the cautions")
