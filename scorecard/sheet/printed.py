"""What is printed on a sheet, and how a measurement finds its row: the exact rules every stage shares.

`quantize` writes row texts and conversion texts with these functions, `render` prints what they produced,
and the audit verbs score patients with `row_index` / `row_indices` - so the paper and the software cannot
drift apart. All arithmetic on printed values is done in whole units of 10**-decimals (integers), so a
cut-point such as 37.5 is never a float comparison.
"""

from __future__ import annotations

import math
from decimal import ROUND_FLOOR, ROUND_HALF_UP, Decimal

import numpy as np

ROUNDING_RULE = (
    "Round each measurement half up to the decimals printed for it (for example 69.5 counts as 70), "
    "then find its row."
)
NOT_MEASURED_TEXT = "not measured"
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


def round_half_up(value: float, decimals: int) -> int:
    """The measurement rounded half up (towards +infinity on a tie) at `decimals` places, in display units.

    Decimal arithmetic on the shortest repr of the float, so 2.675 at 2 decimals gives 268 as a person
    writing it down would, not 267 as binary floating point would.
    """
    scaled = Decimal(repr(float(value))).scaleb(decimals)
    return int((scaled + Decimal("0.5")).to_integral_value(rounding=ROUND_FLOOR))


def round_half_up_array(values: np.ndarray, decimals: int) -> np.ndarray:
    """Vectorised `round_half_up` (float array, NaN stays NaN), in display units as floats.

    The scaled values are first rounded to 6 places to wash out binary noise (2.675 * 100 = 267.49999...),
    which agrees with the Decimal rule for any measurement recorded with at most decimals + 6 places.
    """
    x = np.asarray(values, dtype=float)
    scaled = np.round(x * 10.0**decimals, 6)
    return np.floor(scaled + 0.5)


def row_bounds_units(rows: list[dict], decimals: int) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper bounds of the measured rows (missing row excluded) in display units; ±inf when open."""
    ranged = [r for r in rows if not r.get("missing")]
    lo = np.array([-np.inf if r["lower"] is None else units(r["lower"], decimals) for r in ranged], dtype=float)
    hi = np.array([np.inf if r["upper"] is None else units(r["upper"], decimals) for r in ranged], dtype=float)
    return lo, hi


def row_index(rows: list[dict], value: float | None, decimals: int) -> int:
    """Index in `rows` of the row a measurement belongs to: round half up to `decimals`, then
    lower <= value < upper. A missing value (None or NaN) gives the index of the not-measured row,
    or -1 when the sheet has none (the feature must be measured)."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return next((i for i, r in enumerate(rows) if r.get("missing")), -1)
    v = round_half_up(value, decimals)
    for i, r in enumerate(rows):
        if r.get("missing"):
            continue
        if (r["lower"] is None or units(r["lower"], decimals) <= v) and (r["upper"] is None or v < units(r["upper"], decimals)):
            return i
    raise ValueError(f"value {value} falls in no row; the rows do not cover the line")


def row_indices(rows: list[dict], values: np.ndarray, decimals: int) -> np.ndarray:
    """Vectorised `row_index` for a float array (NaN = not measured -> the missing row, or -1)."""
    x = np.asarray(values, dtype=float)
    lo, _ = row_bounds_units(rows, decimals)
    ranged_at = [i for i, r in enumerate(rows) if not r.get("missing")]
    v = round_half_up_array(x, decimals)
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


def band_of(bands: list[dict], risk: float) -> int:
    """Index of the risk band: previous upper_risk <= risk < upper_risk; the last band is open (null)."""
    for i, b in enumerate(bands):
        if b["upper_risk"] is None or risk < b["upper_risk"]:
            return i
    return len(bands) - 1


def flag_text(value: bool) -> str:
    return "Yes" if value else "No"
