"""The nomogram: one line per item, each carrying its own points, and one dual scale from total to risk.

Every item is a line on a common points scale (so a longer line weighs more); at each tick the patient's values
are printed above the line and the points they earn are printed in a box under the same tick, so nothing has to
be carried across to a shared ruler. A term whose points do not simply rise or fall with the measurement (a
U-shape) is drawn folded: rows with the same points share one tick ("≤ 129 / ≥ 150"), so the line reads like
its stepped table. Pair terms cannot be one line; theirs points to the grid on the table page. The readout is a
single scale: totals above it, the risk of each total below it at the same tick, and the risk bands shaded
along it. When the nomogram does not fit the space left, it splits between items.
"""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.lib import colors
from reportlab.platypus import FrameBreak, Flowable, Paragraph, Spacer

from scorecard.render.conversion import band_tint, row_bands
from scorecard.pdf_plumbing import BOLD, REGULAR, text_width, wrap_words
from scorecard.render.styles import Styles
from scorecard.render.text import points_text, term_heading, total_text

ORDER = [1, -1, 2, -2, 3, -3, 4, -4] + [k * s for k in range(5, 100) for s in (1, -1)]  # above 1, below 1, ...


@dataclass
class _Label:
    text: str
    tick_x: float
    x: float  # centre as drawn
    width: float
    level: int  # 1, 2, ... above the axis (positive) or below (negative): the line nearest the axis
    lines: tuple[str, ...] = ()  # as drawn, top line first: the text, or its parts stacked when they share a tick
    stacked: tuple[str, ...] = ()  # the parts, one a line, tried when the text on one line finds no place
    size: float = 0.0
    points: str = ""  # the points of this tick, printed in a box between the line and the values
    pad: float = 0.0  # room on each side of the points inside their box

    def __post_init__(self):
        self.lines = self.lines or (self.text,)

    @property
    def slots(self) -> int:
        """Lines the tag takes from its level outwards: the points box and the value lines."""
        return len(self.lines) + (1 if self.points else 0)


def _fits(label: _Label, level: int, spans: dict, leaders: list, gap: float, mind_leaders: bool = True) -> bool:
    """Whether `label` (its lines from `level` outwards) clears every label and leader placed so far."""
    sign, depth, n = (1 if level > 0 else -1), abs(level), label.slots
    half = label.width / 2
    lo, hi = label.x - half - gap, label.x + half + gap
    for d in range(depth, depth + n):
        if any(a < hi and lo < b for a, b in spans.get(sign * d, [])):
            return False
    if not mind_leaders:
        return True
    # its own leader passes the nearer levels on its side: no label there may sit on it
    if any(a - gap / 2 < label.tick_x < b + gap / 2 for d in range(1, depth) for a, b in spans.get(sign * d, [])):
        return False
    # nor may it cover the leader of a label further out on its side
    return not any(lv * sign > depth and lo < x < hi for lv, x in leaders)


def _place(labels: list[_Label], left: float, right: float, gap: float, order: list[int]) -> list[_Label]:
    """Give each label the first level of `order` (e.g. above 1, above 2, ...) where it clears every other label and
    every leader line: a label further out than the first level is joined to its tick by a vertical leader,
    which must not run through a nearer label, and no nearer label may be laid over an earlier leader. Labels
    of several values sharing a tick are stacked, a value a line, when that is what lets every label find a
    place near the axis. Labels are kept inside [left, right]; shifted inwards they still cover their own
    tick, so a leader is always straight up or down from the tick."""
    # greedy passes in a few orders: along the axis, or narrow labels first (so a wide label that would cover a
    # neighbour's tick goes further out instead, its own leader clear of the narrow one)
    orderings = ("along", "narrow first", "backwards")
    best = None
    for stack in (False, True):
        for ordering in orderings:
            levels, crossed = _place_once(labels, left, right, gap, stack, order, ordering)
            score = (crossed, max((abs(lv) for lv in levels), default=0))
            if best is None or score < best[0]:
                best = (score, stack, ordering)
            if score[0] == 0 and score[1] <= 2:
                break
        if best[0][0] == 0 and best[0][1] <= 4:
            break
    _place_once(labels, left, right, gap, best[1], order, best[2])
    return labels


def _place_once(labels: list[_Label], left: float, right: float, gap: float, stack: bool,
                order: list[int], ordering: str = "along") -> tuple[list[int], int]:
    """One greedy pass; the outermost level of each label and how many leaders had to cross a label."""
    crossed = 0
    spans: dict[int, list[tuple[float, float]]] = {}
    leaders: list[tuple[int, float]] = []  # (level, x) of labels beyond the first level
    for label in labels:
        label.lines = label.stacked if stack and len(label.stacked) > 1 else (label.text,)
        label.width = max([text_width(line, label.size) for line in label.lines]
                          + [text_width(label.points, label.size, True) + 2 * label.pad])
        label.x = min(max(label.tick_x, left + label.width / 2), right - label.width / 2)
    keys = {"along": lambda l: l.tick_x, "backwards": lambda l: -l.tick_x, "narrow first": lambda l: (l.width, l.tick_x)}
    for label in sorted(labels, key=keys[ordering]):
        chosen = next((lv for lv in order if _fits(label, lv, spans, leaders, gap)), None)
        if chosen is None:  # no place clears every leader: clear the labels at least
            chosen = next(lv for lv in order if _fits(label, lv, spans, leaders, gap, mind_leaders=False))
            crossed += 1
        label.level = chosen
        sign, depth = (1 if chosen > 0 else -1), abs(chosen)
        for d in range(depth, depth + label.slots):
            spans.setdefault(sign * d, []).append((label.x - label.width / 2, label.x + label.width / 2))
        if depth > 1:
            leaders.append((chosen, label.tick_x))
    return [l.level + (l.slots - 1) * (1 if l.level > 0 else -1) for l in labels], crossed


class _TermAxis:
    """One item: its heading on the left; on its line, the values above each tick and the points boxed below."""

    def __init__(self, term: dict, signed: bool, styles: Styles):
        self.term = term
        self.heading = term_heading(term)
        self.signed = signed
        self.styles = styles
        self.is_pair = term["kind"] == "pair"
        groups: dict[int, list[str]] = {}
        if not self.is_pair:
            for row in term["rows"]:
                groups.setdefault(int(row["points"]), []).append(row["text"])
        self.groups = dict(sorted(groups.items()))
        self.labels: list[_Label] = []

    def layout(self, x_of, left: float, right: float, label_col: float) -> float:
        s = self.styles.body_pt
        self.line_h = s * 1.35
        self.heading_lines = wrap_words(self.heading, s, label_col, bold=True)
        if self.is_pair:
            lo = min(min(r) for r in self.term["points"])
            hi = max(max(r) for r in self.term["points"])
            self.note = (f"{points_text(lo, self.signed)} to {points_text(hi, self.signed)} points: "
                         "read them from the grid on the points-table page")
            self.note_lines = wrap_words(self.note, s, right - left, bold=False)
            body_h = len(self.note_lines) * self.line_h
            self.axis_y_from_top = 0
        else:
            # one tag per tick: the points in a box next to the line, the values beyond it
            labels = [_Label(" / ".join(texts), x_of(p), 0, 0, 0,
                             stacked=tuple(f"{t} /" for t in texts[:-1]) + (texts[-1],), size=s,
                             points=points_text(p, self.signed), pad=s * 0.3)
                      for p, texts in self.groups.items()]
            self.labels = _place(labels, left, right, gap=s * 0.8, order=ORDER)
            self.above = max([l.level + l.slots - 1 for l in self.labels if l.level > 0] or [0])
            self.below = max([-l.level + l.slots - 1 for l in self.labels if l.level < 0] or [0])
            self.axis_y_from_top = self.above * self.line_h + s * 0.4
            body_h = self.axis_y_from_top + self.below * self.line_h + s * 0.5
        self.height = max(body_h, len(self.heading_lines) * self.line_h) + s * 0.7
        return self.height

    def draw(self, canv, top: float, x_of) -> None:
        s = self.styles.body_pt
        canv.setFont(BOLD, s)
        canv.setFillColor(colors.black)
        for i, line in enumerate(self.heading_lines):
            canv.drawString(0, top - (i + 1) * self.line_h + s * 0.25, line)
        if self.is_pair:
            canv.setFont(REGULAR, s)
            for i, line in enumerate(self.note_lines):
                canv.drawString(self.left, top - (i + 1) * self.line_h + s * 0.25, line)
            return
        axis_y = top - self.axis_y_from_top - s * 0.35
        xs = [x_of(p) for p in self.groups]
        canv.setLineWidth(1.2)
        canv.setStrokeColor(colors.black)
        canv.line(min(xs), axis_y, max(xs), axis_y)
        for x in xs:
            canv.line(x, axis_y - 3, x, axis_y + 3)
        canv.setLineWidth(0.4)
        for label in self.labels:
            sign, first = (1 if label.level > 0 else -1), abs(label.level)
            slots = [label.points, *label.lines]  # nearest the line first: the points box, then the values
            if sign > 0:
                slots = [label.points, *reversed(label.lines)]  # above, the last value line sits on the box
            for i, text in enumerate(slots):
                depth = first + i
                if sign > 0:
                    bottom = axis_y + 4 + (depth - 1) * self.line_h
                else:
                    bottom = axis_y - 4 - depth * self.line_h
                baseline = bottom + (self.line_h - s * 0.7) / 2
                if i == 0:
                    if first > 1:  # straight from the tick to its box, which the tag covers
                        canv.setLineWidth(0.4)
                        canv.line(label.tick_x, axis_y, label.tick_x, bottom if sign > 0 else bottom + self.line_h)
                    w = text_width(text, s, True) + 2 * label.pad
                    canv.setLineWidth(0.9)
                    canv.rect(label.x - w / 2, bottom + s * 0.08, w, self.line_h - s * 0.16, stroke=1, fill=0)
                    canv.setFont(BOLD, s)
                else:
                    canv.setFont(REGULAR, s)
                canv.drawCentredString(label.x, baseline, text)


class NomogramBlock(Flowable):
    """The item lines (and the total-to-risk scale on the last part); splits between items."""

    def __init__(self, sheet: dict, styles: Styles, signed: bool, terms: list[dict] | None = None,
                 with_total: bool = True, continued: bool = False, page_height: float | None = None):
        super().__init__()
        self.sheet, self.styles, self.signed = sheet, styles, signed
        self.page_height = page_height  # a full frame's height, to share the last two pages evenly
        self.terms = sheet["terms"] if terms is None else terms
        self.with_total, self.continued = with_total, continued
        rows = [r["points"] for t in sheet["terms"] if t["kind"] != "pair" for r in t["rows"]]
        pair_points = [p for t in sheet["terms"] if t["kind"] == "pair" for row in t["points"] for p in row]
        all_points = rows + pair_points + [0]
        self.p_lo, self.p_hi = min(all_points), max(all_points)
        if self.p_hi == self.p_lo:
            self.p_hi = self.p_lo + 1
        self.tracked_as = "the nomogram"

    # geometry ---------------------------------------------------------------------------------------
    def _geometry(self, width: float) -> None:
        s = self.styles.body_pt
        # the label column holds every heading (wrapped at words, never inside one) and the scale's names on one line
        widest_word = max(text_width(w, s, bold=True) for t in self.sheet["terms"] for w in term_heading(t).split())
        fixed = max(text_width(t, s, bold=True) for t in (TOTAL_NAME, RISK_NAME))
        longest = max(text_width(term_heading(t), s, True) for t in self.sheet["terms"])
        self.label_col = max(widest_word, fixed, min(width * 0.3, longest))
        self.left = self.label_col + s * 1.5
        self.right = width - s * 0.5
        end_room = max(text_width("88", s), s * 2)
        self.axis_left, self.axis_right = self.left + end_room, self.right - end_room
        self.line_h = s * 1.3
        self.key_lines = wrap_words(self._band_key(), s, width, bold=False) if self.with_total else []

    def _band_key(self) -> str:
        names = [b["name"] for b in self.sheet.get("bands") or []]
        if not names:
            return ""
        spans = []
        for first, last, band in self._band_segments():
            span = total_text(first) if first == last else f"{total_text(first)} to {total_text(last)}"
            spans.append(f"{names[band]} {span}")
        return "Shading: the risk bands by total points, " + "; ".join(spans) + "."

    def x_of(self, points: float) -> float:
        return self.axis_left + (points - self.p_lo) / (self.p_hi - self.p_lo) * (self.axis_right - self.axis_left)

    def _total_x(self, total: float) -> float:
        lo, hi = self.sheet["total"]["min"], self.sheet["total"]["max"]
        span = max(1, hi - lo)
        return self.axis_left + (total - lo) / span * (self.axis_right - self.axis_left)

    def _axes(self) -> list[_TermAxis]:
        axes = []
        for term in self.terms:
            axis = _TermAxis(term, self.signed, self.styles)
            axis.left = self.left
            axis.layout(self.x_of, self.left, self.right, self.label_col)
            axes.append(axis)
        return axes

    def _head_height(self) -> float:
        return self.styles.body_pt * (1.8 if self.continued else 0.6)

    def _total_height(self) -> float:
        if not self.with_total:
            return 0.0
        key = [line for line in self.key_lines if line]
        return self.styles.body_pt * (7.6 + 1.3 * len(key))

    def wrap(self, avail_width, avail_height):
        self._geometry(avail_width)
        self._term_axes = self._axes()
        self.width = avail_width
        self.height = self._head_height() + sum(a.height for a in self._term_axes) + self._total_height()
        return self.width, self.height

    def split(self, avail_width, avail_height):
        self.wrap(avail_width, avail_height)
        if self.height <= avail_height:
            return [self]
        used = self._head_height()
        k = 0
        for axis in self._term_axes:
            if used + axis.height > avail_height:
                break
            used += axis.height
            k += 1
        if k == len(self._term_axes) and self.with_total:
            k -= 1  # keep at least one item beside the total-to-risk scale rather than the scale alone
        if k == 0:
            return []
        even = self._even_split(k, avail_height)
        first = NomogramBlock(self.sheet, self.styles, self.signed, self.terms[:even], with_total=False,
                              continued=self.continued, page_height=self.page_height)
        rest = NomogramBlock(self.sheet, self.styles, self.signed, self.terms[even:], with_total=self.with_total,
                             continued=True, page_height=self.page_height)
        # a part shortened to share the pages evenly leaves room the rest must not run into
        return [first, FrameBreak(), rest] if even < k else [first, rest]

    def _even_split(self, k: int, avail_height: float) -> int:
        """When what follows the first k items fits one full page, move items over until the two parts are about
        the same height, so the last page does not hold one item and the scale alone."""
        if not self.page_height:
            return k
        heights = [a.height for a in self._term_axes]
        head = self.styles.body_pt * 1.8  # the part after the split is a continuation

        def rest(j):  # the part after the first j items, on a page of its own
            return head + sum(heights[j:]) + self._total_height()

        if rest(k) > self.page_height:
            return k
        best = k
        for j in range(k, 0, -1):
            first = self._head_height() + sum(heights[:j])
            if rest(j) > self.page_height or first > avail_height:
                break
            if abs(first - rest(j)) < abs(self._head_height() + sum(heights[:best]) - rest(best)):
                best = j
        return best

    # drawing ----------------------------------------------------------------------------------------
    def _tick_step(self, x_of, lo: int, hi: int, label_w: float) -> int:
        step = 1
        while step < max(1, hi - lo) and abs(x_of(lo + step) - x_of(lo)) < label_w:
            step = {1: 2, 2: 5, 5: 10}.get(step, step * 2)
        return step

    def _risk_step(self, step: int, lo: int, hi: int, risks: dict[int, str], s: float) -> int:
        """The finest labelling step (from `step` up) at which neighbouring risk labels do not touch."""
        candidates = [n for n in (1, 2, 5, 10, 20, 25, 50, 100, 200, 500) if n >= step] or [step]
        for n in candidates:
            shown = [t for t in range(lo, hi + 1) if t % n == 0]
            widths = [text_width(risks[t], s) for t in shown]
            if all(self._total_x(b) - self._total_x(a) >= (wa + wb) / 2 + s * 0.5
                   for a, b, wa, wb in zip(shown, shown[1:], widths, widths[1:])):
                return n
        return candidates[-1]

    def draw(self):
        c = self.canv
        s = self.styles.body_pt
        top = self.height
        if self.continued:
            c.setFont(BOLD, s)
            c.setFillColor(colors.black)
            c.drawString(0, top - s * 1.1, "Nomogram (continued)")
        top -= self._head_height()
        for axis in self._term_axes:
            axis.draw(c, top, self.x_of)
            top -= axis.height
        if self.with_total:
            self._draw_total(top)

    def _band_segments(self) -> list[tuple[int, int, int]]:
        """(first total, last total, band index) of each run of totals in one band, in order."""
        bands = row_bands(self.sheet)
        segments: list[tuple[int, int, int]] = []
        for row, band in zip(self.sheet["conversion"], bands):
            if band is None:
                continue
            if segments and segments[-1][2] == band and segments[-1][1] == row["total"] - 1:
                segments[-1] = (segments[-1][0], row["total"], band)
            else:
                segments.append((row["total"], row["total"], band))
        return segments

    def _draw_total(self, top: float) -> None:
        """One scale: the totals above it, each total's risk under the same tick, the bands shaded along it."""
        c = self.canv
        s = self.styles.body_pt
        lo, hi = self.sheet["total"]["min"], self.sheet["total"]["max"]
        c.setStrokeColor(colors.black)
        c.setLineWidth(0.8)
        c.line(0, top - s * 0.5, self.width, top - s * 0.5)
        strip_top = top - s * 3.2
        strip_h = s * 1.6
        strip_bottom = strip_top - strip_h
        half = (self._total_x(lo + 1) - self._total_x(lo)) / 2 if hi > lo else s
        names = [b["name"] for b in self.sheet.get("bands") or []]
        segments = self._band_segments()
        for first, last, band in segments:
            x0, x1 = self._total_x(first) - half, self._total_x(last) + half
            c.setFillColor(band_tint(band, len(names)))
            c.rect(x0, strip_bottom, x1 - x0, strip_h, stroke=1, fill=1)
            c.setFillColor(colors.black)
            c.setFont(BOLD, s)
            if text_width(names[band], s, True) + s < x1 - x0:
                c.drawCentredString((x0 + x1) / 2, strip_bottom + (strip_h - s * 0.7) / 2, names[band])
        if not segments:
            c.setLineWidth(1.4)
            c.rect(self._total_x(lo) - half, strip_bottom, self._total_x(hi) - self._total_x(lo) + 2 * half, strip_h,
                   stroke=1, fill=0)
        c.setFont(BOLD, s)
        c.drawString(0, strip_top + s * 0.5, TOTAL_NAME)
        c.drawString(0, strip_bottom - s * 1.5, RISK_NAME)
        label_w = max(text_width(total_text(t), s) for t in (lo, hi)) + s * 0.6
        step = self._tick_step(self._total_x, lo, hi, label_w)
        risks = {r["total"]: r["text"] for r in self.sheet["conversion"]}
        step = self._risk_step(step, lo, hi, risks, s)
        c.setFont(REGULAR, s)
        for t in range(lo, hi + 1):
            x = self._total_x(t)
            labelled = t % step == 0
            c.setLineWidth(0.8 if labelled else 0.5)
            c.line(x, strip_top, x, strip_top + (4 if labelled else 2))
            c.line(x, strip_bottom, x, strip_bottom - (4 if labelled else 2))
            if labelled:
                # the total above the scale and its risk under the same tick
                c.drawCentredString(x, strip_top + s * 0.5, total_text(t))
                c.drawCentredString(x, strip_bottom - s * 1.5, risks[t])
        for i, line in enumerate(k for k in self.key_lines if k):
            c.drawString(0, strip_bottom - s * (3.3 + 1.3 * i), line)


TOTAL_NAME = "Total points"
RISK_NAME = "Risk"


def nomogram_block(sheet: dict, styles: Styles, signed: bool, page_height: float | None = None) -> list[Flowable]:
    title = Paragraph("Nomogram", styles.section)
    how = Paragraph(
        "For each item find the patient's value on its line; the boxed number between that value and the line is "
        "its points. Add the points of every item. Find the total above the scale at the bottom and read the risk "
        "printed under it; the shading along the scale shows the risk band. Values printed together (\u201c/\u201d) "
        "share one tick. Longer lines weigh more. The points tables are the reference; use the nomogram to see how "
        "each item weighs.", styles.body)
    return [title, Spacer(1, 3), how, Spacer(1, styles.body_pt * 0.8), NomogramBlock(sheet, styles, signed, page_height=page_height)]
