"""The agreement report as a PDF: verdict, bounds, figures, plots and the patients who disagree most.

Built from the report dict of `scorecard.audit.agreement.check_agreement` only, with reportlab's platypus
(flowables that break across pages by themselves) and reportlab graphics for the plots, so the bytes depend
on the figures alone: the PDF is written with reportlab's invariant mode and fixed metadata.
"""

from __future__ import annotations

import io

from reportlab.graphics.shapes import Circle, Drawing, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, Paragraph, SimpleDocTemplate, Spacer, Table, TableStyle
from xml.sax.saxutils import escape

from scorecard.invented import draw_band
from scorecard.pdf_plumbing import page_x_of_y_canvas, register_fonts, wrap_words

PASS_COLOUR, FAIL_COLOUR = colors.HexColor("#1b6e20"), colors.HexColor("#b00020")




def _styles() -> dict[str, ParagraphStyle]:
    regular, bold = register_fonts()
    return {
        "title": ParagraphStyle("title", fontName=bold, fontSize=15, leading=19, spaceAfter=4),
        "h": ParagraphStyle("h", fontName=bold, fontSize=11, leading=14, spaceBefore=8, spaceAfter=3),
        "body": ParagraphStyle("body", fontName=regular, fontSize=8.5, leading=11, alignment=TA_LEFT),
        "small": ParagraphStyle("small", fontName=regular, fontSize=7, leading=8.5),
        "cell": ParagraphStyle("cell", fontName=regular, fontSize=7.5, leading=9),
        "verdict_pass": ParagraphStyle("vp", fontName=bold, fontSize=13, leading=16, textColor=PASS_COLOUR),
        "verdict_fail": ParagraphStyle("vf", fontName=bold, fontSize=13, leading=16, textColor=FAIL_COLOUR),
        "warning": ParagraphStyle("w", fontName=bold, fontSize=9, leading=11.5, textColor=FAIL_COLOUR),
    }


def _p(text: str, style: ParagraphStyle) -> Paragraph:
    return Paragraph(escape(text), style)


def _num(value, fmt: str = "{:.4f}") -> str:
    return "not estimable" if value is None else fmt.format(value)


def _pct(value, places: int = 2) -> str:
    return "–" if value is None else f"{value * 100:.{places}f}%"


def _table(rows: list[list], widths: list[float], header: bool = True, extra: list | None = None) -> Table:
    regular, bold = register_fonts()
    style = [
        ("FONTNAME", (0, 0), (-1, -1), regular),
        ("FONTSIZE", (0, 0), (-1, -1), 7.5),
        ("LEADING", (0, 0), (-1, -1), 9),
        ("GRID", (0, 0), (-1, -1), 0.25, colors.grey),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 1.5),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
    ]
    if header:
        style += [("FONTNAME", (0, 0), (-1, 0), bold), ("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#e8e8e8"))]
    table = Table(rows, colWidths=widths, repeatRows=1 if header else 0)
    table.setStyle(TableStyle(style + (extra or [])))
    return table


# -- plots ------------------------------------------------------------------------------------------


def _axes(drawing: Drawing, x0, y0, w, h, xlabel: str, ylabel: str, xticks, yticks, xmap, ymap) -> None:
    regular, _ = register_fonts()
    drawing.add(Line(x0, y0, x0 + w, y0, strokeWidth=0.6))
    drawing.add(Line(x0, y0, x0, y0 + h, strokeWidth=0.6))
    for v, label in xticks:
        x = xmap(v)
        drawing.add(Line(x, y0, x, y0 - 3, strokeWidth=0.5))
        drawing.add(String(x, y0 - 11, label, fontName=regular, fontSize=6.5, textAnchor="middle"))
    for v, label in yticks:
        y = ymap(v)
        drawing.add(Line(x0, y, x0 - 3, y, strokeWidth=0.5))
        drawing.add(String(x0 - 5, y - 2, label, fontName=regular, fontSize=6.5, textAnchor="end"))
    drawing.add(String(x0 + w / 2, y0 - 22, xlabel, fontName=regular, fontSize=7.5, textAnchor="middle"))
    drawing.add(String(x0 - 30, y0 + h + 6, ylabel, fontName=regular, fontSize=7.5))


def _ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    """Round-numbered ticks (1, 2 or 5 times a power of ten) covering lo..hi."""
    import math

    raw = (hi - lo) / max(count - 1, 1) or 1.0
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 5, 10) if m * power >= raw)
    first = math.ceil(lo / step - 1e-9)
    return [k * step for k in range(first, int(math.floor(hi / step + 1e-9)) + 1)]


def histogram_drawing(hist: dict) -> Drawing:
    """Bars of the Δrisk histogram (sheet risk - model risk, percentage points)."""
    edges, counts = hist["edges"], hist["counts"]
    d = Drawing(170 * mm, 62 * mm)
    x0, y0, w, h = 40, 30, 170 * mm - 55, 62 * mm - 45
    top = max(max(counts), 1)
    lo, hi = edges[0], edges[-1]
    xmap = lambda v: x0 + (v - lo) / (hi - lo) * w  # noqa: E731
    ymap = lambda v: y0 + v / top * h  # noqa: E731
    for c, a, b in zip(counts, edges[:-1], edges[1:]):
        if c:
            d.add(Rect(xmap(a), y0, xmap(b) - xmap(a), ymap(c) - y0, fillColor=colors.HexColor("#4a6fa5"), strokeColor=colors.white, strokeWidth=0.3))
    d.add(Line(xmap(0), y0, xmap(0), y0 + h, strokeColor=colors.black, strokeDashArray=[2, 2], strokeWidth=0.5))
    _axes(d, x0, y0, w, h, "sheet risk − model risk (percentage points)", "patients",
          [(v, f"{v:+g}" if v else "0") for v in _ticks(lo, hi)], [(v, f"{v:,.0f}") for v in _ticks(0, top)], xmap, ymap)
    return d


def calibration_drawing(outcomes: dict) -> Drawing:
    """Observed event rate against mean predicted risk in tenths of predicted risk, model and sheet."""
    regular, _ = register_fonts()
    d = Drawing(170 * mm, 80 * mm)
    x0, y0, size = 45, 32, 80 * mm - 45
    top = max(max(g[k] for g in outcomes[w]["calibration_table"] for k in ("predicted", "observed")) for w in ("model", "sheet"))
    top = min(1.0, max(0.05, top * 1.1))
    xmap = lambda v: x0 + v / top * size  # noqa: E731
    ymap = lambda v: y0 + v / top * size  # noqa: E731
    d.add(Line(xmap(0), ymap(0), xmap(top), ymap(top), strokeColor=colors.grey, strokeDashArray=[2, 2], strokeWidth=0.5))
    for who, colour in (("model", colors.HexColor("#222222")), ("sheet", colors.HexColor("#c05000"))):
        pts = [(xmap(g["predicted"]), ymap(g["observed"])) for g in outcomes[who]["calibration_table"]]
        d.add(PolyLine([c for p in pts for c in p], strokeColor=colour, strokeWidth=0.8))
        for x, y in pts:
            d.add(Circle(x, y, 1.8, fillColor=colour, strokeColor=colour))
    ticks = [(v, f"{v * 100:g}%") for v in _ticks(0, top)]
    _axes(d, x0, y0, size, size, "mean predicted risk (tenths of predicted risk)", "observed event rate", ticks, ticks, xmap, ymap)
    lx = x0 + size + 25
    for k, (who, colour) in enumerate((("exact model", colors.HexColor("#222222")), ("paper sheet", colors.HexColor("#c05000")))):
        d.add(Line(lx, y0 + size - 10 - 12 * k, lx + 14, y0 + size - 10 - 12 * k, strokeColor=colour, strokeWidth=1))
        d.add(String(lx + 18, y0 + size - 12 - 12 * k, who, fontName=regular, fontSize=7.5))
    d.add(String(lx, y0 + size - 40, "dashed: perfect calibration", fontName=regular, fontSize=7, fillColor=colors.grey))
    return d


# -- the document -----------------------------------------------------------------------------------


PER_PATIENT = ("band_agreement", "percentile_risk_error", "largest_risk_error")


def _bounds_table(report: dict, s: dict, lead: bool) -> Table:
    """Each bound PASS or FAIL, then every figure no bound covers, marked not bounded: the per-patient ones
    (`lead`, in the order of PER_PATIENT) or all the others."""
    def pick(items):
        return [b for n in PER_PATIENT for b in items if b["name"] == n] if lead else [b for b in items if b["name"] not in PER_PATIENT]
    rows = [["check", "figure", "result"]]
    extra = []
    for i, b in enumerate(pick(report["bounds"]), start=1):
        rows.append([_p(b["what"], s["cell"]), _p(b["shown"], s["cell"]), "PASS" if b["pass"] else "FAIL"])
        extra.append(("TEXTCOLOR", (2, i), (2, i), PASS_COLOUR if b["pass"] else FAIL_COLOUR))
        extra.append(("FONTNAME", (2, i), (2, i), register_fonts()[1]))
    for f in pick(report.get("not_bounded", [])):
        rows.append([_p(f["what"], s["cell"]), _p(f["shown"], s["cell"]), _p("not bounded", s["cell"])])
        extra.append(("TEXTCOLOR", (2, len(rows) - 1), (2, len(rows) - 1), colors.HexColor("#555555")))
    return _table(rows, [95 * mm, 62 * mm, 22 * mm], extra=extra)


def _certificate_table(report: dict) -> Table:
    """Per total: the risk printed and the range the exact model's risk can take for a patient with that total,
    whatever their inputs (the certificate, recomputed from the sheet)."""
    rows = [["total", "sheet risk", "model risk can be anywhere in"] * 2]
    entries = report["certificate"]["by_total"]
    half = (len(entries) + 1) // 2
    for k in range(half):
        line = []
        for e in (entries[k], entries[k + half] if k + half < len(entries) else None):
            line += ["", "", ""] if e is None else [str(e["total"]), _pct(e["risk"], 1),
                                                     f"{e['model_risk_low'] * 100:.1f}% to {e['model_risk_high'] * 100:.1f}%"]
        rows.append(line)
    return _table(rows, [14 * mm, 20 * mm, 55 * mm] * 2)


def _figures_table(report: dict) -> Table:
    a, stored = report["agreement"], report.get("stored_achieved") or {}
    lines = [
        ("AUC of the exact model", "auc_model", _num),
        ("AUC of the sheet", "auc_sheet", _num),
        ("AUC loss (model − sheet)", "auc_loss", _num),
        ("max |Δrisk|", "max_abs_risk_error", _pct),
        ("99th percentile |Δrisk|", "p99_abs_risk_error", _pct),
        ("95th percentile |Δrisk|", "p95_abs_risk_error", _pct),
        ("mean |Δrisk|", "mean_abs_risk_error", lambda v: _pct(v, 3)),
        ("share with |Δrisk| over the bound", "share_over_risk_error", _pct),
        ("calibration intercept (model risk on sheet log-odds)", "calibration_intercept", _num),
        ("calibration slope (model risk on sheet log-odds)", "calibration_slope", _num),
        ("Brier score, exact model", "brier_model", _num),
        ("Brier score, sheet", "brier_sheet", _num),
        ("same risk band", "band_agreement", lambda v: _pct(v, 1)),
    ]
    rows = [["figure", "this cohort", "stored by quantize"]]
    for label, key, fmt in lines:
        value = a.get(key)
        shown = fmt(value)
        if key == "auc_loss" and None not in (a.get("auc_loss_ci") or [None]):
            lo, hi = a["auc_loss_ci"]
            shown += f"  (95% CI {lo:.4f} to {hi:.4f})"
        stored_value = stored.get(key)
        stored_shown = fmt(stored_value) if isinstance(stored_value, (int, float)) else "–"
        rows.append([label, shown, stored_shown])
    return _table(rows, [78 * mm, 62 * mm, 38 * mm])


def _outcomes_table(o: dict) -> Table:
    rows = [["against observed outcomes", "exact model", "sheet"]]
    for label, key, fmt in (("AUC", "auc", _num), ("calibration intercept", "calibration_intercept", _num),
                            ("calibration slope", "calibration_slope", _num), ("Brier score", "brier", _num),
                            ("mean predicted risk", "mean_risk", lambda v: _pct(v, 1))):
        rows.append([label, fmt(o["model"][key]), fmt(o["sheet"][key])])
    rows.append(["AUC loss (model − sheet)", _num(o["auc_loss"]), ""])
    rows.append(["observed event rate", _pct(o["event_rate"], 1), f"n = {o['n']:,}"])
    return _table(rows, [70 * mm, 45 * mm, 45 * mm])


def _band_table(bands: dict) -> Table:
    names = bands["bands"]
    rows = [["model band ↓ / sheet band →"] + names]
    for name, counts in zip(names, bands["counts"]):
        rows.append([name] + [f"{c:,}" for c in counts])
    extra = [("BACKGROUND", (k + 1, k + 1), (k + 1, k + 1), colors.HexColor("#e6f0e6")) for k in range(len(names))]
    return _table(rows, [48 * mm] + [min(28 * mm, 130 * mm / len(names))] * len(names), extra=extra)


def _slips_block(slips: dict, s: dict) -> KeepTogether:
    """Slip robustness (scorecard.audit.slips): the risk error one bedside slip causes, per table and overall."""
    bands = slips["bands"]
    rows = [["slip", "slips", "mean |Δrisk|", "95th pct", "largest", "same pts"] + (["band changes (patients)"] if bands else [])]

    def line(label, f):
        return [_p(label, s["cell"]), f"{f['slips']:,}", _pct(f["mean_abs_risk_error"]), _pct(f["p95_abs_risk_error"]),
                _pct(f["max_abs_risk_error"]), _pct(f["share_harmless"], 0) if f["slips"] else "–"] + (
            [f"{f['patients_changing_band']:,} of {f['patients']:,}"] if bands else [])

    for t in slips["neighbour_row"]["per_term"]:
        rows.append(line(f"{t['label']}: neighbouring row", t))
    rows.append(line("any table: neighbouring row", slips["neighbour_row"]["overall"]))
    rows.append(line("total off by one (either way)", slips["total_off_by_one"]))
    widths = [56 * mm, 16 * mm, 20 * mm, 17 * mm, 17 * mm, 16 * mm] + ([38 * mm] if bands else [])
    n = len(rows)
    extra = [("FONTNAME", (0, n - 2), (-1, n - 1), register_fonts()[1])]
    return KeepTogether([_p("Slips at the bedside: reading the neighbouring row, or a total off by one", s["h"]),
                         _p("Each slip on its own, for every patient: the row just above or below the right one (in a grid, "
                            "the neighbouring cells; the not-measured row is not a neighbour) read instead, or the total one "
                            "higher or lower; Δrisk = risk of the slipped total − risk of the right total. A table whose "
                            "neighbouring rows give very different points is fragile: teach it with care.", s["small"]),
                         Spacer(1, 1.5 * mm), _table(rows, widths[: len(rows[0])], extra=extra)])


def _patient_block(p: dict, s: dict) -> KeepTogether:
    worst = max(range(len(p["terms"])), key=lambda k: abs(p["terms"][k]["off_by"]))
    head = (f"Row {p['row']:,} of the cohort: total {p['total']} → {p['sheet_risk_text']} on the sheet "
            f"({p['sheet_risk'] * 100:.2f}%), exact model {p['model_risk'] * 100:.2f}%, "
            f"difference {p['difference'] * 100:+.2f} percentage points")
    rows = [["block", "printed row", "points", "model log-odds", "off by (log-odds)"]]
    for t in p["terms"]:
        rows.append([_p(t["label"], s["cell"]), _p(t["row"], s["cell"]), str(t["points"]), f"{t['model_logodds']:+.3f}", f"{t['off_by']:+.3f}"])
    extra = [("BACKGROUND", (0, worst + 1), (-1, worst + 1), colors.HexColor("#fde2c8"))]
    return KeepTogether([_p(head, s["body"]), Spacer(1, 1.5 * mm), _table(rows, [48 * mm, 52 * mm, 14 * mm, 28 * mm, 28 * mm], extra=extra), Spacer(1, 3 * mm)])


def report_pdf_bytes(report: dict, cautions: list[str]) -> bytes:
    """The whole report as PDF bytes (deterministic for the same report)."""
    s = _styles()
    regular, bold = register_fonts()
    sheet = report["sheet"]
    story = [_p(f"Agreement report: {sheet['title']}", s["title"])]
    story.append(_p(f"Sheet fingerprint {sheet['short_fingerprint']} (full: {sheet['fingerprint']})", s["body"]))
    model = report["model"]
    story.append(_p(f"Exact model: {model['name']} version {model['version']}, fingerprint {model['fingerprint'][:12]}"
                    + ("" if model["matches_sheet"] else " — NOT the model this sheet was built from"), s["body"]))
    cohort = report["cohort"]
    story.append(_p(f"Cohort: {cohort['source']} ({cohort['n']:,} patients"
                    + (f", outcome column {cohort['outcome_column']!r})" if cohort["outcome_column"] else ", no outcome column)")
                    + f"; {cohort['outside_training']:,} {'patient has' if cohort['outside_training'] == 1 else 'patients have'}"
                    " a measurement outside a training range.", s["body"]))
    outcome = sheet["outcome"]
    story.append(_p(f"Outcome: {outcome['event']}, {outcome['horizon']}; population: {outcome['population']}.", s["body"]))
    story.append(Spacer(1, 3 * mm))
    failed = [b for b in report["bounds"] if not b["pass"]]
    story.append(_p("EVERY BOUND SET ON THIS SHEET PASSES" if not failed else f"{len(failed)} CHECK{'S' if len(failed) > 1 else ''} FAIL: "
                    + ", ".join(b["name"] for b in failed), s["verdict_pass" if not failed else "verdict_fail"]))
    for w in report["warnings"]:
        story.append(_p(w, s["warning"]))
    lead = [b for b in report["bounds"] if b["name"] in PER_PATIENT] + [f for f in report.get("not_bounded", []) if f["name"] in PER_PATIENT]
    if lead:
        story += [_p("What one patient reads: band, typical and largest risk difference", s["h"]),
                  _bounds_table(report, s, lead=True)]
    story += [_p("The other bounds set for this sheet, and the figures it does not bound", s["h"]), _bounds_table(report, s, lead=False)]
    story += [_p("Sheet against the exact model on this cohort", s["h"]),
              _p(f"AUC and Brier score against {report['agreement']['auc_basis']}. Δrisk = risk read from the sheet's "
                 "conversion table − risk from the exact model. Calibration: logistic fit of the model's risk on the "
                 "sheet's log-odds (intercept 0 and slope 1 mean the sheet needs no recalibration).", s["small"]),
              Spacer(1, 1.5 * mm), _figures_table(report)]
    if report["band_matrix"]:
        story.append(KeepTogether([_p("Risk bands: model against sheet (patients)", s["h"]), _band_table(report["band_matrix"])]))
    story.append(KeepTogether([_p("Distribution of Δrisk", s["h"]), histogram_drawing(report["histogram"])]))
    if report["against_outcomes"]:
        o = report["against_outcomes"]
        story.append(KeepTogether([_p("Against observed outcomes", s["h"]), _outcomes_table(o), Spacer(1, 2 * mm), calibration_drawing(o)]))
    if report["certificate"].get("by_total"):
        c = report["certificate"]
        story.append(KeepTogether([
            _p("The certificate, per total (worst case over every combination of inputs)", s["h"]),
            _p(f"No patient inside the training ranges is further than {c['max_logodds_error']:.2f} log-odds from the exact "
               f"model, so the model's risk of a patient with a given total lies in the range shown. "
               + ("This worst case is bounded by the sheet (see the bounds above)." if any(b["name"] == "certificate_size" for b in report["bounds"])
                  else "The sheet sets no bound on this worst case: it is not bounded, whatever the checks above say."), s["small"]),
            Spacer(1, 1.5 * mm), _certificate_table(report)]))
    if report.get("slips"):
        story.append(_slips_block(report["slips"], s))
    for note in report["notes"]:
        story.append(_p(f"Note: {note}", s["small"]))
    heading = [_p(f"The {len(report['largest'])} patients with the largest disagreement", s["h"]),
               _p("Each block's printed row and points, the exact model's contribution for the same block, and how far "
                  "the row is from the model (points × log-odds per point − model contribution, centred on its cohort "
                  "mean). The shaded line is the row that causes most of the disagreement.", s["small"]), Spacer(1, 2 * mm)]
    blocks = [_patient_block(p, s) for p in report["largest"]]
    story += [KeepTogether(heading + ([blocks[0]] if blocks else []))] + blocks[1:]

    return report_document_bytes(story, cautions, sheet["short_fingerprint"], title=f"Agreement report {sheet['short_fingerprint']}",
                                 subject=sheet["title"], author="scorecard check", invented=bool(sheet.get("invented_data")))


def report_document_bytes(story: list, cautions: list[str], short_fingerprint: str, title: str, subject: str, author: str,
                          footer: str = "Sheet fingerprint", invented: bool = False) -> bytes:
    """A report's flowables as A4 PDF bytes with the cautions, the fingerprint and 'page x of y' on every page
    (deterministic: reportlab's invariant mode and fixed metadata), and the invented-data bands when `invented`.
    Shared by every report verb."""
    regular, bold = register_fonts()
    caution_text = "  ".join(cautions)

    def on_page(canvas, doc):
        if invented:  # scorecard.invented: black bands at the top and the foot of every page
            page_w, page_h = A4
            draw_band(canvas, 15 * mm, page_w - 30 * mm, page_h - 5 * mm, bold, 8)
            draw_band(canvas, 15 * mm, page_w - 30 * mm, 24 * mm, bold, 8)  # above the cautions
        canvas.saveState()
        canvas.setFont(regular, 6.5)
        width, _ = A4
        text = canvas.beginText(15 * mm, 14 * mm)
        for line in wrap_words(caution_text, 6.5, width - 30 * mm):
            text.textLine(line)
        canvas.drawText(text)
        canvas.setFont(bold, 7)
        canvas.drawString(15 * mm, 6 * mm, f"{footer} {short_fingerprint}")
        canvas.restoreState()

    buffer = io.BytesIO()
    doc = SimpleDocTemplate(buffer, pagesize=A4, leftMargin=15 * mm, rightMargin=15 * mm, topMargin=14 * mm, bottomMargin=26 * mm,
                            title=title, author=author, subject=subject, creator="scorecard", producer="scorecard", invariant=1)
    doc.build(story, onFirstPage=on_page, onLaterPages=on_page, canvasmaker=_page_of_total_canvas(bold))
    return buffer.getvalue()


def _page_of_total_canvas(font: str):
    """'page x of y' at the foot of every report page, so an auditor sees a missing page."""

    def stamp(canvas, page: int, total: int) -> None:
        canvas.setFont(font, 7)
        canvas.drawRightString(A4[0] - 15 * mm, 6 * mm, f"page {page} of {total}")

    return page_x_of_y_canvas(stamp)




# the building blocks other report verbs (compare, exercise, recalibrate) lay their pages out with
report_styles = _styles
report_table = _table
paragraph = _p
