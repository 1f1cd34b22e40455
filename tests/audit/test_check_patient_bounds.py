"""`check` judges each per-patient bound PASS or FAIL on a hand-made sheet whose figures are known, and
shows a figure no bound covers as not bounded, never as a pass.

The figures the bounds are set around are computed here, outside the audit: each patient's sheet risk from
the sheet's own conversion table at the total `scorecard score` reads, the model risk from
`predict_logodds`, then numpy's percentile and the band of each risk by its thresholds written out below."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort
from scorecard.jsondoc import pretty_text
from scorecard.model import model_from_dict, predict_logodds
from scorecard.sheet import sheet_fingerprint
from tests.audit.handmade import model_dict, sheet_dict

BAND_UPPERS = (0.1, 0.3)  # the hand-made sheet's bands: low < 10 %, moderate < 30 %, high


@pytest.fixture(scope="module")
def known(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bounds")
    (folder / "model.json").write_text(pretty_text(model_dict()))
    c = generate_cohort(800, seed=5)
    residence = c["residence"].map({"own_home": "home", "with_family": "home", "care_home": "care_home"})
    table = pd.DataFrame({"age": c.age, "temperature": c.temperature, "cognition": c.cognition, "residence": residence,
                          "prior_delirium": c.prior_delirium})
    table.to_csv(folder / "cohort.csv", index=False)
    (folder / "sheet.json").write_text(pretty_text(sheet_dict()))
    scored = CliRunner().invoke(main, ["score", str(folder / "sheet.json"), str(folder / "cohort.csv"), "-o", str(folder / "scored.csv")])
    assert scored.exit_code == 0, scored.output
    totals = pd.read_csv(folder / "scored.csv")["total"].to_numpy()
    sheet = sheet_dict()
    risk_at = {c["total"]: c["risk"] for c in sheet["conversion"]}
    sheet_risk = np.array([risk_at[int(t)] for t in totals])
    model_lo, _ = predict_logodds(model_from_dict(model_dict()), pd.read_csv(folder / "cohort.csv"))
    model_risk = 1 / (1 + np.exp(-model_lo))
    err = np.abs(sheet_risk - model_risk)
    band = lambda r: np.searchsorted(BAND_UPPERS, r, side="right")  # noqa: E731
    figures = {"p95": float(np.percentile(err, 95)), "p80": float(np.percentile(err, 80)), "largest": float(err.max()),
               "agreement": float(np.mean(band(sheet_risk) == band(model_risk)))}
    assert 0 < figures["agreement"] < 1 and figures["largest"] > figures["p95"] > 0  # a sheet with something to judge
    return folder, figures


def _check(folder, name: str, **bound):
    sheet = sheet_dict()
    sheet["bound"].update({"max_auc_loss": 0.5, "risk_error_share": 1.0}, **bound)
    sheet["fingerprint"] = sheet_fingerprint({k: v for k, v in sheet.items() if k != "fingerprint"})
    (folder / f"{name}.sheet.json").write_text(pretty_text(sheet))
    result = CliRunner().invoke(main, ["check", str(folder / f"{name}.sheet.json"), "--model", str(folder / "model.json"),
                                       "--data", str(folder / "cohort.csv"), "-o", str(folder / f"{name}.pdf"),
                                       "--json", str(folder / f"{name}.json"), "--bootstrap", "20"])
    report = json.loads((folder / f"{name}.json").read_text())
    return result, {b["name"]: b for b in report["bounds"]}, {f["name"]: f for f in report["not_bounded"]}, report


@pytest.mark.parametrize("key,bound_name,figure,at_least", [
    ("min_band_agreement", "band_agreement", "agreement", True),
    ("max_largest_risk_error", "largest_risk_error", "largest", False),
    ("max_percentile_risk_error", "percentile_risk_error", "p95", False),
])
def test_each_per_patient_bound_passes_just_inside_and_fails_just_outside(known, key, bound_name, figure, at_least):
    folder, figures = known
    value = figures[figure]
    inside, outside = (value - 1e-4, value + 1e-4) if at_least else (value + 1e-4, value - 1e-4)
    result, judged, free, _ = _check(folder, f"{bound_name}-in", **{key: inside})
    assert judged[bound_name]["pass"] and judged[bound_name]["value"] == pytest.approx(value, abs=1e-9)
    assert result.exit_code == 0, result.output
    assert bound_name not in free
    result, judged, _, report = _check(folder, f"{bound_name}-out", **{key: outside})
    assert not judged[bound_name]["pass"] and not report["passed"]
    assert result.exit_code == 3 and bound_name in result.output.splitlines()[-1]


def test_the_percentile_is_the_one_the_sheet_names(known):
    folder, figures = known
    _, judged, _, report = _check(folder, "p80", risk_error_percentile=80, max_percentile_risk_error=figures["p80"] + 1e-4)
    assert judged["percentile_risk_error"]["value"] == pytest.approx(figures["p80"], abs=1e-9)  # numpy percentile
    assert judged["percentile_risk_error"]["pass"] and report["agreement"]["risk_error_percentile"] == 80


def test_unset_bounds_are_not_bounded_never_a_pass(known):
    folder, figures = known
    # the hand-made sheet sets none of the per-patient bounds (an older sheet), nor one on the certificate
    result, judged, free, report = _check(folder, "unset")
    assert {"band_agreement", "percentile_risk_error", "largest_risk_error", "certificate_size"} <= set(free)
    assert not {"band_agreement", "percentile_risk_error", "largest_risk_error", "certificate_size"} & set(judged)
    assert free["largest_risk_error"]["value"] == pytest.approx(figures["largest"], abs=1e-9)
    assert result.exit_code == 0
    lines = result.output.splitlines()
    assert "all checks pass" not in result.output
    assert any("largest |risk difference|" in line and line.endswith("not bounded (the sheet makes no promise on it)") for line in lines)
    assert any("certificate's worst case" in line and "not bounded" in line for line in lines)
    # the per-patient figures lead the summary
    first = [k for k, line in enumerate(lines) if "band" in line or "percentile" in line or "largest" in line]
    assert first and first[0] <= 1


def test_a_bound_on_the_certificate_is_judged_against_the_sheets_own_worst_case(known):
    folder, _ = known
    worst = sheet_dict()["certificate"]["max_risk_error"]
    _, judged, free, _ = _check(folder, "cert-in", max_certificate_risk_error=min(1.0, worst + 1e-6))
    assert judged["certificate_size"]["pass"] and "certificate_size" not in free
    result, judged, _, _ = _check(folder, "cert-out", max_certificate_risk_error=worst / 2)
    assert not judged["certificate_size"]["pass"] and result.exit_code == 3
