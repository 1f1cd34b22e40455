"""What is printed on a sheet, and how a measurement finds its row: the exact rules every stage shares.

`quantize` writes row texts and conversion texts with these functions and finds each patient's row with
`read_units_array`; `render` prints what they produced. The audit (`scorecard/audit/paper.py`) keeps its own,
independent implementation of the reading rule, and a property test proves the two agree at and next to
every printed tie (tests/audit/test_reading_rule.py). All arithmetic on printed values is done in whole units of 10**-decimals (integers), so a
cut-point such as 37.5 is never a float comparison.
"""

from __future__ import annotations

import math
from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

import numpy as np

ROUNDED, COMPLETED = "rounded", "completed"  # the two reading rules (docs/sheet-document.md)
ROUNDING_RULE = (
    "Round each measurement to the decimals printed for it; a value exactly half way goes up (69.5 counts as "
    "70, 69.49 as 69, 36.45 as 36.5); a table marked \u2018completed\u2019 counts only completed units (79.6 "
    "years counts as 79). Then find its row."
)
NOT_MEASURED_TEXT = "not measured"
MEASURE_FIRST = "measure first"
# printed with the tables: the action for a table without a "not measured" row (the model refuses such a patient)
MEASURE_FIRST_RULE = "A table without a \u2018not measured\u2019 row needs its measurement: measure first, then score."
TIE_WINDOW = 1e-6  # in display units (relative above 1): a value this close to a tie is decided in decimal
DASH = "\u2013"  # en dash, as in 70–79
LE = "\u2264"
GE = "\u2265"
MINUS = "-"


def units(value: float, decimals: int) -> int:
    """A printed value (a multiple of 10**-decimals) as a whole number of display units."""
    return int(round(float(value) * 10**decimals))


def is_on_grid(value: float, decimals: int) -> bool:
    """True when `value` is a multiple of 10**-decimals (up to float noise)."""
    scaled = float(value) * 10**decimals
    return abs(scaled - round(scaled)) <= 1e-6 * max(1.0, abs(scaled))


def number_text(unit_count: int, decimals: int) -> str:
    """Whole display units -> printed number with exactly `decimals` places, e.g. (375, 1) -> '37.5'."""
    text = str(Decimal(int(unit_count)).scaleb(-decimals).quantize(Decimal(1).scaleb(-decimals)))
    return text if text != "-0" else "0"


def range_text(lower: float | None, upper: float | None, decimals: int) -> str:
    """Printed text of the row lower <= value < upper at `decimals` places (None = open-ended).

    The row [a, b) prints as 'a–(b - 10**-decimals)', the open first row as '≤ (b - 10**-decimals)', the
    open last row as '≥ a'; a row holding a single printed value prints that value alone.
    """
    lo = None if lower is None else units(lower, decimals)
    hi = None if upper is None else units(upper, decimals) - 1  # largest printed value inside the row
    if lo is None and hi is None:
        return "any measured value"
    if lo is None:
        return f"{LE} {number_text(hi, decimals)}"
    if hi is None:
        return f"{GE} {number_text(lo, decimals)}"
    if hi < lo:
        raise ValueError(f"empty row [{lower}, {upper}) at {decimals} decimals")
    if hi == lo:
        return number_text(lo, decimals)
    return f"{number_text(lo, decimals)}{DASH}{number_text(hi, decimals)}"


def read_units(value: float, decimals: int, reading: str = ROUNDED) -> int:
    """A measurement as the sheet reads it, in whole display units of 10**-decimals: the exact rule.

    The value is taken as the decimal number it was written as (the shortest repr of the float, which is what
    a CSV cell or a chart entry says), in decimal arithmetic, never binary floating point:
    - `rounded` (the default): round half up - a value exactly half way goes up, towards +infinity
      (69.5 -> 70, 2.675 at 2 decimals -> 2.68, 128.4999997 -> 128, -2.5 -> -2);
    - `completed`: completed units - cut down to the printed decimals (age 79.6 in completed years -> 79).
    """
    scaled = Decimal(repr(float(value))).scaleb(decimals)
    if reading == COMPLETED:
        return int(scaled.to_integral_value(rounding=ROUND_FLOOR))
    return int((scaled + Decimal("0.5")).to_integral_value(rounding=ROUND_FLOOR))


def round_half_up(value: float, decimals: int) -> int:
    """`read_units` with the default reading (round half up)."""
    return read_units(value, decimals, ROUNDED)


def read_units_array(values: np.ndarray, decimals: int, reading: str = ROUNDED) -> np.ndarray:
    """Vectorised `read_units` (float array; NaN and infinities stay as they are), in display units as floats.

    Binary arithmetic decides every value that is clearly away from a tie (from a whole unit for `completed`);
    a value within a millionth of a unit of one is decided by `read_units` itself, in decimal. The binary
    error of scaling is below 1e-15 of the value, so both paths give the same answer wherever the fast one is
    taken."""
    x = np.asarray(values, dtype=float)
    z = x * 10.0**decimals
    finite = np.isfinite(z)
    zf = np.where(finite, z, 0.0)
    if reading == COMPLETED:
        out = np.floor(zf)
        near = np.abs(zf - np.rint(zf)) <= TIE_WINDOW * np.maximum(1.0, np.abs(zf))
    else:
        out = np.floor(zf + 0.5)
        near = np.abs(zf - np.floor(zf) - 0.5) <= TIE_WINDOW * np.maximum(1.0, np.abs(zf))
    if decimals == 0:
        near &= zf != np.floor(zf)  # a whole number is already in whole units, whatever the rule
    for i in np.flatnonzero(near & finite):
        out.flat[i] = read_units(x.flat[i], decimals, reading)
    return np.where(finite, out, x)


def round_half_up_array(values: np.ndarray, decimals: int) -> np.ndarray:
    """`read_units_array` with the default reading (round half up)."""
    return read_units_array(values, decimals, ROUNDED)


def reading_of(block: dict) -> str:
    """The reading rule of a continuous term or pair axis of a sheet (or a model feature as a dict)."""
    return block.get("reading") or ROUNDED


def unit_text(block: dict) -> str:
    """The bracket of a table heading: the unit, as 'completed years' for a block read in completed units."""
    unit = block.get("unit") or ""
    if reading_of(block) == COMPLETED:
        return f"completed {unit or 'units'}"
    return unit


OTHER_NOTE = "any not listed above"
OTHER_EXPLAINED = ("Other: a category its table does not list (for example a new kind of residence) scores the "
                   "\u2018Other\u2019 row; check the spelling first.")


PAIR_JOIN = "with"


def pair_name(labels) -> str:
    """The printed name of a two-feature term, in words: the first feature's label, 'with', the second's
    begun in lower case ('Age with cognitive screen score (0\u201310)'), unless its first word is an
    abbreviation or starts in lower case already ('Age with ASA grade', 'Age with pH'). The one naming rule
    for every page, report and message; the term's JSON name ('age x cognition') stays an identifier."""
    first, second = (str(label) for label in labels)
    word = second.split(" ", 1)[0]
    if word[:1].isupper() and not any(c.isupper() for c in word[1:]):
        second = second[:1].lower() + second[1:]
    return f"{first} {PAIR_JOIN} {second}"


def pair_effect_name(labels) -> str:
    """A left-off pair, named so it never reads as if its features were left off."""
    return f"{pair_name(labels)}, their combined effect beyond each alone"


def term_label(model, term) -> str:
    """What a reader knows a model term by (`model` an AdditiveModel, `term` one of its terms or its name):
    its feature's label, or `pair_name` of its two features' labels; a feature without a label reads as its
    column name with '_' as spaces."""
    term = model.term(term) if isinstance(term, str) else term
    labels = [model.feature(n).label or n.replace("_", " ") for n in term.feature_names]
    return pair_name(labels) if len(labels) == 2 else labels[0]


def row_label(term: dict, row: dict) -> str:
    """The text printed for a row of a one-feature table: its `text`, and for the single measured row of a
    continuous table the sheet's reason for it in brackets ('any measured value (its effect is under one point)')."""
    note = term.get("single_row_note")
    if note and term["kind"] == "continuous" and not row.get("missing"):
        return f"{row['text']} ({note})"
    if row.get("other"):
        return f"{row['text']} ({OTHER_NOTE})"
    return row["text"]


def pair_missing_text(term: dict) -> tuple[str, int | None]:
    """The last line of a pair grid and the points it gives ('If either is not measured: ' + points, or the
    measure-first action for the axes marked so); points None when no patient can take that line."""
    allowed = term.get("missing_allowed", True)
    first = [bool(a.get("measure_first")) or not allowed for a in term["axes"]]
    points = int(term.get("missing_points", 0))
    if all(first):
        return f"If either is not measured: {MEASURE_FIRST}, then score", None
    if not any(first):
        return "If either is not measured:", points
    free = term["labels"][first.index(False)]
    strict = term["labels"][first.index(True)]
    return f"{strict}: {MEASURE_FIRST}. If {free} is not measured:", points


def row_bounds_units(rows: list[dict], decimals: int) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper bounds of the measured rows (missing row excluded) in display units; ±inf when open."""
    ranged = [r for r in rows if not r.get("missing")]
    lo = np.array([-np.inf if r["lower"] is None else units(r["lower"], decimals) for r in ranged], dtype=float)
    hi = np.array([np.inf if r["upper"] is None else units(r["upper"], decimals) for r in ranged], dtype=float)
    return lo, hi


def row_index(rows: list[dict], value: float | None, decimals: int, reading: str = ROUNDED) -> int:
    """Index in `rows` of the row a measurement belongs to: read it (`read_units`) at `decimals`, then
    lower <= value < upper. A missing value (None or NaN) gives the index of the not-measured row,
    or -1 when the sheet has none (the feature must be measured first)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return next((i for i, r in enumerate(rows) if r.get("missing")), -1)
    v = read_units(value, decimals, reading)
    for i, r in enumerate(rows):
        if r.get("missing"):
            continue
        if (r["lower"] is None or units(r["lower"], decimals) <= v) and (r["upper"] is None or v < units(r["upper"], decimals)):
            return i
    raise ValueError(f"value {value} falls in no row; the rows do not cover the line")


def row_indices(rows: list[dict], values: np.ndarray, decimals: int, reading: str = ROUNDED) -> np.ndarray:
    """Vectorised `row_index` for a float array (NaN = not measured -> the missing row, or -1)."""
    x = np.asarray(values, dtype=float)
    lo, _ = row_bounds_units(rows, decimals)
    ranged_at = [i for i, r in enumerate(rows) if not r.get("missing")]
    v = read_units_array(x, decimals, reading)
    # rows are contiguous and ordered, so the row is the last one whose lower bound is <= v
    pos = np.searchsorted(lo, np.where(np.isnan(v), 0.0, v), side="right") - 1
    out = np.asarray(ranged_at, dtype=np.int64)[np.clip(pos, 0, len(ranged_at) - 1)]
    missing_row = next((i for i, r in enumerate(rows) if r.get("missing")), -1)
    return np.where(np.isnan(x), missing_row, out)


def risk_text(risk: float) -> str:
    """Printed risk: one decimal place below 10 %, whole percent from 10 %, never '0%' or '100%'.

    Rounded half up in decimal arithmetic. Below 0.05 % prints '<0.1%'; from 99.95 % prints '>99.9%';
    between 99.5 % and 99.95 % one decimal again (e.g. '99.7%'), so no risk short of certainty prints 100 %.
    """
    pct = Decimal(repr(float(risk))) * 100
    one = pct.quantize(Decimal("0.1"), rounding=ROUND_HALF_UP)
    if one < Decimal("0.1"):
        return "<0.1%"
    if one < 10:
        return f"{one}%"
    whole = pct.quantize(Decimal("1"), rounding=ROUND_HALF_UP)
    if whole < 100:
        return f"{whole}%"
    if one < 100:
        return f"{one}%"
    return ">99.9%"


def risk_text_rounding(risk: float) -> float:
    """Largest difference (as a fraction) between `risk` and the value its printed text states."""
    pct = float(risk) * 100
    if pct < 0.05 or pct >= 99.95:
        return 0.0005
    return 0.0005 if (pct < 9.95 or pct >= 99.5) else 0.005


NO_SPREAD_TEXT = "\u2013"  # the range cell of a total too few patients had
SPREAD_LEFT_OFF = ("The range of risk among patients with each total is left off this card to fit it; "
                   "the full-page sheet prints it.")  # printed (render) and looked for (verify) where a layout drops it


def prints_spread(sheet: dict) -> bool:
    """Whether the conversion table prints the range column: some total has a stored 10th-90th percentile
    spread (sheets made before it, and recalibrated sheets, whose model risk is another one, have none)."""
    return any((c.get("spread") or {}).get("low") is not None for c in sheet["conversion"])


def spread_text(entry: dict) -> str:
    """The range cell of one conversion entry: '4.3\u20138.3%' (the 10th to 90th percentile of the exact
    model's risk among the patients with this total, each end printed by `risk_text`), or NO_SPREAD_TEXT."""
    spread = entry.get("spread") or {}
    if spread.get("low") is None or spread.get("high") is None:
        return NO_SPREAD_TEXT
    return f"{risk_text(spread['low']).removesuffix('%')}\u2013{risk_text(spread['high'])}"


def band_indices(bands: list[dict], risks) -> np.ndarray:
    """Index of the risk band of each risk: previous upper_risk <= risk < upper_risk; the last band is open
    (null). The one band rule of quantize, render and the audit (docs/sheet-document.md)."""
    uppers = np.array([np.inf if b["upper_risk"] is None else float(b["upper_risk"]) for b in bands])
    return np.minimum(np.searchsorted(uppers, np.asarray(risks, dtype=float), side="right"), len(bands) - 1)


def band_of(bands: list[dict], risk: float) -> int:
    """`band_indices` of one risk."""
    return int(band_indices(bands, [risk])[0])


def total_band_indices(sheet: dict, totals) -> np.ndarray:
    """Band of each total on the sheet, the band a nurse reads: when the bands carry `first_total` (the
    quantizer's band-edge search, docs/quantization.md), band b holds the totals first_total[b] <= t <
    first_total[b + 1]; otherwise a total's band is that of its printed risk (`band_indices`). Totals outside
    the conversion are clipped to its ends. The one rule for the band of a total (quantize, render, audit)."""
    bands = sheet["bands"]
    entry_totals = np.array([int(c["total"]) for c in sheet["conversion"]], dtype=np.int64)
    t = np.clip(np.asarray(totals, dtype=np.int64), entry_totals.min(), entry_totals.max())
    if by_total(bands):
        return np.searchsorted(np.array([int(b["first_total"]) for b in bands[1:]], dtype=np.int64), t, side="right")
    risks = np.array([float(c["risk"]) for c in sheet["conversion"]])
    order = np.argsort(entry_totals, kind="stable")
    at = order[np.minimum(np.searchsorted(entry_totals[order], t), len(order) - 1)]
    return band_indices(bands, risks[at])


def by_total(bands: list[dict]) -> bool:
    """Whether the bands carry the totals where they begin (then a total's band is read from them)."""
    return bool(bands) and all(b.get("first_total") is not None for b in bands)


BAND_EDGE_NOTE = ("A band begins at the total where the exact model most often changes band, so the risk printed at "
                  "a band's first or last total can lie just past the band's limit.")


def band_edge_note(sheet: dict) -> str | None:
    """The note under the band table when a searched band edge differs from where the printed risk crosses the
    band's limit (BAND_EDGE_NOTE), else None."""
    bands = sheet.get("bands") or []
    if not by_total(bands):
        return None
    by_risk = [int(b) for b in band_indices(bands, [float(c["risk"]) for c in sheet["conversion"]])]
    return BAND_EDGE_NOTE if by_risk != conversion_bands(sheet) else None


def conversion_bands(sheet: dict) -> list[int]:
    """The band of every conversion entry, in order (empty without bands): by its total when the bands carry
    their first totals, else by its printed risk."""
    bands = sheet.get("bands") or []
    if not bands:
        return []
    if by_total(bands):
        return [int(b) for b in total_band_indices(sheet, [c["total"] for c in sheet["conversion"]])]
    return [int(b) for b in band_indices(bands, [float(c["risk"]) for c in sheet["conversion"]])]


def flag_text(value: bool) -> str:
    return "Yes" if value else "No"
