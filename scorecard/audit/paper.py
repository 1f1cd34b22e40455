"""Scoring patients exactly as a person reads the printed sheet.

Everything here is recomputed from the sheet document alone (never from the quantizer's internals), so the
audit can catch a quantizer or renderer that drifts from what is printed:

- a measurement is rounded half up to the decimals printed for its block, or cut down to completed units
  where the block says so (`round_half_up_units`, exact at ties);
- a block without a "not measured" row says to measure first: a patient without that measurement is refused
  with the row and column, as the exact model refuses them;
- it then belongs to the printed row with lower <= value < upper (compared in whole display units, so a cut
  such as 37.5 is an integer comparison, never a float one);
- a level is found in the row listing it; a flag in its Yes/No row; "not measured" in its own row;
- pair grids are read at (row of the first feature, column of the second);
- the points are added and the total is looked up in the conversion table.

Per term, every patient gets the index of one *choice* (a printed row, a grid cell, or "no row"), and each
choice knows its printed text and points, so the whole cohort is scored with array lookups.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import pandas as pd

from scorecard.errors import UserError
from scorecard.sheet.printed import band_indices, total_band_indices
from scorecard.tabular import category_column, flag_column, numeric_column, require_columns, source_of

NOT_LISTED_TEXT = "not listed (no row on the sheet: 0 points)"

COMPLETED = "completed"  # the sheet's reading rule for a block recorded in completed units
MEASURE_FIRST = "measure first"
# Binary arithmetic decides a value clearly away from a tie (a whole unit, for completed units); closer than
# this many display units (relative above 1) it is decided exactly, from the decimal the value was written as.
_NEAR = 1e-6


def _exact_units(value: float, decimals: int, completed: bool) -> int:
    """One measurement read exactly: the decimal it was written as (the float's shortest repr) as a fraction,
    scaled to display units, then floor(u + 1/2) (half up) or floor(u) (completed units)."""
    u = Fraction(repr(float(value))) * 10**decimals
    return math.floor(u) if completed else math.floor(u + Fraction(1, 2))


def round_half_up_units(values: np.ndarray, decimals: int, reading: str | None = None) -> np.ndarray:
    """Each measurement read as the sheet says, in whole units of 10**-decimals, as floats (NaN stays NaN):
    rounded half up (a tie goes towards +infinity: 36.45 -> 36.5, 128.4999997 -> 128, -2.5 -> -2), or, for a
    block read in completed units, cut down to the printed decimals (79.6 years -> 79).

    This is the audit's own implementation, in rational arithmetic (`fractions`), independent of the
    sheet module's decimal one; a property test proves they agree at and next to every printed tie."""
    completed = reading == COMPLETED
    x = np.asarray(values, dtype=float)
    scaled = x * (10.0**decimals)
    ok = np.isfinite(scaled)
    z = np.where(ok, scaled, 0.0)
    tie_at = z if completed else z + 0.5
    out = np.floor(tie_at)
    near = ok & (np.abs(tie_at - np.rint(tie_at)) <= _NEAR * np.maximum(1.0, np.abs(z)))
    if decimals == 0:  # a whole number is written as itself: nothing to decide (the common case: age in years)
        near &= np.floor(z) != z
    for i in np.flatnonzero(near):
        out.flat[i] = _exact_units(x.flat[i], decimals, completed)
    return np.where(ok, out, x)


def _cut_units(value: float, decimals: int) -> float:
    """A printed cut (a multiple of 10**-decimals) in whole display units."""
    return float(np.rint(value * 10.0**decimals))


@dataclass
class TermChoices:
    """One printed block: the choices a reader can land on and which one each patient landed on."""

    name: str
    label: str
    features: list[str]
    texts: list[str]  # printed text of each choice
    points: np.ndarray  # points of each choice (int64)
    index: np.ndarray  # per patient: index into texts/points

    def patient_points(self) -> np.ndarray:
        return self.points[self.index]


@dataclass
class ScoredCohort:
    """The sheet applied to a cohort: per-term choices, totals and the risk read from the conversion table."""

    terms: list[TermChoices]
    total: np.ndarray  # int64
    risk: np.ndarray  # the conversion table's risk for each total
    risk_text: np.ndarray  # object array of printed risk texts
    band: np.ndarray | None  # band index per patient, None when the sheet has no bands
    reading: "SheetReading" = field(default_factory=lambda: SheetReading())
    outside_training: np.ndarray | None = None  # per patient: any measurement outside a training range

    @property
    def n(self) -> int:
        return len(self.total)

    @property
    def notes(self) -> list[str]:
        return self.reading.notes()

    @property
    def warnings(self) -> list[str]:
        return self.reading.warnings()


@dataclass
class SheetReading:
    """What the reader of a scored cohort is told, kept as counts so that the chunks of a streamed cohort add
    up to what one pass over the whole reports: per measured item, the values outside its training range out
    of those measured (most of them outside: wrong units suspected); per category, the levels on no printed
    row and the row they were scored in. Entries are keyed by print order, so the lines come out in it."""

    outside: dict[tuple[int, str], list] = field(default_factory=dict)  # (order, feature) -> [outside, measured, block]
    unlisted: dict[tuple[int, str], dict] = field(default_factory=dict)  # (order, feature) -> {"row": text|None, "levels": {}}

    def add(self, other: "SheetReading") -> None:
        """Count another chunk of the same cohort in."""
        for key, (out, measured, block) in other.outside.items():
            mine = self.outside.setdefault(key, [0, 0, block])
            mine[0] += out
            mine[1] += measured
        for key, entry in other.unlisted.items():
            mine = self.unlisted.setdefault(key, {"row": entry["row"], "levels": {}})
            for level, n in entry["levels"].items():
                mine["levels"][level] = mine["levels"].get(level, 0) + n

    def warnings(self, share: float = 0.5) -> list[str]:
        """Loud warnings when most values of a feature lie outside its training range (wrong units suspected)."""
        out = []
        for (_, name), (outside, measured, block) in sorted(self.outside.items()):
            if measured and outside > share * measured:
                rng, unit = block["training_range"], block.get("unit", "")
                out.append(
                    f"WARNING: {outside / measured:.0%} of {name!r} values lie outside the training range "
                    f"{rng['min']:g} to {rng['max']:g} {unit}: wrong units suspected; the sheet expects {unit or 'the training units'}"
                )
        return out

    def notes(self) -> list[str]:
        out = []
        for (_, name), entry in sorted(self.unlisted.items()):
            listed = ", ".join(f"{lv!r} x{c}" for lv, c in sorted(entry["levels"].items()))
            where = f"in the {entry['row']!r} row" if entry["row"] is not None else "0 points"
            out.append(f"{name}: levels on no row of the sheet, scored {where}: {listed}")
        return out


def sheet_logodds(sheet: dict, total: np.ndarray) -> np.ndarray:
    """offset + logodds_per_point * total, the sheet's log-odds for a total (docs/sheet-document.md)."""
    scale = sheet["scale"]
    return float(scale["offset"]) + float(scale["logodds_per_point"]) * np.asarray(total, dtype=float)


def sheet_features(sheet: dict) -> list[str]:
    """The cohort columns the sheet needs, in print order."""
    names: list[str] = []
    for term in sheet["terms"]:
        for name in term["features"] if term["kind"] == "pair" else [term["feature"]]:
            if name not in names:
                names.append(name)
    return names


def _feature_kinds(sheet: dict) -> dict[str, str]:
    kinds: dict[str, str] = {}
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            for axis in term["axes"]:
                kinds.setdefault(axis["feature"], axis["kind"])
        else:
            kinds.setdefault(term["feature"], term["kind"])
    return kinds


def _display_conversions(sheet: dict) -> dict[str, dict]:
    found = {}
    for term in sheet["terms"]:
        for block in term["axes"] if term["kind"] == "pair" else [term]:
            if block.get("display_conversion"):
                found[block["feature"]] = block["display_conversion"]
    return found


def to_display_unit(values: np.ndarray, conv: dict) -> np.ndarray:
    """Cohort values (the model's unit) in the table's display unit: scale x value + offset computed exactly in
    rational arithmetic on the value as written, then the nearest float (NaN stays NaN)."""
    scale, offset = Fraction(conv["scale"]), Fraction(conv["offset"])
    x = np.asarray(values, dtype=float)
    out = x.copy()
    for i in np.flatnonzero(np.isfinite(x)):
        out[i] = float(Fraction(repr(float(x[i]))) * scale + offset)
    return out


def parse_cohort(sheet: dict, frame: pd.DataFrame) -> dict[str, np.ndarray]:
    """Parse each column the sheet needs once: floats (NaN = not measured; in the table's display unit where it
    has one), flags as 1/0/NaN, levels/None."""
    require_columns(frame, sheet_features(sheet), what="the sheet")
    values = {}
    conversions = _display_conversions(sheet)
    for name, kind in _feature_kinds(sheet).items():
        if kind == "continuous":
            values[name] = numeric_column(frame, name)
            if name in conversions:
                values[name] = to_display_unit(values[name], conversions[name])
        elif kind == "flag":
            values[name] = flag_column(frame, name)
        else:
            values[name] = category_column(frame, name, _printed_levels(sheet, name))
    return values


def _printed_levels(sheet: dict, feature: str) -> list[str]:
    """Every level printed for a categorical feature (a level may be spelled like a not-measured token)."""
    levels: list[str] = []
    for term in sheet["terms"]:
        if term["kind"] == "pair":
            rows = [row for axis in term["axes"] if axis["feature"] == feature for row in axis["rows"]]
        else:
            rows = term["rows"] if term["feature"] == feature else []
        levels.extend(level for row in rows for level in row.get("levels", ()))
    return levels


# -- one block per kind ------------------------------------------------------------------------------


def _continuous_choice(rows: list[dict], decimals: int, x: np.ndarray, where: str,
                       reading: str | None = None) -> tuple[np.ndarray, int | None]:
    """Index (into `rows`) of each patient's row; NaN gets the missing row, or -1 when there is none."""
    ranged = [i for i, r in enumerate(rows) if not r.get("missing")]
    if not ranged:
        raise UserError(f"{where}: has no measured rows; the sheet is incomplete, rebuild it with `scorecard quantize`")
    lows = [rows[i]["lower"] for i in ranged]
    ranged = [i for _, i in sorted(zip([-np.inf if v is None else v for v in lows], ranged))]
    cuts = np.array([_cut_units(rows[i]["lower"], decimals) for i in ranged[1:]], dtype=float)
    v = round_half_up_units(x, decimals, reading)
    pos = np.searchsorted(cuts, np.where(np.isnan(v), 0.0, v), side="right")
    idx = np.asarray(ranged, dtype=np.int64)[pos]
    missing_row = next((i for i, r in enumerate(rows) if r.get("missing")), None)
    return np.where(np.isnan(x), -1 if missing_row is None else missing_row, idx), missing_row


def _flag_choice(rows: list[dict], x: np.ndarray) -> np.ndarray:
    yes = next((i for i, r in enumerate(rows) if r.get("value") is True), -1)
    no = next((i for i, r in enumerate(rows) if r.get("value") is False), -1)
    missing_row = next((i for i, r in enumerate(rows) if r.get("missing")), -1)
    return np.where(np.isnan(x), missing_row, np.where(x == 1.0, yes, no)).astype(np.int64)


def _level_lookup(rows: list[dict]) -> dict[str, int]:
    lookup = {}
    for i, r in enumerate(rows):
        for level in r.get("levels", []):
            lookup[level] = i
    return lookup


def _category_choice(rows: list[dict], values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Index of each level's row; -1 not measured, -2 a level listed in no row."""
    lookup = _level_lookup(rows)
    codes, uniques = pd.factorize(pd.Series(values, dtype=object), use_na_sentinel=True)  # each distinct level once
    per_unique = np.array([lookup.get(v, -2) for v in uniques], dtype=np.int64)
    out = np.where(codes < 0, -1, per_unique[np.clip(codes, 0, None)] if len(per_unique) else -1).astype(np.int64)
    return out, out == -2


def _with_no_row(texts: list[str], points: list[int], idx: np.ndarray, code: int, text: str) -> np.ndarray:
    """Give patients with index `code` (no printed row applies) a 0-point choice named `text`."""
    hit = idx == code
    if not hit.any():
        return idx
    texts.append(text)
    points.append(0)
    return np.where(hit, len(texts) - 1, idx)


def _single_term(term: dict, x: np.ndarray, source: str, report: ScoredCohort, first: int = 0, order: int = 0) -> TermChoices:
    rows = term["rows"]
    texts = [r["text"] for r in rows]
    points = [int(r["points"]) for r in rows]
    name = term["feature"]
    if term["kind"] == "continuous":
        idx, _ = _continuous_choice(rows, int(term["decimals"]), x, f"term {term['name']!r}", term.get("reading"))
    elif term["kind"] == "flag":
        idx = _flag_choice(rows, x)
    else:
        idx, unseen = _category_choice(rows, x)
        missing_row = next((i for i, r in enumerate(rows) if r.get("missing")), None)
        if missing_row is not None:
            idx = np.where(idx == -1, missing_row, idx)
        if unseen.any():
            levels = {str(lv): int(c) for lv, c in pd.Series(x[unseen]).value_counts().items()}
            policy = term.get("unseen", "error")
            if policy == "error":
                row = int(np.flatnonzero(unseen)[0])
                known = ", ".join(lv for r in rows for lv in r.get("levels", []))
                raise UserError(
                    f"{source}: row {first + row + 1}, column {name!r}: level {x[row]!r} is on no row of the sheet ({known}); "
                    "correct the spelling, or score the patient by hand with local guidance"
                )
            target = next((i for i, r in enumerate(rows) if r.get("other" if policy == "other" else "missing")), None)
            if target is not None:
                idx = np.where(idx == -2, target, idx)
            report.reading.unlisted[(order, name)] = {"row": None if target is None else rows[target]["text"], "levels": levels}
            idx = _with_no_row(texts, points, idx, -2, NOT_LISTED_TEXT)
    if (idx == -1).any():
        _refuse_not_measured(source, first + int(np.flatnonzero(idx == -1)[0]), name, "its table has no 'not measured' row")
    return TermChoices(term["name"], term["label"], [name], texts, np.asarray(points, dtype=np.int64), idx)


def _axis_choice(axis: dict, x: np.ndarray) -> np.ndarray:
    """Index of each patient's axis row; -1 when not measured or on no row (the grid's not-measured points)."""
    rows = axis["rows"]
    if axis["kind"] == "continuous":
        idx, _ = _continuous_choice(rows, int(axis["decimals"]), x, f"pair axis {axis['feature']!r}", axis.get("reading"))
        return idx
    if axis["kind"] == "flag":
        return _flag_choice(rows, x)
    idx, _ = _category_choice(rows, x)
    return np.where(idx < 0, -1, idx)


def _refuse_not_measured(source: str, row: int, name: str, why: str) -> None:
    """The printed rule for a measurement the sheet cannot do without: measure it first (as the model does)."""
    raise UserError(
        f"{source}: row {row + 1}, column {name!r}: not measured, and the sheet says to {MEASURE_FIRST} ({why}); "
        "add the measurement, or leave the patient out"
    )


def _pair_term(term: dict, values: dict[str, np.ndarray], source: str, first: int = 0) -> TermChoices:
    a0, a1 = term["axes"]
    for axis in term["axes"]:
        # an axis marked measure_first (or every axis of an older grid printed without a not-measured option)
        if axis.get("measure_first") or not term.get("missing_allowed", True):
            x = values[axis["feature"]]
            absent = np.array([v is None for v in x]) if x.dtype == object else np.isnan(x)
            if absent.any():
                _refuse_not_measured(source, first + int(np.flatnonzero(absent)[0]), axis["feature"],
                                     f"the grid {term['label']!r} has no 'not measured' option for it")
    i = _axis_choice(a0, values[a0["feature"]])
    j = _axis_choice(a1, values[a1["feature"]])
    grid = np.asarray(term["points"], dtype=np.int64)
    n0, n1 = len(a0["rows"]), len(a1["rows"])
    if grid.shape != (n0, n1):
        raise UserError(f"term {term['name']!r}: points grid is {grid.shape[0]}x{grid.shape[1]} but the axes have {n0}x{n1} rows")
    texts = [f"{r0['text']} / {r1['text']}" for r0 in a0["rows"] for r1 in a1["rows"]] + ["not measured"]
    points = np.append(grid.reshape(-1), int(term["missing_points"]))
    missing = (i < 0) | (j < 0)
    idx = np.where(missing, n0 * n1, np.clip(i, 0, None) * n1 + np.clip(j, 0, None))
    return TermChoices(term["name"], term["label"], list(term["features"]), texts, points, idx.astype(np.int64))


# -- the whole sheet ---------------------------------------------------------------------------------


def conversion_arrays(sheet: dict) -> tuple[int, np.ndarray, np.ndarray]:
    """(lowest total, risk per total, printed text per total) from the conversion table, checked contiguous."""
    table = sorted(sheet["conversion"], key=lambda c: c["total"])
    first = int(table[0]["total"])
    for k, c in enumerate(table):
        if int(c["total"]) != first + k:
            raise UserError(f"sheet conversion: total {first + k} is missing from the table; rebuild the sheet")
    risk = np.array([float(c["risk"]) for c in table])
    text = np.array([c["text"] for c in table], dtype=object)
    return first, risk, text


def band_index(sheet: dict, risk: np.ndarray) -> np.ndarray | None:
    """Band of each risk by the sheet's band rule (`scorecard.sheet.printed.band_indices`); None without bands."""
    bands = sheet.get("bands") or []
    return band_indices(bands, risk) if bands else None


def total_band_index(sheet: dict, totals: np.ndarray) -> np.ndarray | None:
    """Band of each total as the sheet prints it (`scorecard.sheet.printed.total_band_indices`); None without bands."""
    return total_band_indices(sheet, totals) if sheet.get("bands") else None


def outside_training(sheet: dict, values: dict[str, np.ndarray], reading: SheetReading) -> np.ndarray:
    """The per-patient mask of any measurement outside a training range; the counts per feature go into
    `reading` (its warnings name a feature most of whose values are outside: wrong units suspected)."""
    n = len(next(iter(values.values()))) if values else 0
    outside_any = np.zeros(n, dtype=bool)
    seen = set()
    blocks = []
    for term in sheet["terms"]:
        blocks += [a for a in term["axes"] if a["kind"] == "continuous"] if term["kind"] == "pair" else (
            [term] if term["kind"] == "continuous" else [])
    for order, block in enumerate(blocks):
        name = block["feature"]
        rng = block.get("training_range")
        if name in seen or not rng:
            continue
        seen.add(name)
        x = values[name]
        measured = ~np.isnan(x)
        with np.errstate(invalid="ignore"):
            outside = measured & ((x < rng["min"]) | (x > rng["max"]))
        outside_any |= outside
        reading.outside[(order, name)] = [int(outside.sum()), int(measured.sum()),
                                          {"training_range": rng, "unit": block.get("unit", "")}]
    return outside_any


def score_cohort(sheet: dict, frame: pd.DataFrame, values: dict[str, np.ndarray] | None = None) -> ScoredCohort:
    """Apply the printed sheet to every patient in `frame` (one row per patient); `values` are the columns
    already parsed by `parse_cohort`, when the caller has them."""
    source = source_of(frame)
    first_row = int(frame.attrs.get("first_row", 0))  # a chunk of a streamed file: errors name the file's row
    values = parse_cohort(sheet, frame) if values is None else values
    scored = ScoredCohort(terms=[], total=np.zeros(len(frame), dtype=np.int64), risk=np.empty(0), risk_text=np.empty(0), band=None)
    scored.outside_training = outside_training(sheet, values, scored.reading)
    total = np.zeros(len(frame), dtype=np.int64)
    for order, term in enumerate(sheet["terms"]):
        if term["kind"] == "pair":
            choices = _pair_term(term, values, source, first_row)
        else:
            choices = _single_term(term, values[term["feature"]], source, scored, first_row, order)
        scored.terms.append(choices)
        total += choices.patient_points()
    first, risk, text = conversion_arrays(sheet)
    pos = total - first
    bad = (pos < 0) | (pos >= len(risk))
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise UserError(
            f"{source}: row {first_row + row + 1}: total {total[row]} is not in the sheet's conversion table "
            f"({first} to {first + len(risk) - 1}); the sheet is inconsistent, rebuild it with `scorecard quantize`"
        )
    scored.total = total
    scored.risk = risk[pos]
    scored.risk_text = text[pos]
    scored.band = total_band_index(sheet, scored.total)
    return scored
