"""Two sheet documents compared the way staff read them: for every value a nurse could write down, which
row it landed on and how many points it gave in the old version and in the new one.

A block (a term, or one axis of a pair grid) is split into *pieces*: the stretches of measured values on which
both versions read the same row (the union of both versions' cut-points, at the finer printed precision and
with each version's own half-up rounding), each level of a category, each answer of a yes/no item, and "not
measured". A piece whose row or points differ is a change to teach.
"""

from __future__ import annotations

from scorecard.sheet import NOT_MEASURED_TEXT, flag_text, range_text, row_index, short_fingerprint, total_band_indices
from scorecard.sheet.printed import COMPLETED, number_text, reading_of, units

NO_ROW = "(no row)"


def _effective_cut(lower: float, block: dict, finest: int) -> int:
    """Where a row's printed lower bound falls for values written at `finest` decimals: a coarser sheet read
    half up starts its row 36 (0 decimals) at 35.5 (common practice: half-up rounding); one read in completed
    units starts it at 36 itself (docs/sheet-document.md, the reading rule)."""
    decimals = int(block["decimals"])
    cut = units(lower, finest)
    if decimals < finest and reading_of(block) != COMPLETED:
        cut -= 5 * 10 ** (finest - decimals - 1)
    return cut


def _row_at(block: dict, value_units: int, finest: int) -> int:
    return row_index(block["rows"], float(number_text(value_units, finest)), int(block["decimals"]), reading_of(block))


def continuous_pieces(old: dict | None, new: dict | None) -> list[dict]:
    """Pieces of a continuous block; `old`/`new` are {rows, decimals} (None when the block is absent)."""
    blocks = [b for b in (old, new) if b is not None]
    finest = max(int(b["decimals"]) for b in blocks)
    cuts = sorted({_effective_cut(r["lower"], b, finest)
                   for b in blocks for r in b["rows"] if not r.get("missing") and r.get("lower") is not None})
    edges = [None] + cuts + [None]
    spans: list[list] = []  # [lower units, upper units, old row, new row]; neighbours on the same rows merge
    for lo, hi in zip(edges[:-1], edges[1:]):
        probe = lo if lo is not None else (0 if hi is None else hi - 1)
        old_row = _pick(old, lambda b: _row_at(b, probe, finest))
        new_row = _pick(new, lambda b: _row_at(b, probe, finest))
        if spans and spans[-1][2] == old_row and spans[-1][3] == new_row:
            spans[-1][1] = hi
        else:
            spans.append([lo, hi, old_row, new_row])
    scale = 10.0**finest
    pieces = [{"values": range_text(None if lo is None else lo / scale, None if hi is None else hi / scale, finest),
               "old": o, "new": n} for lo, hi, o, n in spans]
    pieces.append({"values": NOT_MEASURED_TEXT, "old": _pick(old, _missing_row), "new": _pick(new, _missing_row)})
    return pieces


def _missing_row(block: dict) -> int:
    return next((i for i, r in enumerate(block["rows"]) if r.get("missing")), -1)


def _pick(block: dict | None, find) -> dict | None:
    """The row (text, points) a piece lands on in one version; None when the version has no such block."""
    if block is None:
        return None
    i = find(block)
    if i < 0:
        return {"row": NO_ROW, "points": None}
    row = block["rows"][i]
    return {"row": row["text"], "points": row.get("points")}


def level_pieces(old: dict | None, new: dict | None) -> list[dict]:
    """Pieces of a categorical block: every level either version lists, then 'other' and not measured."""
    blocks = [b for b in (old, new) if b is not None]
    levels: list[str] = []
    for b in blocks:
        for r in b["rows"]:
            levels += [lv for lv in r.get("levels", []) if lv not in levels]
    pieces = [{"values": lv, "old": _pick(old, lambda b, lv=lv: _level_row(b, lv)),
               "new": _pick(new, lambda b, lv=lv: _level_row(b, lv))} for lv in levels]
    pieces.append({"values": "a level no row lists", "old": _pick(old, lambda b: _level_row(b, None)),
                   "new": _pick(new, lambda b: _level_row(b, None))})
    pieces.append({"values": NOT_MEASURED_TEXT, "old": _pick(old, _missing_row), "new": _pick(new, _missing_row)})
    return pieces


def _level_row(block: dict, level: str | None) -> int:
    for i, r in enumerate(block["rows"]):
        if level is not None and level in r.get("levels", []):
            return i
    policy = block.get("unseen", "missing")
    key = "other" if policy == "other" else ("missing" if policy == "missing" else None)
    return next((i for i, r in enumerate(block["rows"]) if key and r.get(key)), -1)


def flag_pieces(old: dict | None, new: dict | None) -> list[dict]:
    def find(value):
        return lambda b: next((i for i, r in enumerate(b["rows"]) if r.get("value") is value), -1)

    return [{"values": flag_text(v), "old": _pick(old, find(v)), "new": _pick(new, find(v))} for v in (False, True)] + [
        {"values": NOT_MEASURED_TEXT, "old": _pick(old, _missing_row), "new": _pick(new, _missing_row)}]


def block_pieces(kind: str, old: dict | None, new: dict | None) -> list[dict]:
    if kind == "continuous":
        return continuous_pieces(old, new)
    if kind == "flag":
        return flag_pieces(old, new)
    return level_pieces(old, new)


def _row_texts(block: dict) -> list[str]:
    return [r["text"] for r in block["rows"]]


def _term_change(old: dict, new: dict) -> dict:
    """Everything that differs in one term printed on both versions."""
    changes: list[str] = []
    for key, what in (("label", "heading"), ("unit", "unit"), ("decimals", "printed decimals"), ("reading", "reading rule"),
                      ("unseen", "unlisted levels go to")):
        if old.get(key) != new.get(key):
            changes.append(f"{what}: {old.get(key)!r} -> {new.get(key)!r}")
    if old["kind"] == "pair":
        return _pair_change(old, new, changes)
    pieces = block_pieces(old["kind"], old, new)
    recut = _row_texts(old) != _row_texts(new)
    moved = [p for p in pieces if p["old"] != p["new"]]
    repointed = [p for p in moved if p["old"]["points"] != p["new"]["points"]]
    if recut:
        changes.append(f"rows re-cut: {' | '.join(_row_texts(old))}  ->  {' | '.join(_row_texts(new))}")
    if repointed:
        changes.append(f"points changed for {len(repointed)} of {len(pieces)} value ranges")
    return {"status": "changed" if changes else "unchanged", "changes": changes, "pieces": pieces,
            "rows_recut": recut, "points_changed": bool(repointed)}


def _pair_change(old: dict, new: dict, changes: list[str]) -> dict:
    axis_pieces = []
    recut = False
    for j in range(2):
        a, b = old["axes"][j], new["axes"][j]
        if a["kind"] != b["kind"] or a["feature"] != b["feature"]:
            changes.append(f"axis {j + 1}: {a['feature']} ({a['kind']}) -> {b['feature']} ({b['kind']})")
            return {"status": "changed", "changes": changes, "pieces": [], "rows_recut": True, "points_changed": True}
        if _row_texts(a) != _row_texts(b):
            recut = True
            changes.append(f"{old['labels'][j]} rows re-cut: {' | '.join(_row_texts(a))}  ->  {' | '.join(_row_texts(b))}")
        axis_pieces.append(block_pieces(a["kind"], _with_index(a), _with_index(b)))
    cells = []
    for p0 in axis_pieces[0]:
        for p1 in axis_pieces[1]:
            cell = {"values": f"{p0['values']} / {p1['values']}"}
            for side, doc in (("old", old), ("new", new)):
                cell[side] = _grid_cell(doc, p0[side], p1[side])
            cells.append(cell)
    repointed = [c for c in cells if c["old"]["points"] != c["new"]["points"]]
    if repointed:
        changes.append(f"points changed in {len(repointed)} of {len(cells)} combinations of values")
    return {"status": "changed" if changes else "unchanged", "changes": changes, "pieces": cells,
            "rows_recut": recut, "points_changed": bool(repointed)}


def _with_index(axis: dict) -> dict:
    """An axis whose rows carry their index as `points`, so a piece tells which grid row it lands on."""
    return {**axis, "rows": [{**r, "points": i} for i, r in enumerate(axis["rows"])]}


def _grid_cell(doc: dict, p0: dict, p1: dict) -> dict:
    i, j = p0["points"], p1["points"]
    if i is None or j is None:
        return {"row": NOT_MEASURED_TEXT, "points": int(doc["missing_points"])}
    return {"row": f"{p0['row']} / {p1['row']}", "points": int(doc["points"][i][j])}


def _version(doc: dict) -> dict:
    return {"title": doc["title"], "fingerprint": doc.get("fingerprint", ""), "short_fingerprint": short_fingerprint(doc),
            "model": doc["model"], "outcome": doc["outcome"], "total": doc["total"], "scale": doc["scale"],
            "lineage": doc.get("recalibration")}


def _band_name(doc: dict, total: int) -> str | None:
    bands = doc.get("bands") or []
    return bands[int(total_band_indices(doc, [total])[0])]["name"] if bands else None


def conversion_changes(old: dict, new: dict) -> list[dict]:
    """Every total printed on either version whose risk text or band differs (or that one version lacks)."""
    old_by = {c["total"]: c for c in old["conversion"]}
    new_by = {c["total"]: c for c in new["conversion"]}
    out = []
    for total in sorted(set(old_by) | set(new_by)):
        o, n = old_by.get(total), new_by.get(total)
        entry = {"total": total,
                 "old_risk": None if o is None else o["text"], "new_risk": None if n is None else n["text"],
                 "old_band": None if o is None else _band_name(old, total),
                 "new_band": None if n is None else _band_name(new, total)}
        if entry["old_risk"] != entry["new_risk"] or entry["old_band"] != entry["new_band"]:
            out.append(entry)
    return out


def band_changes(old: dict, new: dict) -> list[str]:
    lines = []
    ob = {b["name"]: b for b in old.get("bands") or []}
    nb = {b["name"]: b for b in new.get("bands") or []}
    for name in ob.keys() - nb.keys():
        lines.append(f"band {name!r} removed")
    for name in nb.keys() - ob.keys():
        lines.append(f"band {name!r} added")
    for name in [n for n in nb if n in ob]:
        if ob[name]["upper_risk"] != nb[name]["upper_risk"]:
            lines.append(f"band {name!r}: upper risk {_pct(ob[name]['upper_risk'])} -> {_pct(nb[name]['upper_risk'])}")
        if ob[name].get("wording") != nb[name].get("wording"):
            lines.append(f"band {name!r}: wording changed to {nb[name].get('wording')!r}")
    return sorted(lines)


def _pct(risk) -> str:
    return "open" if risk is None else f"{risk * 100:g}%"


def sheet_changes(old: dict, new: dict) -> dict:
    """The whole comparison of two sheet documents as a plain dict (also the --json output)."""
    old_terms = {t["name"]: t for t in old["terms"]}
    new_terms = {t["name"]: t for t in new["terms"]}
    terms = []
    for t in old["terms"]:
        n = new_terms.get(t["name"])
        if n is None:
            terms.append({"name": t["name"], "label": t["label"], "unit": t.get("unit", ""), "status": "removed",
                          "changes": ["removed from the sheet"], "pieces": _one_sided(t, "old")})
        elif n["kind"] != t["kind"]:
            terms.append({"name": t["name"], "label": n["label"], "status": "changed",
                          "changes": [f"kind {t['kind']} -> {n['kind']}: read the new block afresh"], "pieces": []})
        else:
            terms.append({"name": t["name"], "label": n["label"], "unit": n.get("unit", ""), **_term_change(t, n)})
    for n in new["terms"]:
        if n["name"] not in old_terms:
            terms.append({"name": n["name"], "label": n["label"], "unit": n.get("unit", ""), "status": "added",
                          "changes": ["new on the sheet"], "pieces": _one_sided(n, "new")})
    order = [t["name"] for t in new["terms"]]
    terms.sort(key=lambda t: order.index(t["name"]) if t["name"] in order else len(order))
    other = []
    for key, what in (("title", "title"), ("rounding_rule", "rounding rule"), ("cautions", "cautions"), ("outcome", "outcome")):
        if old.get(key) != new.get(key):
            other.append(f"{what} changed")
    if old["model"]["fingerprint"] != new["model"]["fingerprint"]:
        other.append(f"built from another model: {old['model']['fingerprint'][:12]} -> {new['model']['fingerprint'][:12]}")
    if old["scale"] != new["scale"]:
        other.append("conversion scale changed: log-odds per point "
                     f"{old['scale']['logodds_per_point']:.4g} -> {new['scale']['logodds_per_point']:.4g}, "
                     f"offset {old['scale']['offset']:.4g} -> {new['scale']['offset']:.4g}")
    if old["total"] != new["total"]:
        other.append(f"range of totals {old['total']['min']}–{old['total']['max']} -> {new['total']['min']}–{new['total']['max']}")
    conversion = conversion_changes(old, new)
    bands = band_changes(old, new)
    counts = {s: sum(1 for t in terms if t["status"] == s) for s in ("added", "removed", "changed", "unchanged")}
    same = old.get("fingerprint") and old.get("fingerprint") == new.get("fingerprint")
    return {"document": "scorecard-compare-report", "format_version": 1, "compares": "sheets",
            "old": _version(old), "new": _version(new), "identical": bool(same),
            "summary": counts, "terms": terms, "other_changes": other,
            "conversion": conversion, "bands": bands, "cautions": new.get("cautions") or []}


def _one_sided(term: dict, side: str) -> list[dict]:
    """Pieces of a block present on one version only (a pair lists its grid cells)."""
    if term["kind"] == "pair":
        return []
    pieces = block_pieces(term["kind"], term if side == "old" else None, term if side == "new" else None)
    return [{**p, "old" if side == "new" else "new": None} for p in pieces]
