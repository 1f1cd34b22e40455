"""The nomogram: a points ruler on top, one axis per term below it on the same scale, then a total-points axis
with the risk written under each total, aligned.

A term whose points do not simply rise or fall with the measurement (a U-shape) is drawn folded: every row
sits at the tick of its own points, and rows with the same points share one tick ("≤ 129 / ≥ 150"), so the
axis reads like its stepped table. Pair terms cannot be one axis; their line points to the grid on the
table page. When the nomogram does not fit the space left, it splits between terms and the ruler is drawn
again on top of each part.
"""

from __future__ import annotations

from dataclasses import dataclass

from reportlab.lib import colors
from reportlab.platypus import FrameBreak, Flowable, Paragraph, Spacer

from scorecard.render.fonts import BOLD, REGULAR, text_width
from scorecard.render.styles import Styles
from scorecard.render.text import points_text, term_heading, total_text

GUIDE = colors.Color(0.82, 0.82, 0.82)


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

    def __post_init__(self):
        self.lines = self.lines or (self.text,)


def _wrap_words(text: str, size: float, width: float, bold: bool) -> list[str]:
    lines, current = [], ""
    for word in text.split():
        trial = f"{current} {word}".strip()
        if current and text_width(trial, size, bold) > width:
            lines.append(current)
            current = word
        else:
            current = trial
    if current:
        lines.append(current)
    return lines or [""]


def _fits(label: _Label, level: int, spans: dict, leaders: list, gap: float, mind_leaders: bool = True) -> bool:
    """Whether `label` (its lines from `level` outwards) clears every label and leader placed so far."""
    sign, depth, n = (1 if level > 0 else -1), abs(level), len(label.lines)
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


def _place(labels: list[_Label], left: float, right: float, gap: float) -> list[_Label]:
    """Give each label the first level (above 1, below 1, above 2, ...) where it clears every other label and
    every leader line: a label further out than the first level is joined to its tick by a vertical leader,
    which must not run through a nearer label, and no nearer label may be laid over an earlier leader. Labels
    of several values sharing a tick are stacked, a value a line, when that is what lets every label find a
    place near the axis. Labels are kept inside [left, right]; shifted inwards they still cover their own
    tick, so a leader is always straight up or down from the tick."""
    best = None
    for stack in (False, True):
        levels, crossed = _place_once(labels, left, right, gap, stack)
        score = (crossed, max((abs(lv) for lv in levels), default=0))
        if best is None or score < best[0]:
            best = (score, stack)
        if score[0] == 0 and score[1] <= 4:
            break
    _place_once(labels, left, right, gap, best[1])
    return labels


def _place_once(labels: list[_Label], left: float, right: float, gap: float, stack: bool) -> tuple[list[int], int]:
    """One greedy pass; the outermost level of each label and how many leaders had to cross a label."""
    crossed = 0
    spans: dict[int, list[tuple[float, float]]] = {}
    leaders: list[tuple[int, float]] = []  # (level, x) of labels beyond the first level
    order = [1, -1, 2, -2, 3, -3, 4, -4] + [k * s for k in range(5, 100) for s in (1, -1)]
    for label in sorted(labels, key=lambda l: l.tick_x):
        label.lines = label.stacked if stack and len(label.stacked) > 1 else (label.text,)
        label.width = max(text_width(line, label.size) for line in label.lines)
        label.x = min(max(label.tick_x, left + label.width / 2), right - label.width / 2)
        chosen = next((lv for lv in order if _fits(label, lv, spans, leaders, gap)), None)
        if chosen is None:  # no place clears every leader: clear the labels at least
            chosen = next(lv for lv in order if _fits(label, lv, spans, leaders, gap, mind_leaders=False))
            crossed += 1
        label.level = chosen
        sign, depth = (1 if chosen > 0 else -1), abs(chosen)
        for d in range(depth, depth + len(label.lines)):
            spans.setdefault(sign * d, []).append((label.x - label.width / 2, label.x + label.width / 2))
        if depth > 1:
            leaders.append((chosen, label.tick_x))
    return [l.level + (len(l.lines) - 1) * (1 if l.level > 0 else -1) for l in labels], crossed


class _TermAxis:
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

    def layout(self, x_of, left: float, right: float, label_col: float) -> float:
        s = self.styles.body_pt
        self.line_h = s * 1.3
        self.heading_lines = _wrap_words(self.heading, s, label_col, bold=True)
        if self.is_pair:
            lo = min(min(r) for r in self.term["points"])
            hi = max(max(r) for r in self.term["points"])
            self.note = (f"{points_text(lo, self.signed)} to {points_text(hi, self.signed)} points: "
                         "read them from the grid on the points-table page")
            self.note_lines = _wrap_words(self.note, s, right - left, bold=False)
            body_h = len(self.note_lines) * self.line_h
            self.axis_y_from_top = 0
        else:
            labels = [_Label(" / ".join(texts), x_of(p), 0, 0, 0,
                             stacked=tuple(f"{t} /" for t in texts[:-1]) + (texts[-1],), size=s)
                      for p, texts in self.groups.items()]
            self.labels = _place(labels, left, right, gap=s * 0.8)
            self.above = max([l.level + len(l.lines) - 1 for l in self.labels if l.level > 0] or [0])
            self.below = max([-l.level + len(l.lines) - 1 for l in self.labels if l.level < 0] or [0])
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
                baseline = top - (i + 1) * self.line_h + s * 0.25
                canv.setFillColor(colors.white)  # the guide lines do not strike through the note
                canv.rect(self.left - 1, baseline - s * 0.25, text_width(line, s) + 2, s * 1.05, stroke=0, fill=1)
                canv.setFillColor(colors.black)
                canv.drawString(self.left, baseline, line)
            return
        axis_y = top - self.axis_y_from_top - s * 0.35
        xs = [x_of(p) for p in self.groups]
        canv.setLineWidth(1.2)
        canv.setStrokeColor(colors.black)
        canv.line(min(xs), axis_y, max(xs), axis_y)
        for x in xs:
            canv.line(x, axis_y - 3, x, axis_y + 3)
        canv.setFont(REGULAR, s)
        canv.setLineWidth(0.4)
        for label in self.labels:
            n = len(label.lines)
            for i, line in enumerate(label.lines):
                # above the axis the last line sits nearest it; below, the first
                depth = abs(label.level) + (n - 1 - i if label.level > 0 else i)
                if label.level > 0:
                    baseline = axis_y + 4 + (depth - 1) * self.line_h + s * 0.2
                else:
                    baseline = axis_y - 4 - depth * self.line_h + s * 0.3
                if depth == abs(label.level) and abs(label.level) > 1:  # straight from the tick, which the label covers
                    edge = baseline - 1 if label.level > 0 else baseline + s * 0.85
                    canv.line(label.tick_x, axis_y, label.tick_x, edge)
                # a white ground so the faint guide lines never strike through a value
                w = text_width(line, s)
                canv.setFillColor(colors.white)
                canv.rect(label.x - w / 2 - 1, baseline - s * 0.25, w + 2, s * 1.05, stroke=0, fill=1)
                canv.setFillColor(colors.black)
                canv.drawCentredString(label.x, baseline, line)


class NomogramBlock(Flowable):
    """Ruler + term axes (+ the total/risk axes on the last part); splits between term axes."""

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
        # the label column holds every heading (wrapped at words, never inside one) and the axis names on one line
        widest_word = max(text_width(w, s, bold=True) for t in self.sheet["terms"] for w in term_heading(t).split())
        fixed = max(text_width(t, s, bold=True) for t in ("Points (continued)", "Total points", "Risk"))
        longest = max(text_width(term_heading(t), s, True) for t in self.sheet["terms"])
        self.label_col = max(widest_word, fixed, min(width * 0.3, longest))
        self.left = self.label_col + s * 1.5
        self.right = width - s * 0.5
        end_room = max(text_width("88", s), s * 2)
        self.axis_left, self.axis_right = self.left + end_room, self.right - end_room
        self.line_h = s * 1.3

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

    def _ruler_height(self) -> float:
        return self.styles.body_pt * 3.2

    def _total_height(self) -> float:
        return self.styles.body_pt * 6.5 if self.with_total else 0.0

    def wrap(self, avail_width, avail_height):
        self._geometry(avail_width)
        self._term_axes = self._axes()
        self.width = avail_width
        self.height = self._ruler_height() + sum(a.height for a in self._term_axes) + self._total_height()
        return self.width, self.height

    def split(self, avail_width, avail_height):
        self.wrap(avail_width, avail_height)
        if self.height <= avail_height:
            return [self]
        used = self._ruler_height()
        k = 0
        for axis in self._term_axes:
            if used + axis.height > avail_height:
                break
            used += axis.height
            k += 1
        if k == len(self._term_axes) and self.with_total:
            k -= 1  # keep at least one term axis beside the total axis rather than a total axis alone
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
        """When what follows the first k axes fits one full page, move axes over until the two parts are about
        the same height, so the last page does not hold one axis and the total alone."""
        if not self.page_height:
            return k
        heights = [a.height for a in self._term_axes]

        def rest(j):  # the part after the first j axes, on a page of its own (ruler redrawn)
            return self._ruler_height() + sum(heights[j:]) + self._total_height()

        if rest(k) > self.page_height:
            return k
        best = k
        for j in range(k, 0, -1):
            first = self._ruler_height() + sum(heights[:j])
            if rest(j) > self.page_height or first > avail_height:
                break
            if abs(first - rest(j)) < abs(self._ruler_height() + sum(heights[:best]) - rest(best)):
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
        # faint guides from the ruler down through the term axes help read points straight up
        guide_bottom = self._total_height()
        c.setStrokeColor(GUIDE)
        c.setLineWidth(0.4)
        for p in range(self.p_lo, self.p_hi + 1):
            c.line(self.x_of(p), guide_bottom, self.x_of(p), top - s * 1.7)
        c.setStrokeColor(colors.black)
        # points ruler
        y = top - s * 1.7
        c.setFont(BOLD, s)
        c.drawString(0, y - s * 0.35, "Points" + (" (continued)" if self.continued else ""))
        c.setLineWidth(1.2)
        c.line(self.x_of(self.p_lo), y, self.x_of(self.p_hi), y)
        label_w = max(text_width(points_text(p, self.signed), s) for p in (self.p_lo, self.p_hi)) + s * 0.6
        step = self._tick_step(self.x_of, self.p_lo, self.p_hi, label_w)
        c.setFont(REGULAR, s)
        for p in range(self.p_lo, self.p_hi + 1):
            c.setLineWidth(0.8)
            c.line(self.x_of(p), y - 3, self.x_of(p), y + 3)
            if (p - self.p_lo) % step == 0:
                c.drawCentredString(self.x_of(p), y + 4, points_text(p, self.signed))
        top -= self._ruler_height()
        for axis in self._term_axes:
            axis.draw(c, top, self.x_of)
            top -= axis.height
        if self.with_total:
            self._draw_total(top)

    def _draw_total(self, top: float) -> None:
        c = self.canv
        s = self.styles.body_pt
        lo, hi = self.sheet["total"]["min"], self.sheet["total"]["max"]
        y = top - s * 2.2
        c.setStrokeColor(colors.black)
        c.setLineWidth(0.8)
        c.line(0, top - s * 0.5, self.width, top - s * 0.5)
        c.setFont(BOLD, s)
        c.drawString(0, y - s * 0.35, "Total points")
        c.drawString(0, y - s * 2.4, "Risk")
        c.setLineWidth(1.4)
        c.line(self._total_x(lo), y, self._total_x(hi), y)
        label_w = max(text_width(total_text(t), s) for t in (lo, hi)) + s * 0.6
        step = self._tick_step(self._total_x, lo, hi, label_w)
        c.setFont(REGULAR, s)
        risks = {r["total"]: r["text"] for r in self.sheet["conversion"]}
        step = self._risk_step(step, lo, hi, risks, s)
        for t in range(lo, hi + 1):
            x = self._total_x(t)
            labelled = t % step == 0
            c.setLineWidth(0.8)
            c.line(x, y - (4 if labelled else 2), x, y + (4 if labelled else 2))
            if labelled:
                # the total above the line and its risk exactly below it, joined by the tick
                c.drawCentredString(x, y + 5, total_text(t))
                c.setLineWidth(0.5)
                c.line(x, y - 3, x, y - s * 1.2)
                c.drawCentredString(x, y - s * 2.4, risks[t])


def nomogram_block(sheet: dict, styles: Styles, signed: bool, page_height: float | None = None) -> list[Flowable]:
    title = Paragraph("Nomogram", styles.section)
    how = Paragraph(
        "For each item find the patient's value on its axis and read its points straight up on the Points ruler; "
        "add them up, find the sum on the Total points axis and read the risk below it. Values printed together "
        "(\u201c/\u201d) share one tick. The points tables are the reference; use the nomogram to see how "
        "each item weighs.", styles.body)
    return [title, Spacer(1, 3), how, Spacer(1, styles.body_pt * 0.8), NomogramBlock(sheet, styles, signed, page_height=page_height)]
