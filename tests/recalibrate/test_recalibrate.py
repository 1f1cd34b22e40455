"""`scorecard recalibrate` against statsmodels' Logit (outside reference), on invented outcomes drawn from a
known recalibration of the hand-built sheet (tests/audit/handmade.py), a known reversed term and a known slope
far from 1."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from click.testing import CliRunner

from scorecard.audit.paper import parse_cohort, score_cohort, sheet_logodds
from scorecard.cli import main
from scorecard.jsondoc import pretty_text
from scorecard.recalibrate import assess
from scorecard.sheet import load_sheet
from tests.audit.handmade import model_dict, sheet_dict

N = 4000


def _patients(seed=7) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({
        "age": rng.integers(60, 101, N).astype(str),
        "temperature": np.round(rng.uniform(35.0, 40.0, N), 1).astype(str),
        "cognition": rng.integers(0, 11, N).astype(str),
        "residence": rng.choice(["home", "care_home", "hospital"], N),
        "prior_delirium": rng.choice(["0", "1"], N),
    })
    frame.attrs["source"] = "unit.csv"
    return frame


def _with_outcome(frame: pd.DataFrame, logodds: np.ndarray, seed=3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    out = frame.copy()
    out["delirium"] = (rng.random(len(frame)) < 1 / (1 + np.exp(-logodds))).astype(int).astype(str)
    out.attrs["source"] = "unit.csv"
    return out


@pytest.fixture(scope="module")
def setting():
    sheet = sheet_dict()
    frame = _patients()
    scored = score_cohort(sheet, frame, parse_cohort(sheet, frame))
    return sheet, frame, scored, sheet_logodds(sheet, scored.total)


def test_intercept_and_slope_match_statsmodels_logit(setting):
    sheet, frame, _, lo = setting
    unit = _with_outcome(frame, 0.6 + 0.7 * lo)  # invented: this unit's risks are higher and less spread
    figures = assess(sheet, unit, "delirium")
    # outside reference: statsmodels' maximum-likelihood Logit of the outcome on [1, sheet log-odds]
    ref = sm.Logit(unit["delirium"].astype(int).to_numpy(), sm.add_constant(lo)).fit(disp=0)
    assert figures["intercept"] == pytest.approx(ref.params[0], abs=1e-6)
    assert figures["slope"] == pytest.approx(ref.params[1], abs=1e-6)
    ci = ref.conf_int(alpha=0.05)
    assert figures["slope_ci"] == pytest.approx(list(ci[1]), abs=1e-5)
    assert figures["intercept_ci"] == pytest.approx(list(ci[0]), abs=1e-5)
    assert figures["enough"] and figures["slope_ci"][0] < 0.7 < figures["slope_ci"][1]


def test_term_effect_matches_statsmodels_and_a_reversed_term_refuses(setting, tmp_path):
    sheet, frame, scored, lo = setting
    lpp = sheet["scale"]["logodds_per_point"]
    cog = next(t for t in scored.terms if t.name == "cognition").patient_points() * lpp
    unit = _with_outcome(frame, lo - 3.0 * cog)  # invented: cognition's points go with LESS risk here
    figures = assess(sheet, unit, "delirium")
    term = next(t for t in figures["terms"] if t["term"] == "cognition")
    y = unit["delirium"].astype(int).to_numpy()
    # outside reference: statsmodels Logit on [1, other terms' log-odds, this term's log-odds]
    ref = sm.Logit(y, np.column_stack([np.ones(N), lo - cog, cog])).fit(disp=0)
    assert term["effect"] == pytest.approx(ref.params[2], abs=1e-6)
    assert term["reversed"] and not figures["enough"]
    (tmp_path / "s.json").write_text(pretty_text(sheet))
    unit.to_csv(tmp_path / "unit.csv", index=False)
    r = CliRunner().invoke(main, ["recalibrate", str(tmp_path / "s.json"), "--data", str(tmp_path / "unit.csv"),
                                  "--outcome", "delirium", "-o", str(tmp_path / "local.json")])
    assert r.exit_code == 3, r.output
    assert "reversed" in r.output and "refit" in r.output
    assert not (tmp_path / "local.json").exists()


def test_a_slope_far_from_one_refuses_and_says_what_to_do(setting, tmp_path):
    sheet, frame, _, lo = setting
    unit = _with_outcome(frame, 0.1 * lo)  # invented: the points barely separate this unit's patients
    (tmp_path / "s.json").write_text(pretty_text(sheet))
    (tmp_path / "m.json").write_text(pretty_text(model_dict()))
    unit.to_csv(tmp_path / "unit.csv", index=False)
    r = CliRunner().invoke(main, ["recalibrate", str(tmp_path / "s.json"), "--data", str(tmp_path / "unit.csv"), "--outcome", "delirium",
                                  "-o", str(tmp_path / "local.json"), "--model", str(tmp_path / "m.json"), "--json", str(tmp_path / "f.json")])
    assert r.exit_code == 3, r.output
    assert "far from 1" in r.output and "refit" in r.output
    figures = json.loads((tmp_path / "f.json").read_text())
    assert figures["slope_ci"][1] < 0.5 and not figures["enough"]


def test_the_new_sheet_keeps_rows_and_points_and_records_lineage(setting, tmp_path):
    sheet, frame, _, lo = setting
    unit = _with_outcome(frame, -0.5 + 1.3 * lo)
    (tmp_path / "s.json").write_text(pretty_text(sheet))
    unit.to_csv(tmp_path / "unit.csv", index=False)
    (tmp_path / "m.json").write_text(pretty_text(model_dict()))
    runner = CliRunner()
    r = runner.invoke(main, ["recalibrate", str(tmp_path / "s.json"), "--data", str(tmp_path / "unit.csv"), "--outcome", "delirium",
                             "-o", str(tmp_path / "local.json")])
    assert r.exit_code == 0, r.output
    new = load_sheet(tmp_path / "local.json")
    assert new["terms"] == sheet["terms"] and new["total"] == sheet["total"] and new["bands"] == sheet["bands"]
    rec = new["recalibration"]
    assert rec["original_fingerprint"] == sheet["fingerprint"] and new["fingerprint"] != sheet["fingerprint"]
    a, b = rec["intercept"], rec["slope"]
    for old, c in zip(sheet["conversion"], new["conversion"]):
        z = a + b * (sheet["scale"]["offset"] + sheet["scale"]["logodds_per_point"] * old["total"])
        assert c["risk"] == pytest.approx(1 / (1 + np.exp(-z)), rel=1e-9)  # sheet numbers carry 11 digits (jsondoc)
    # the check compares the sheet with the model recalibrated as the sheet states: the certificate still holds
    unit.drop(columns=["delirium"]).to_csv(tmp_path / "plain.csv", index=False)
    r = runner.invoke(main, ["check", str(tmp_path / "local.json"), "--model", str(tmp_path / "m.json"), "--data", str(tmp_path / "plain.csv"),
                             "-o", str(tmp_path / "r.pdf"), "--json", str(tmp_path / "r.json"), "--bootstrap", "20"])
    report = json.loads((tmp_path / "r.json").read_text())
    cert = {c["name"]: c["pass"] for c in report["bounds"]}
    assert cert["certificate_logodds"] and cert["certificate_risk"], r.output
    # recalibrating again composes the lineage onto the model's log-odds
    r = runner.invoke(main, ["recalibrate", str(tmp_path / "local.json"), "--data", str(tmp_path / "unit.csv"), "--outcome", "delirium",
                             "-o", str(tmp_path / "local2.json")])
    assert r.exit_code == 0, r.output
    twice = load_sheet(tmp_path / "local2.json")["recalibration"]
    assert twice["previous"]["original_fingerprint"] == sheet["fingerprint"]
    assert twice["model_logodds"]["slope"] == pytest.approx(b * twice["slope"])


@pytest.mark.parametrize("how, needle", [
    ("no_column", "not in the file"),
    ("misspelt_column", "did you mean 'delirium'?"),
    ("few_events", "at least 20"),
    ("same_file", "also an input"),
])
def test_bad_inputs_are_one_line_and_exit_2(setting, tmp_path, how, needle):
    sheet, frame, _, lo = setting
    unit = _with_outcome(frame, lo)
    if how == "few_events":
        unit["delirium"] = "0"
        unit.loc[unit.index[:5], "delirium"] = "1"
    (tmp_path / "s.json").write_text(pretty_text(sheet))
    unit.to_csv(tmp_path / "unit.csv", index=False)
    out = tmp_path / ("unit.csv" if how == "same_file" else "local.json")
    outcome = {"no_column": "outcome", "misspelt_column": "delirum"}.get(how, "delirium")
    r = CliRunner().invoke(main, ["recalibrate", str(tmp_path / "s.json"), "--data", str(tmp_path / "unit.csv"),
                                  "--outcome", outcome, "-o", str(out)])
    assert r.exit_code == 2, r.output
    assert needle in r.output and len(r.output.strip().splitlines()) == 1, r.output
