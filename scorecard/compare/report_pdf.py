"""The comparison as a PDF for the practice-development team: what to re-teach, block by block, then the
conversion and bands, then (with a cohort) who changes total and band. Built from the comparison dict only."""

from __future__ import annotations

from reportlab.lib import colors
from reportlab.lib.units import mm
from reportlab.platypus import KeepTogether, Spacer

from scorecard.audit.report_pdf import paragraph as _p, report_document_bytes, report_styles, report_table

CHANGED = colors.HexColor("#fde2c8")  # other points: re-teach
RECUT = colors.HexColor("#fff6cc")  # same points, another printed row text


def _left(table):
    table.hAlign = "LEFT"
    return table


def _cell(side: dict | None) -> str:
    if side is None:
        return "(not on this version)"
    return side["row"] if side["points"] is None else f"{side['row']}  →  {side['points']} pts"


def _term_block(term: dict, s: dict) -> list:
    head = f"{term['label']}: {term['status'].upper()}"  # the printed name (a pair in words), not the JSON name
    parts = [_p(head, s["h"])] + [_p(line, s["body"]) for line in term["changes"]]
    pieces = term.get("pieces") or []
    if term["status"] != "unchanged" and pieces:
        shown = [p for p in pieces if p["old"] != p["new"]] if len(pieces) > 40 else pieces
        unit = f" ({term['unit']})" if term.get("unit") else ""
        rows = [[f"values{unit}", "old version: row → points", "new version: row → points"]]
        extra = []
        for k, p in enumerate(shown, start=1):
            rows.append([_p(p["values"], s["cell"]), _p(_cell(p["old"]), s["cell"]), _p(_cell(p["new"]), s["cell"])])
            if p["old"] != p["new"]:
                points = (p["old"] or {}).get("points") != (p["new"] or {}).get("points")
                extra.append(("BACKGROUND", (0, k), (-1, k), CHANGED if points else RECUT))
        parts += [Spacer(1, 1.5 * mm), _left(report_table(rows, [50 * mm, 62 * mm, 62 * mm], extra=extra))]
        if len(shown) < len(pieces):
            parts.append(_p(f"{len(pieces) - len(shown)} unchanged combinations not shown.", s["small"]))
    return [KeepTogether(parts)]


def _versions(report: dict, s: dict) -> list:
    out = []
    if report["compares"] == "sheets":
        for side in ("old", "new"):
            v = report[side]
            line = (f"{side.upper()}: {report['paths'][side]} — “{v['title']}”, sheet fingerprint {v['short_fingerprint']} "
                    f"(full {v['fingerprint']}); model {v['model']['name']} version {v['model']['version']}, "
                    f"fingerprint {v['model']['fingerprint'][:12]}; totals {v['total']['min']}–{v['total']['max']}")
            if v.get("lineage"):
                line += f"; recalibrated from sheet {v['lineage']['original_fingerprint'][:12]}"
            out.append(_p(line, s["body"]))
    else:
        for side in ("old", "new"):
            v = report[side]
            out.append(_p(f"{side.upper()}: {report['paths'][side]} — {v['name']} version {v['version']}, "
                          f"model fingerprint {v['fingerprint'][:12]} (full {v['fingerprint']})", s["body"]))
    return out


def _summary(report: dict, s: dict) -> list:
    c = report["summary"]
    if report["identical"]:
        return [_p("NO CHANGE: the two documents are identical (same fingerprint).", s["verdict_pass"])]
    what = "blocks" if report["compares"] == "sheets" else "terms"
    return [_p(f"{c['changed']} {what} changed, {c['added']} added, {c['removed']} removed, {c['unchanged']} unchanged",
               s["verdict_fail" if c["changed"] + c["added"] + c["removed"] else "verdict_pass"])]


def _conversion(report: dict, s: dict) -> list:
    rows = [["total", "old risk", "old band", "new risk", "new band"]]
    for e in report["conversion"]:
        rows.append([str(e["total"]), e["old_risk"] or "(not printed)", e["old_band"] or "–", e["new_risk"] or "(not printed)", e["new_band"] or "–"])
    parts = [_p("Conversion: totals whose printed risk or band changed", s["h"])]
    if len(rows) == 1:
        parts.append(_p("No total changes its printed risk or band.", s["body"]))
    else:
        parts.append(_left(report_table(rows, [20 * mm, 30 * mm, 35 * mm, 30 * mm, 35 * mm])))
    parts += [_p(line, s["body"]) for line in report["bands"]]
    return parts


def _cohort(c: dict, s: dict) -> list:
    parts = [_p(f"Patients scored by both versions ({c['source']}, {c['n']:,} patients)", s["h"]),
             _p(f"{c['total_changed']:,} patients ({c['total_changed'] / c['n']:.1%}) get another total; "
                f"{c['risk_text_changed']:,} another printed risk; mean change in risk {c['mean_risk_change'] * 100:+.2f} "
                f"percentage points, largest {c['largest_risk_change'] * 100:.2f} percentage points.", s["body"])]
    if c["bands"]:
        b = c["bands"]
        rows = [["old band ↓ / new band →"] + b["new"]] + [[name] + [f"{v:,}" for v in counts] for name, counts in zip(b["old"], b["counts"])]
        extra = [("BACKGROUND", (j + 1, i + 1), (j + 1, i + 1), colors.HexColor("#e6f0e6"))
                 for i, o in enumerate(b["old"]) for j, n in enumerate(b["new"]) if o == n]
        parts += [_p(f"{b['band_changed']:,} patients change band:", s["body"]),
                  _left(report_table(rows, [48 * mm] + [min(28 * mm, 130 * mm / len(b["new"]))] * len(b["new"]), extra=extra))]
    shift = [["total changes by", "patients"]] + [[f"{e['by']:+d}" if e["by"] else "unchanged", f"{e['patients']:,}"] for e in c["total_shift"]]
    per_term = [["block", "patients whose points change"]] + [[_p(t["label"], s["cell"]), f"{t['patients_changed']:,}"] for t in c["per_term"]]
    parts += [Spacer(1, 2 * mm), _left(report_table(shift, [40 * mm, 30 * mm])), Spacer(1, 2 * mm), _left(report_table(per_term, [90 * mm, 50 * mm]))]
    parts += [_p(f"Note: {n}", s["small"]) for n in c["notes"]] + [_p(w, s["warning"]) for w in c["warnings"]]
    return parts


def compare_pdf_bytes(report: dict) -> bytes:
    s = report_styles()
    what = "sheet" if report["compares"] == "sheets" else "model"
    story = [_p(f"What changed between two {what} versions", s["title"])]
    story += _versions(report, s) + [Spacer(1, 2 * mm)] + _summary(report, s)
    story += [_p(line, s["body"]) for line in report["other_changes"]]
    if report["compares"] == "sheets":
        story.append(_p("Each table lists the values a nurse may write down; shaded lines read another row or give other "
                        "points on the new version. Re-teach the shaded lines before the new sheet goes on the ward.", s["small"]))
        for term in report["terms"]:
            story += _term_block(term, s)
        story += _conversion(report, s)
        if report.get("cohort"):
            story += _cohort(report["cohort"], s)
        fp = report["new"]["short_fingerprint"]
    else:
        rows = [["term", "status", "what changed"]]
        extra = []
        for k, t in enumerate(report["terms"], start=1):
            rows.append([_p(t.get("label") or t["name"], s["cell"]), t["status"], _p("; ".join(t["changes"]) or "–", s["cell"])])
            if t["status"] != "unchanged":
                extra.append(("BACKGROUND", (0, k), (-1, k), CHANGED))
        story += [_p("Terms", s["h"]), _left(report_table(rows, [50 * mm, 22 * mm, 108 * mm], extra=extra))]
        edits = report["edits"]
        story.append(_p("Edits recorded on the new version only", s["h"]))
        story += [_p(f"• {e}", s["body"]) for e in edits["added"]] or [_p("none", s["body"])]
        if edits["removed"]:
            story.append(_p("Edits recorded on the old version only", s["h"]))
            story += [_p(f"• {e}", s["body"]) for e in edits["removed"]]
        fp = report["new"]["fingerprint"][:12]
    title = f"Changes {report['old'].get('short_fingerprint', report['old']['fingerprint'][:12])} to {fp}"
    return report_document_bytes(story, report["cautions"], fp, title=title, subject=title, author="scorecard compare",
                                 footer=f"New {what} fingerprint", invented=bool(report.get("invented")))
