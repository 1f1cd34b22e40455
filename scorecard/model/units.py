"""A feature shown in the ward's own display unit (°F, g/dL, mg/dL, ...): the factors, and the model rewritten
in that unit so the quantiser finds readable cut-points in it (rather than converting SI cuts into odd numbers).

The factors come from pint, a units library kept on the package index; a conversion is stored as two exact
decimal strings, `display = scale x model value + offset`, so the sheet and the audit can apply it in exact
arithmetic before the reading rule (a converted tie is still a tie). Substance concentrations (mmol/L ->
mg/dL) need the substance's molar mass in g/mol (glucose 180.16: x 18.016, common practice).
"""

from __future__ import annotations

import math
from decimal import Decimal
from functools import lru_cache

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel

# what a ward writes -> what pint reads, and back for printing
_SPELLINGS = {"°C": "degC", "°F": "degF", "℃": "degC", "℉": "degF"}
_PRINTED = {"degC": "°C", "degF": "°F", "degree_Celsius": "°C", "degree_Fahrenheit": "°F"}
SIGNIFICANT = 12  # pint's factors carry float noise (98.59999999999994 for 37 °C): keep 12 significant digits


@lru_cache(maxsize=1)
def _registry():
    import pint

    return pint.UnitRegistry()


def printed_unit(unit: str) -> str:
    return _PRINTED.get(unit.strip(), unit.strip())


def _clean(value: float) -> Decimal:
    if value == 0:
        return Decimal(0)
    digits = SIGNIFICANT - 1 - math.floor(math.log10(abs(value)))
    return Decimal(repr(round(value, digits))).normalize()


def conversion(from_unit: str, to_unit: str, molar_mass: float | None = None, where: str = "--display-unit") -> dict:
    """{"from_unit", "unit", "scale", "offset"} with display = scale * value + offset (decimal strings)."""
    import pint

    ureg = _registry()
    src, dst = _SPELLINGS.get(from_unit.strip(), from_unit.strip()), _SPELLINGS.get(to_unit.strip(), to_unit.strip())
    try:
        a, b = ureg.Quantity(0.0, src), ureg.Quantity(1.0, src)
        if molar_mass is not None:
            mass = ureg.Quantity(float(molar_mass), "g/mol")
            a, b = a * mass, b * mass
        f0, f1 = a.to(dst).magnitude, b.to(dst).magnitude
    except pint.errors.DimensionalityError:
        substance_to_mass = "mol" in src and "mol" not in dst and "g" in dst
        hint = (" (a concentration in mmol/L to mg/dL needs --molar-mass FEATURE=G_PER_MOL)"
                if molar_mass is None and substance_to_mass else "")
        raise UserError(f"{where}: cannot convert {from_unit} to {to_unit}{hint}") from None
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError, ValueError, TypeError):
        raise UserError(f"{where}: {from_unit!r} or {to_unit!r} is not a unit pint knows; write e.g. degF, g/dL, mg/dL") from None
    scale, offset = _clean(f1 - f0), _clean(f0)
    if scale <= 0:
        raise UserError(f"{where}: {to_unit} runs the other way from {from_unit}; choose a unit that rises with it")
    return {"from_unit": from_unit, "unit": printed_unit(to_unit), "scale": str(scale), "offset": str(offset)}


def display_decimals(decimals: int, scale: str) -> int:
    """Decimals in the display unit for about the same precision: 1 decimal of °C is 1 of °F; 0 of g/L is 1 of
    g/dL; 1 of mmol/L is 0 of mg/dL."""
    return max(0, min(6, decimals - math.floor(math.log10(float(scale)))))


def _convert(value: float, conv: dict) -> float:
    return float(Decimal(repr(float(value))) * Decimal(conv["scale"]) + Decimal(conv["offset"]))


def convert_values(values, conv: dict):
    """Model-unit values -> display-unit floats, each the float nearest the exact decimal result (NaN stays)."""
    import numpy as np

    x = np.asarray(values, dtype=float)
    out = x.copy()
    finite = np.isfinite(x)
    uniques, inverse = np.unique(x[finite], return_inverse=True)
    out[finite] = np.array([_convert(v, conv) for v in uniques])[inverse] if len(uniques) else out[finite]
    return out


def in_display_unit(model: AdditiveModel, name: str, conv: dict, decimals: int | None = None) -> AdditiveModel:
    """A copy of `model` with feature `name` measured in the display unit: every edge, knot and training range
    moved by the conversion (scores unchanged), the unit and decimals set; `display_conversion` recorded."""
    out = model.copy()
    feature = out.feature(name)
    if feature.kind != "continuous":
        raise UserError(f"--display-unit {name}: only a measured (continuous) feature has a unit")
    conv = {**conv, "from_unit": feature.unit or conv["from_unit"]}
    feature.decimals = display_decimals(feature.decimals, conv["scale"]) if decimals is None else decimals
    feature.unit = conv["unit"]
    if feature.training_range:
        feature.training_range = {k: _convert(v, conv) for k, v in feature.training_range.items()}
    for term in out.terms:
        if term.kind == "continuous" and term.feature == name:
            term.edges = [_convert(e, conv) for e in term.edges]
        elif term.kind == "pair" and name in term.features:
            j = term.features.index(name)
            term.axes[j] = {**term.axes[j], "edges": [_convert(e, conv) for e in term.axes[j]["edges"]]}
    out.provenance = {**out.provenance, "display_units": {**out.provenance.get("display_units", {}), name: conv}}
    return out
