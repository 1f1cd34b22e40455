"""The exercise as a PDF: an instruction page, two patient cards per page (values with units, and an answer
grid with a box per table, the total, the risk and the band), then the answer key on pages of its own."""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, PageBreak, Spacer, Table, TableStyle

from scorecard.audit.report_pdf import paragraph as _p, report_document_bytes, report_styles, report_table
from scorecard.exercise.key import Key
from scorecard.invented import is_invented
from scorecard.sheet import MEASURE_FIRST_RULE, NOT_MEASURED_TEXT, short_fingerprint

CARDS_PER_PAGE = 2


def _feature_info(sheet: dict) -> dict[str, dict]:
    """Label and unit of each feature, from its first block (a pair axis takes its label from the pair)."""
    info: dict[str, dict] = {}
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            for label, axis in zip(term["labels"], term["axes"]):
                info.setdefault(axis["feature"], {"label": label, "unit": axis.get("unit", "")})
        else:
            info.setdefault(term["feature"], {"label": term["label"], "unit": term.get("unit", "")})
    return info


def _shown(value: str, kind: str, unit: str) -> str:
    if value == "":
        return NOT_MEASURED_TEXT
    if kind == "flag":
        return "Yes" if value == "yes" else "No"
    if kind == "continuous":
        return f"{value} {unit}".strip()
    return value.replace("_", " ")


def _kinds(sheet: dict) -> dict[str, str]:
    kinds: dict[str, str] = {}
    for term in sheet["terms"]:
        for block in term["axes"] if term["kind"] == "pair" else [term]:
            kinds.setdefault(block["feature"], block["kind"])
    return kinds


def _card(key: Key, i: int, s: dict) -> KeepTogether:
    sheet = key.sheet
    info, kinds = _feature_info(sheet), _kinds(sheet)
    values = [[_p(info[f]["label"], s["cell"]), _p(_shown(key.vignettes[i][f].text, kinds[f], info[f]["unit"]), s["cell"])]
              for f in key.features]
    left = Table(values, colWidths=[48 * mm, 32 * mm])
    left.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"), ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.lightgrey),
                              ("TOPPADDING", (0, 0), (-1, -1), 1.2), ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2)]))
    grid = [[_p(t.label, s["cell"]), ""] for t in key.scored.terms]
    grid += [["Total points", ""], ["Risk (conversion table)", ""], ["Band", ""]]
    right = Table(grid, colWidths=[60 * mm, 20 * mm], rowHeights=[None] * len(grid))
    n = len(key.scored.terms)
    right.setStyle(TableStyle([("BOX", (1, 0), (1, -1), 0.8, colors.black), ("INNERGRID", (1, 0), (1, -1), 0.8, colors.black),
                               ("LINEBELOW", (0, 0), (0, -1), 0.25, colors.lightgrey), ("LINEABOVE", (0, n), (-1, n), 1.2, colors.black),
                               ("FONTNAME", (0, n), (0, -1), s["h"].fontName), ("FONTSIZE", (0, n), (0, -1), 8.5),
                               ("VALIGN", (0, 0), (-1, -1), "MIDDLE"), ("TOPPADDING", (0, 0), (-1, -1), 2.2),
                               ("BOTTOMPADDING", (0, 0), (-1, -1), 2.2)]))
    body = Table([[left, right]], colWidths=[86 * mm, 90 * mm])
    body.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"), ("BOX", (0, 0), (-1, -1), 1.0, colors.black),
                              ("LEFTPADDING", (0, 0), (-1, -1), 3), ("TOPPADDING", (0, 0), (-1, -1), 3)]))
    head = _p(f"Patient {key.ids[i]} — your name: ____________________   date: __________", s["h"])
    return KeepTogether([head, body, Spacer(1, 5 * mm)])


def _instructions(key: Key, s: dict) -> list:
    sheet = key.sheet
    fp = short_fingerprint(sheet)
    out = [_p(f"Hand-scoring exercise: {sheet['title']}", s["title"]),
           _p(f"For the printed sheet with fingerprint {fp} (model {sheet['model']['name']} version "
              f"{sheet['model']['version']}). Check that your copy of the sheet shows this fingerprint.", s["body"]),
           Spacer(1, 3 * mm),
           _p("For each patient card: find each item's row on the sheet and write that row's points in the box of its "
              "table; add the boxes and write the total; read the risk and the band for that total from the conversion "
              "table. Score exactly as the sheet says, including for values it does not show directly:", s["body"]),
           _p(f"• {sheet['rounding_rule']}", s["body"]),
           _p("• A value below or above every printed row belongs to the first or last row.", s["body"]),
           _p(f"• “not measured” uses the table's not-measured row. {MEASURE_FIRST_RULE} A category the table does "
              "not list uses its “Other” row.", s["body"]),
           Spacer(1, 3 * mm),
           _p(f"{len(key.ids)} patients. The answer key is on the last pages: remove them before handing the exercise out.", s["body"]),
           _p("The patients are invented for training; they are not real people.", s["small"])]
    return out


def _key_pages(key: Key, s: dict) -> list:
    rows = [["patient", "total", "risk", "band", "points per table (row read)", "what it tests"]]
    for i, vid in enumerate(key.ids):
        parts = [f"{t.label} {int(t.points[t.index[i]])} ({t.texts[t.index[i]]})" for t in key.scored.terms]
        cases = sorted({f"{key.vignettes[i][f].case}: {f}" for f in key.features
                        if key.vignettes[i][f].case not in ("row", "ordinary")})
        rows.append([vid, str(int(key.scored.total[i])), str(key.scored.risk_text[i]), key.band_name(i),
                     _p("; ".join(parts), s["small"]), _p("; ".join(cases) or "–", s["small"])])
    table = report_table(rows, [14 * mm, 11 * mm, 13 * mm, 17 * mm, 85 * mm, 40 * mm])
    table.hAlign = "LEFT"
    return [PageBreak(), _p("ANSWER KEY — keep these pages apart from the exercise", s["title"]),
            _p("Computed by the audit's own paper scoring (the `scorecard score` rule), the same as key.csv.", s["small"]),
            Spacer(1, 2 * mm), table]


def exercise_pdf_bytes(key: Key, cautions: list[str]) -> bytes:
    s = report_styles()
    story = _instructions(key, s) + [PageBreak()]
    for i in range(len(key.ids)):
        story.append(_card(key, i, s))
        if (i + 1) % CARDS_PER_PAGE == 0 and i + 1 < len(key.ids):
            story.append(PageBreak())
    story += _key_pages(key, s)
    fp = short_fingerprint(key.sheet)
    return report_document_bytes(story, cautions, fp, title=f"Hand-scoring exercise {fp}", subject=key.sheet["title"],
                                 author="scorecard exercise", footer="Exercise for sheet fingerprint", invented=is_invented(key.sheet))
