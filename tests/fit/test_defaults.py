"""The chosen fitting defaults (scorecard/fit/defaults.py, chosen by tests/benchmarks/bench_fit_study.py, written
up in docs/fitting.md) are the ones the estimator and `scorecard fit` use; the pair rule keeps only pairs that
matter; small cohorts choose their shrinkage by held-out deviance."""

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.fit import AdditiveRiskClassifier, defaults
from scorecard.fit.pairs import PairScore, choose_pairs, rank_pairs
from scorecard.fit.trees import linear_step


def test_estimator_defaults_are_the_chosen_ones():
    params = AdditiveRiskClassifier().get_params()
    assert params["leaves_per_step"] == defaults.LEAVES_PER_STEP == 2
    assert params["bins"] == defaults.BINS == 128 and params["pair_bins"] == defaults.PAIR_BINS == 16
    assert params["min_leaf_patients"] == defaults.MIN_LEAF_PATIENTS == 10
    assert params["patience"] == defaults.PATIENCE == 40 and params["min_improvement"] == defaults.MIN_IMPROVEMENT == 1e-5
    assert params["pair_min_gain"] == defaults.PAIR_MIN_GAIN == 0.0002
    assert all(params[k] == "auto" for k in ("held_out_share", "repeats", "repeat_share", "shrinkage"))


@pytest.mark.parametrize("rows, repeats, share, shrinkage", [
    (300, 16, 0.3, "auto"), (4_999, 16, 0.3, "auto"), (5_000, 16, 0.3, 10.0), (19_999, 16, 0.3, 10.0),
    (20_000, 12, 0.2, 10.0), (1_000_000, 12, 0.2, 10.0),
])
def test_size_dependent_defaults(rows, repeats, share, shrinkage):
    used = AdditiveRiskClassifier().resolved_settings(rows)
    assert (used["repeats"], used["held_out_share"], used["shrinkage"]) == (repeats, share, shrinkage)
    assert used["learning_rate"] == defaults.LEARNING_RATE == 0.05
    assert used["repeat_share"] == (1.0 if rows <= 20_000 else 0.5)
    assert AdditiveRiskClassifier(repeats=3, shrinkage=1.5).resolved_settings(rows)["repeats"] == 3


def test_help_text_reads_the_rules():
    assert defaults.auto_rule(defaults.repeats_for) == "16 under 20,000 patients, else 12"
    assert defaults.auto_rule(defaults.held_out_share_for) == "0.3 under 20,000 patients, else 0.2"
    text = CliRunner().invoke(main, ["fit", "--help"]).output
    for option in ("--repeats", "--bins", "--held-out-share", "--shrinkage", "--pair-min-gain"):
        assert option in text
    assert "--bags" not in text and "--max-bins" not in text


def _interaction_scores(rows: int, effect: float, seed: int = 0) -> PairScore:
    """Two independent features whose only effect is effect x sign(a) x sign(b) on the log-odds; the
    residuals are taken at the no-feature model (exact: neither feature has a main effect)."""
    rng = np.random.default_rng(seed)
    a, b = rng.normal(size=rows), rng.normal(size=rows)
    y = (rng.random(rows) < 1 / (1 + np.exp(-effect * np.sign(a) * np.sign(b)))).astype(float)
    p = np.full(rows, y.mean())
    codes = [np.clip(((x + 3) / 6 * 16).astype(int), 0, 15) for x in (a, b)]
    half = rng.random(rows) < 0.5
    w = np.ones(rows)
    (score,) = rank_pairs(codes, [16, 16], p - y, p * (1 - p), w, half, l2=10.0, min_leaf=10.0)
    return score


def test_held_out_gain_measures_the_effect():
    # log-likelihood gain of a +-effect contrast at p = 1/2 is about effect^2 / 8 nats per patient (a second-
    # order expansion of the log-loss, common practice); the held-out estimate must be near it
    for effect in (0.05, 0.1):  # statistic about 125 and 500: sampling noise about 18 % and 9 %
        score = _interaction_scores(200_000, effect)
        assert score.held_out_gain == pytest.approx(effect**2 / 8, rel=0.4), effect


def test_pair_rule_drops_a_real_but_small_interaction_and_keeps_one_that_matters():
    small, large = _interaction_scores(200_000, 0.03, seed=1), _interaction_scores(200_000, 0.08, seed=2)
    bound = defaults.PAIR_SIGNIFICANCE
    assert small.p_value < bound and large.p_value < bound  # the test alone would keep both
    assert choose_pairs([small], "auto", 3, bound, defaults.PAIR_MIN_GAIN) == []
    assert choose_pairs([large], "auto", 3, bound, defaults.PAIR_MIN_GAIN) == [large]
    assert choose_pairs([small], 1, 3, bound, defaults.PAIR_MIN_GAIN) == [small]  # a number of pairs is obeyed


def test_small_cohort_chooses_its_shrinkage_by_held_out_deviance():
    rng = np.random.default_rng(4)
    X = pd.DataFrame({"a": rng.normal(size=400), "b": rng.normal(size=400)})
    y = (rng.random(400) < 1 / (1 + np.exp(-X["a"]))).astype(int)
    est = AdditiveRiskClassifier(repeats=2, n_jobs=1, max_rounds=60, learning_rate=0.1, pairs=0).fit(X, y)
    losses = est.fit_report_["shrinkage_held_out_log_loss"]
    assert set(losses) == {f"{v:g}" for v in defaults.SHRINKAGE_CHOICES}
    lines = est.fit_report_["line_plus_steps_held_out_log_loss"]
    best_steps = min(losses, key=lambda k: (losses[k], float(k)))
    if lines < losses[best_steps]:
        assert est.settings_used_["shapes"] == "line plus steps"
    else:
        assert est.settings_used_ == {**est.settings_used_, "shapes": "steps", "shrinkage": float(best_steps)}
    record = est.to_model().provenance
    assert record["settings_used"]["shrinkage"] == est.settings_used_["shrinkage"]
    assert record["settings"]["shrinkage"] == "auto"
    fixed = AdditiveRiskClassifier(repeats=2, n_jobs=1, max_rounds=60, learning_rate=0.1, pairs=0, shrinkage=3.0).fit(X, y)
    assert fixed.settings_used_["shrinkage"] == 3.0 and fixed.fit_report_["shrinkage_held_out_log_loss"] is None
    assert fixed.settings_used_["shapes"] == "steps" and fixed.fit_report_["line_plus_steps_held_out_log_loss"] is None


@pytest.mark.parametrize("truth, chosen", [("line", "line plus steps"), ("threshold", "steps")])
def test_small_cohort_chooses_lines_or_steps_by_held_out_deviance(truth, chosen):
    # simulated truth (ours): 400 patients, 8 features, a log-odds straight in each, or a jump of 2 at 0.5
    # in each; the held-out deviance must pick the family the truth belongs to
    rng = np.random.default_rng(7)
    X = pd.DataFrame(rng.normal(size=(400, 8)), columns=[f"x{j}" for j in range(8)])
    logodds = (0.5 * X if truth == "line" else np.where(X > 0.5, 1.0, -1.0)).sum(axis=1)
    y = (rng.random(400) < 1 / (1 + np.exp(-logodds))).astype(int)
    est = AdditiveRiskClassifier(repeats=2, n_jobs=1, max_rounds=300, learning_rate=0.1, pairs=0).fit(X, y)
    assert est.settings_used_["shapes"] == chosen
    assert est.to_model().provenance["settings_used"]["shapes"] == chosen


def test_straight_line_step_is_the_weighted_least_squares_newton_step():
    # reference: numpy's least squares on the working response -G/H with weights H (the Newton step of a
    # line, common practice), ridge rows sqrt(l2) on both coefficients
    rng = np.random.default_rng(3)
    G, H, x = rng.normal(size=9), rng.uniform(0.5, 2.0, size=9), rng.normal(size=8)
    l2 = 0.7
    design = np.vstack([np.column_stack([np.ones(8), x]) * np.sqrt(H[:-1])[:, None], np.sqrt(l2) * np.eye(2)])
    target = np.concatenate([-G[:-1] / np.sqrt(H[:-1]), [0.0, 0.0]])
    a, b = np.linalg.lstsq(design, target, rcond=None)[0]
    values = linear_step(G, H, x, l2)
    np.testing.assert_allclose(values[:-1], a + b * x, rtol=1e-9)
    assert values[-1] == pytest.approx(-G[-1] / (H[-1] + l2))


@pytest.mark.parametrize("old, new", [("--bags", "--repeats"), ("--max-bins", "--bins"),
                                      ("--validation-fraction", "--held-out-share"), ("--l2-regularization", "--shrinkage")])
def test_old_option_names_fail_with_the_new_name(tmp_path, old, new):
    result = CliRunner().invoke(main, ["fit", str(tmp_path / "x.csv"), "--outcome", "y", old, "3", "-o", str(tmp_path / "m.json")])
    assert result.exit_code == 2 and f"did you mean '{new}'?" in result.output
    assert len(result.output.strip().splitlines()) == 1 and not (tmp_path / "m.json").exists()


@pytest.mark.parametrize("option, value", [("--repeats", "0"), ("--repeats", "many"), ("--held-out-share", "1"), ("--shrinkage", "-1"),
                                           ("--shrinkage", "nan")])
def test_bad_auto_values_are_one_line_errors(tmp_path, option, value):
    result = CliRunner().invoke(main, ["fit", str(tmp_path / "x.csv"), "--outcome", "y", option, value, "-o", str(tmp_path / "m.json")])
    assert result.exit_code == 2 and option in result.output and "'auto'" in result.output
    assert len(result.output.strip().splitlines()) == 1
