"""`check`: the agreement figures against scikit-learn and statsmodels on the same arrays, the demo sheet within
its certificate, PASS/FAIL and exit codes, and a deterministic report PDF carrying cautions and fingerprint."""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pdfplumber
import pytest
import statsmodels.api as sm
from click.testing import CliRunner
from sklearn.metrics import brier_score_loss, roc_auc_score

from scorecard.audit import statistics
from scorecard.audit.agreement import check_agreement
from scorecard.audit.paper import score_cohort, sheet_logodds
from scorecard.cli import main
from scorecard.demo import cohort_csv_text, generate_cohort, true_model
from scorecard.jsondoc import pretty_text
from scorecard.model import predict_logodds
from scorecard.quantize import Bound, quantize_model
from scorecard.sheet import sheet_fingerprint, short_fingerprint
from tests.audit.handmade import model_dict, sheet_dict, write_handmade_files


# -- the statistics, on arrays ------------------------------------------------------------------------


def test_auc_matches_scikit_learn_with_ties_and_weights():
    rng = np.random.default_rng(0)
    y = (rng.random(3000) < 0.25).astype(float)
    score = np.round(rng.normal(size=3000) + y, 1)  # rounded: many ties
    g, n = statistics.tie_groups(score)
    # scikit-learn roc_auc_score, the outside reference
    assert statistics.weighted_auc(g, n, y, 1 - y) == pytest.approx(roc_auc_score(y, score), abs=1e-12)
    p = rng.uniform(0.02, 0.9, 3000)
    expected = roc_auc_score(np.r_[np.ones(3000), np.zeros(3000)], np.r_[score, score], sample_weight=np.r_[p, 1 - p])
    assert statistics.weighted_auc(g, n, p, 1 - p) == pytest.approx(expected, abs=1e-12)


def test_brier_matches_scikit_learn():
    rng = np.random.default_rng(1)
    risk, q = rng.uniform(0, 1, 500), rng.uniform(0, 1, 500)
    y = (rng.random(500) < q).astype(float)
    assert statistics.brier(risk, y) == pytest.approx(brier_score_loss(y, risk), abs=1e-12)  # scikit-learn
    dup = brier_score_loss(np.r_[np.ones(500), np.zeros(500)], np.r_[risk, risk], sample_weight=np.r_[q, 1 - q])
    assert statistics.expected_brier(risk, q) == pytest.approx(dup, abs=1e-12)  # scikit-learn, weighted duplicates


def test_logistic_calibration_matches_statsmodels():
    rng = np.random.default_rng(2)
    x = rng.normal(-1, 1, 4000)
    y = (rng.random(4000) < 1 / (1 + np.exp(-(0.3 + 0.8 * x)))).astype(float)
    a, b = statistics.logistic_calibration(*statistics.grouped(x, y))
    fit = sm.Logit(y, sm.add_constant(x)).fit(disp=0)  # statsmodels logistic regression
    assert (a, b) == pytest.approx(tuple(fit.params), abs=1e-7)
    # fractional responses (the model's risk as the outcome), grouped on few distinct x like sheet totals
    xt = rng.integers(0, 12, 4000).astype(float)
    p = 1 / (1 + np.exp(-(-2 + 0.3 * xt + rng.normal(0, 0.2, 4000))))
    a, b = statistics.logistic_calibration(*statistics.grouped(xt, p))
    glm = sm.GLM(p, sm.add_constant(xt), family=sm.families.Binomial()).fit()  # statsmodels GLM, binomial
    assert (a, b) == pytest.approx(tuple(glm.params), abs=1e-7)


def test_bootstrap_interval_is_seeded_and_brackets_the_estimate():
    rng = np.random.default_rng(3)
    y = (rng.random(2000) < 0.3).astype(float)
    a = y + rng.normal(0, 1, 2000)
    b = np.round(a + rng.normal(0, 0.5, 2000))
    diff = roc_auc_score(y, a) - roc_auc_score(y, b)  # scikit-learn
    order = np.argsort(a, kind="stable")  # score a is handed over in ascending order, by its runs of ties
    ids = statistics.run_ids(a[order])
    gb, nb = statistics.tie_groups(b[order])
    ci = statistics.bootstrap_auc_difference(ids, gb, nb, y[order], 1 - y[order], replicates=200, seed=7)
    assert ci == statistics.bootstrap_auc_difference(ids, gb, nb, y[order], 1 - y[order], replicates=200, seed=7)
    assert ci[0] < diff < ci[1] and ci[1] - ci[0] < 0.1


def test_blocked_sums_give_the_whole_arrays_figures(monkeypatch):
    """The bounded-memory forms (blocks of patients, counts for slips) against scikit-learn, statsmodels and
    numpy on the whole arrays; blocks of 7 patients make ties run across many block edges."""
    monkeypatch.setattr(statistics, "BLOCK", 7)
    rng = np.random.default_rng(5)
    score = np.sort(np.round(rng.normal(size=3000), 1))  # many ties, ascending
    y = (rng.random(3000) < 1 / (1 + np.exp(-score))).astype(float)
    assert statistics.sorted_auc(statistics.run_ids(score), y, 1 - y) == pytest.approx(roc_auc_score(y, score), abs=1e-12)
    p = rng.uniform(0.02, 0.9, 3000)
    expected = roc_auc_score(np.r_[np.ones(3000), np.zeros(3000)], np.r_[score, score], sample_weight=np.r_[p, 1 - p])
    assert statistics.sorted_auc(statistics.run_ids(score), p) == pytest.approx(expected, abs=1e-12)  # scikit-learn
    fit = sm.Logit(y, sm.add_constant(score)).fit(disp=0)  # statsmodels logistic regression
    assert statistics.logistic_calibration(*statistics.grouped(score, y)) == pytest.approx(tuple(fit.params), abs=1e-7)
    # the three ways of grouping (whole numbers, an ascending x, anything) give the same groups
    totals = rng.integers(-3, 30, 3000)
    by_count = statistics.grouped(totals, p)
    by_unique = statistics.grouped(totals.astype(float), p)
    by_runs = statistics.grouped(np.sort(totals).astype(float), p[np.argsort(totals, kind="stable")])
    for a, b, c in zip(by_count, by_unique, by_runs):
        assert a == pytest.approx(b, rel=1e-12) and a == pytest.approx(c, rel=1e-12)
    # a percentile of a multiset kept as counts is numpy's percentile of the multiset written out
    values, counts = rng.normal(size=40), rng.integers(0, 50, 40)
    for q in (0, 5, 50, 95, 99, 100):
        assert statistics.weighted_percentiles(values, counts, q) == pytest.approx(np.percentile(np.repeat(values, counts), q), abs=1e-12)



def test_patient_level_forms_give_the_grouped_and_whole_array_figures(monkeypatch):
    """The forms `check` uses on tens of millions of patients, without copies: a calibration fit on patient-level
    int8 outcomes (one trial each), group sums and Brier scores a block at a time, and calibration deciles
    split by views when the risks are already ascending, against statsmodels, scikit-learn and numpy."""
    monkeypatch.setattr(statistics, "BLOCK", 7)
    rng = np.random.default_rng(11)
    score = np.sort(rng.normal(size=2000))  # distinct and ascending, as the model's sorted log-odds
    y = (rng.random(2000) < 1 / (1 + np.exp(-0.8 * score))).astype(np.int8)
    fit = sm.Logit(y.astype(float), sm.add_constant(score)).fit(disp=0)  # statsmodels logistic regression
    assert statistics.logistic_calibration(score, y) == pytest.approx(tuple(fit.params), abs=1e-7)
    assert np.isnan(statistics.logistic_calibration(np.full(5, 2.0), np.array([0, 1, 0, 1, 1], dtype=np.int8))).all()  # x does not vary
    totals = rng.integers(0, 40, 2000).astype(np.int16)
    p = rng.uniform(0.02, 0.9, 2000)
    expected = roc_auc_score(np.r_[np.ones(2000), np.zeros(2000)], np.r_[totals, totals], sample_weight=np.r_[p, 1 - p])
    assert statistics.auc_from_group_sums(*statistics.group_sums(totals, 40, p)) == pytest.approx(expected, abs=1e-12)  # scikit-learn
    assert statistics.auc_from_group_sums(*statistics.group_sums(totals, 40, y)) == pytest.approx(roc_auc_score(y, totals), abs=1e-12)
    risk = 1 / (1 + np.exp(-score))
    assert statistics.brier(risk, y) == pytest.approx(brier_score_loss(y, risk), rel=1e-12)  # scikit-learn
    expected_brier = brier_score_loss(np.r_[np.ones(2000), np.zeros(2000)], np.r_[risk, risk], sample_weight=np.r_[p, 1 - p])
    assert statistics.expected_brier(risk, p) == pytest.approx(expected_brier, rel=1e-12)
    # deciles of an ascending risk (views) equal those of the same patients shuffled (stable sort), numpy's split
    shuffled = rng.permutation(2000)
    by_views = statistics.calibration_table(risk, y)
    assert by_views == statistics.calibration_table(risk[shuffled], y[shuffled])
    for row, part in zip(by_views, np.array_split(np.arange(2000), 10)):
        assert row["n"] == len(part)
        assert row["predicted"] == pytest.approx(risk[part].mean(), rel=1e-12)
        assert row["observed"] == pytest.approx(y[part].mean(), rel=1e-12)

# -- the demo: quantize the true model, then audit it ------------------------------------------------


@pytest.fixture(scope="module")
def demo():
    model = true_model()
    sheet = quantize_model(model, bound=Bound(max_auc_loss=0.01, max_risk_error=0.1, risk_error_share=0.05,
                                             min_band_agreement=None, max_percentile_risk_error=None, max_largest_risk_error=None), bootstrap=0)
    sheet["fingerprint"] = sheet_fingerprint(sheet)
    cohort = generate_cohort(4000, seed=11)
    frame = pd.read_csv(io.StringIO(cohort_csv_text(cohort)), dtype=str, keep_default_na=False)
    frame.attrs["source"] = "demo.csv"
    return model, sheet, frame


def test_demo_sheet_is_within_its_certificate_of_the_exact_model(demo):
    model, sheet, frame = demo
    scored = score_cohort(sheet, frame)
    model_lo, _ = predict_logodds(model, frame)
    gap = np.abs(sheet_logodds(sheet, scored.total) - model_lo)
    inside = ~scored.outside_training
    assert inside.mean() > 0.95
    assert gap[inside].max() <= sheet["certificate"]["max_logodds_error"] + 1e-9
    assert gap.max() > 0  # the sheet is a real approximation, not the model itself


def test_demo_figures_match_reference_libraries_on_the_same_arrays(demo):
    model, sheet, frame = demo
    report = check_agreement(sheet, model, frame, outcome="delirium", replicates=50)
    scored = score_cohort(sheet, frame)
    model_lo, _ = predict_logodds(model, frame)
    p = 1 / (1 + np.exp(-model_lo))
    y = frame["delirium"].astype(float).to_numpy()
    a = report["agreement"]
    both = np.r_[np.ones(len(p)), np.zeros(len(p))]
    w = np.r_[p, 1 - p]
    # scikit-learn roc_auc_score with the model's risks as expected outcomes
    assert a["auc_model"] == pytest.approx(roc_auc_score(both, np.r_[model_lo, model_lo], sample_weight=w), abs=1e-10)
    assert a["auc_sheet"] == pytest.approx(roc_auc_score(both, np.r_[scored.total, scored.total], sample_weight=w), abs=1e-10)
    assert a["max_abs_risk_error"] == pytest.approx(np.abs(scored.risk - p).max(), abs=1e-12)
    o = report["against_outcomes"]
    assert o["model"]["auc"] == pytest.approx(roc_auc_score(y, model_lo), abs=1e-10)  # scikit-learn
    assert o["sheet"]["auc"] == pytest.approx(roc_auc_score(y, scored.total), abs=1e-10)  # scikit-learn
    assert o["sheet"]["brier"] == pytest.approx(brier_score_loss(y, scored.risk), abs=1e-12)  # scikit-learn
    fit = sm.Logit(y, sm.add_constant(sheet_logodds(sheet, scored.total))).fit(disp=0)  # statsmodels
    assert (o["sheet"]["calibration_intercept"], o["sheet"]["calibration_slope"]) == pytest.approx(tuple(fit.params), abs=1e-6)
    glm = sm.GLM(p, sm.add_constant(sheet_logodds(sheet, scored.total)), family=sm.families.Binomial()).fit()  # statsmodels
    assert (a["calibration_intercept"], a["calibration_slope"]) == pytest.approx(tuple(glm.params), abs=1e-6)
    assert report["passed"], [b for b in report["bounds"] if not b["pass"]]
    assert len(report["largest"]) == 20
    worst = report["largest"][0]
    assert abs(worst["difference"]) == pytest.approx(a["max_abs_risk_error"])


# -- the command ------------------------------------------------------------------------------------


@pytest.fixture()
def files(tmp_path):
    return write_handmade_files(tmp_path, rows=1500)


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def test_check_passes_writes_a_deterministic_report_with_cautions_and_fingerprint(files):
    args = ["check", files / "sheet.json", "--model", files / "model.json", "--data", files / "cohort.csv", "--bootstrap", 50]
    first = run(*args, "-o", files / "a.pdf", "--json", files / "a.json")
    assert first.exit_code == 0, first.output
    second = run(*args, "-o", files / "b.pdf")
    assert second.exit_code == 0
    assert (files / "a.pdf").read_bytes() == (files / "b.pdf").read_bytes()
    report = json.loads((files / "a.json").read_text())
    assert report["passed"] and report["cohort"]["outcome_column"] == "delirium"
    assert {b["name"] for b in report["bounds"]} >= {"auc_loss", "risk_error_share", "certificate_logodds", "model"}
    short = short_fingerprint(sheet_dict())
    with pdfplumber.open(files / "a.pdf") as pdf:
        assert pdf.metadata.get("CreationDate") == first_meta(files / "b.pdf")
        for page in pdf.pages:
            text = " ".join((page.extract_text() or "").split())
            assert short in text
            assert "does not replace clinical judgement" in text and "associations, not causes" in text


def first_meta(path):
    with pdfplumber.open(path) as pdf:
        return pdf.metadata.get("CreationDate")


def test_a_failed_bound_is_exit_3_and_the_report_is_still_written(files):
    strict = sheet_dict()
    strict["bound"]["max_risk_error"] = 0.001
    strict["bound"]["risk_error_share"] = 0.0
    strict["fingerprint"] = sheet_fingerprint({k: v for k, v in strict.items() if k != "fingerprint"})
    (files / "strict.json").write_text(pretty_text(strict))
    result = run("check", files / "strict.json", "--model", files / "model.json", "--data", files / "cohort.csv",
                 "-o", files / "r.pdf", "--bootstrap", 20)
    assert result.exit_code == 3 and "risk_error_share" in result.output
    assert (files / "r.pdf").exists()


def test_a_different_model_is_refused_unless_overridden_loudly(files):
    other = model_dict()
    other["intercept"] = -1.5
    (files / "other.json").write_text(pretty_text(other))
    args = ["check", files / "sheet.json", "--model", files / "other.json", "--data", files / "cohort.csv", "-o", files / "r.pdf"]
    refused = run(*args)
    assert refused.exit_code == 2 and len(refused.output.strip().splitlines()) == 1 and "fingerprint" in refused.output
    assert not (files / "r.pdf").exists()
    forced = run(*args, "--allow-other-model", "--bootstrap", 20)
    assert forced.exit_code == 3 and "WARNING" in forced.output and "NOT the model" in forced.output


def test_check_bad_inputs(files):
    (files / "short.csv").write_text("age,temperature,residence,prior_delirium\n70,37,home,no\n")
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "short.csv", "-o", files / "r.pdf")
    assert result.exit_code == 2 and "'cognition'" in result.output
    (files / "empty.csv").write_text("age,temperature,cognition,residence,prior_delirium\n")
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "empty.csv", "-o", files / "r.pdf")
    assert result.exit_code == 2 and "no data rows" in result.output
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "cohort.csv",
                 "-o", files / "r.pdf", "--outcome", "death")
    assert result.exit_code == 2 and "'death'" in result.output


def test_a_cohort_too_small_for_some_figures_still_gets_a_report(files):
    # a cohort without a single event: the AUC against observed outcomes cannot be computed, the report says so;
    # a single patient is refused (nothing can be compared on one patient, so no check may 'pass' on it)
    table = pd.read_csv(files / "cohort.csv")
    table.head(1).to_csv(files / "one.csv", index=False)
    table.head(60).assign(delirium=0).to_csv(files / "none.csv", index=False)
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "none.csv",
                 "-o", files / "none.pdf", "--json", files / "none.json", "--bootstrap", 20)
    assert result.exit_code in (0, 3), result.output
    report = json.loads((files / "none.json").read_text())
    assert report["cohort"]["n"] == 60
    assert report["against_outcomes"]["model"]["auc"] is None
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "one.csv",
                 "-o", files / "one.pdf", "--bootstrap", 20)
    assert result.exit_code == 2 and "at least 2" in result.output and not (files / "one.pdf").exists()
