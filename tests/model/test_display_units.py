"""The ward's own units: factors from pint checked against the published ones, cut-points found in the display
unit, and a round trip through `score` that a nurse converting by hand would reproduce."""

from decimal import ROUND_FLOOR, Decimal

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort, true_model
from scorecard.model import save_model
from scorecard.model.units import conversion, convert_values
from scorecard.sheet import load_sheet
from scorecard.sheet.printed import is_on_grid


def test_pint_factors_are_the_published_ones():
    # °F = °C x 9/5 + 32 (the Fahrenheit scale's definition, published)
    f = conversion("°C", "degF")
    assert (Decimal(f["scale"]), Decimal(f["offset"]), f["unit"]) == (Decimal("1.8"), Decimal("32"), "°F")
    # 1 g/dL = 10 g/L (SI prefixes, published)
    assert Decimal(conversion("g/L", "g/dL")["scale"]) == Decimal("0.1")
    # glucose: mmol/L x 18.016 = mg/dL (molar mass 180.16 g/mol; common practice)
    assert Decimal(conversion("mmol/L", "mg/dL", molar_mass=180.16)["scale"]) == Decimal("18.016")
    # exact decimal arithmetic: 37 °C is 98.6 °F, 36.75 °C is 98.15 °F (a tie at one decimal), not 98.1499...
    assert convert_values(np.array([37.0, 36.75, np.nan]), f)[:2].tolist() == [98.6, 98.15]


@pytest.mark.parametrize("args, words", [
    (("sodium=bogons",), "not a unit pint knows"),
    (("sodium=furlong",), "cannot convert mmol/L to furlong"),
    (("sodium=mg/dL",), "--molar-mass"),
    (("sodim=degF",), "did you mean 'sodium'"),
    (("temperature=degF:9",), "decimals must be a whole number"),
])
def test_bad_display_units_are_one_line(tmp_path, args, words):
    save_model(true_model(), tmp_path / "m.json")
    cli = ["quantize", str(tmp_path / "m.json"), "-o", str(tmp_path / "s.json")]
    result = CliRunner().invoke(main, cli + [a for x in args for a in ("--display-unit", x)])
    assert result.exit_code == 2 and words in result.output and len(result.output.strip().splitlines()) == 1
    assert not (tmp_path / "s.json").exists()


def _row_by_hand(rows, value_text: str, decimals: int) -> str:
    """What a nurse does: round the converted value half up at the printed decimals, then read the printed ranges."""
    units = int((Decimal(value_text).scaleb(decimals) + Decimal("0.5")).to_integral_value(rounding=ROUND_FLOOR))
    for r in rows:
        lo = None if r.get("lower") is None else int(round(r["lower"] * 10**decimals))
        hi = None if r.get("upper") is None else int(round(r["upper"] * 10**decimals))
        if not r.get("missing") and (lo is None or lo <= units) and (hi is None or units < hi):
            return r["text"]
    raise AssertionError(value_text)


def test_a_fahrenheit_sheet_round_trip_through_score(tmp_path):
    cohort = generate_cohort(3000, seed=5)
    # temperatures at two decimals of °C, many of which land exactly on a tie in °F (36.75 -> 98.15)
    cohort["temperature"] = np.round(cohort["temperature"] + np.random.default_rng(5).choice([0, 0.05, 0.25, -0.25], len(cohort)), 2)
    cohort.to_csv(tmp_path / "c.csv", index=False)
    save_model(true_model(), tmp_path / "m.json")
    result = CliRunner().invoke(main, ["quantize", str(tmp_path / "m.json"), "--data", str(tmp_path / "c.csv"),
                                       "--display-unit", "temperature=degF", "--display-unit", "haemoglobin=g/dL",
                                       "--bootstrap", "0", "-o", str(tmp_path / "s.json")])
    assert result.exit_code == 0, result.output
    sheet = load_sheet(tmp_path / "s.json")
    temp = next(t for t in sheet["terms"] if t["name"] == "temperature")
    assert temp["unit"] == "°F" and temp["decimals"] == 1 and 94 < temp["training_range"]["min"] < 96
    # readable cuts found in °F: every printed bound is on the 0.1 °F grid
    assert all(is_on_grid(r[k], 1) for r in temp["rows"] for k in ("lower", "upper") if r.get(k) is not None)
    result = CliRunner().invoke(main, ["score", str(tmp_path / "s.json"), str(tmp_path / "c.csv"), "--model",
                                       str(tmp_path / "m.json"), "-o", str(tmp_path / "scored.csv")])
    assert result.exit_code == 0, result.output  # the sheet names the model as written, in °C
    scored = pd.read_csv(tmp_path / "scored.csv", dtype=str, keep_default_na=False)
    by_hand = [_row_by_hand(temp["rows"], str(Decimal(repr(float(c))) * Decimal("1.8") + 32), 1)
               for c in cohort["temperature"]]
    assert scored["row:temperature"].tolist() == by_hand


def test_a_letter_sheet_in_si_units_says_so(tmp_path):
    from scorecard.render import load_layout, render_pdf
    import io
    import pdfplumber

    save_model(true_model(), tmp_path / "m.json")
    assert CliRunner().invoke(main, ["quantize", str(tmp_path / "m.json"), "--bootstrap", "0", "-o", str(tmp_path / "s.json")]).exit_code == 0
    sheet = load_sheet(tmp_path / "s.json")
    for name, says in (("ward-letter", True), ("ward-a4", False)):
        pdf = render_pdf(sheet, load_layout(name), sheet["fingerprint"][:12])
        with pdfplumber.open(io.BytesIO(pdf)) as doc:
            first = " ".join((doc.pages[0].extract_text() or "").split())
        assert ("Units: SI (" in first) is says, name
