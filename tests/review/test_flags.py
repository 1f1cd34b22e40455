"""Flags on the demo: the care-process trap, a broken declared direction, rare levels, out-of-range patients."""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.demo import true_model
from scorecard.model import load_model
from scorecard.review.edits import declare, force_direction
from scorecard.review.flags import FlagSettings, largest_reversal, review_flags


def kinds(flags, term):
    return {f.kind for f in flags if f.term == term}


def test_care_process_flag_is_raised_once_the_methodologist_marks_it(care_model, care_model_path, review_dir, run_cli, cohort_frame):
    # before marking: the protective look of geriatric_review is an ordinary term (role "measurement")
    assert "protective_care_marker" not in kinds(review_flags(care_model), "geriatric_review")
    scores = care_model.term("geriatric_review").scores
    assert scores[1] < scores[0]  # the crude log odds ratio in the demo cohort is protective
    out = review_dir / "marked.model.json"
    result = run_cli("edit", care_model_path, "--declare", "geriatric_review=care_process", "-o", out)
    assert result.exit_code == 0, result.output
    marked = load_model(out)
    flags = [f for f in review_flags(marked, cohort_frame) if f.kind == "protective_care_marker"]
    assert [f.term for f in flags] == ["geriatric_review"]
    assert "care-process marker" in flags[0].message and "--remove-effect geriatric_review" in flags[0].message
    # removing its effect clears the flag
    out2 = review_dir / "marked-zeroed.model.json"
    assert run_cli("edit", out, "--remove-effect", "geriatric_review", "-o", out2).exit_code == 0
    assert "protective_care_marker" not in kinds(review_flags(load_model(out2)), "geriatric_review")


def test_a_care_marker_that_raises_risk_is_not_called_protective():
    model = true_model()
    model.term("prior_delirium")  # a flag term that raises risk when present
    marked, _ = declare(model, "prior_delirium", "care_process")
    assert marked.term("prior_delirium").scores[1] > marked.term("prior_delirium").scores[0]
    assert "protective_care_marker" not in kinds(review_flags(marked), "prior_delirium")


def test_declaring_the_u_shaped_sodium_increasing_raises_the_non_monotone_flag():
    model = true_model()
    assert model.feature("sodium").direction is None
    assert "non_monotone" not in kinds(review_flags(model), "sodium")
    declared, _ = declare(model, "sodium", "increasing")
    flags = [f for f in review_flags(declared) if f.kind == "non_monotone"]
    assert [f.term for f in flags] == ["sodium"]
    # the U falls from its low end to its bottom near 140 mmol/L (DESIGN: U-shaped around 140)
    assert "declared increasing" in flags[0].message
    projected, _ = force_direction(declared, "sodium", "increasing")
    assert "non_monotone" not in kinds(review_flags(projected), "sodium")
    # the true model's declared directions (age increasing, cognition decreasing, ...) hold: no flag
    assert not [f for f in review_flags(model) if f.kind == "non_monotone"]


def test_largest_reversal_is_the_largest_fall_from_an_earlier_to_a_later_entry():
    # worked example: 0, 3, 1, 4, 0.5 -> largest fall is 4 - 0.5 = 3.5 (entries 3 -> 4)
    assert largest_reversal(np.array([0, 3, 1, 4, 0.5]), increasing=True) == (3.5, 3, 4)
    assert largest_reversal(np.array([0, 3, 1, 4, 0.5]), increasing=False) == (4.0, 0, 3)
    assert largest_reversal(np.array([1, 2, 3]), increasing=True)[0] == 0.0


def test_rare_level_with_a_strong_score_is_flagged():
    model = true_model()
    term = model.term("residence")
    counts = np.asarray(term.counts, dtype=float)
    rare = int(np.argmin(counts))
    counts[rare] = 0.02 * counts.sum()
    term.counts = counts.tolist()
    scores = np.asarray(term.scores)
    scores[rare] = 0.9
    term.scores = scores.tolist()
    flags = [f for f in review_flags(model) if f.kind == "rare_category"]
    assert [f.term for f in flags] == ["residence"] and repr(term.levels[rare]) in flags[0].message
    # below the threshold the same level passes
    assert not [f for f in review_flags(model, settings=FlagSettings(rare_share=0.01)) if f.kind == "rare_category"]


def test_cohort_patients_outside_the_training_range_and_shapes_beyond_it_are_flagged(cohort_frame):
    model = true_model()
    frame = cohort_frame.head(50).copy()
    frame.loc[frame.index[:3], "sodium"] = 170
    flags = [f for f in review_flags(model, frame) if f.kind == "outside_training_range" and f.term == "sodium"]
    assert len(flags) == 1 and flags[0].message.startswith("3 of 50 cohort patients")
    # a bin edge beyond the training maximum with its own score: the shape moves where nobody was
    term = model.term("sodium")
    top = model.feature("sodium").training_range["max"]
    term.edges = term.edges + [top + 5]
    term.scores = term.scores + [term.scores[-1] + 1.0]
    term.counts = term.counts + [0.0]
    flags = [f for f in review_flags(model) if f.kind == "outside_training_range" and f.term == "sodium"]
    assert len(flags) == 1 and "outside the training range" in flags[0].message


def test_wide_band_and_sparse_large_effect_are_flagged():
    model = true_model()
    term = model.term("haemoglobin")
    scores = np.asarray(term.scores)
    big = int(np.argmax(np.abs(scores)))
    spread = np.zeros_like(scores)
    spread[big] = abs(scores[big])  # band +/- 2 spread reaches well past 0
    term.spread = spread.tolist()
    flags = review_flags(model)
    assert "wide_band" in kinds(flags, "haemoglobin")
    # on the 10 000 reference patients the low-haemoglobin run is well supported; on 20 patients it is not
    assert "sparse_data" not in kinds(flags, "haemoglobin")
    term.counts = (np.asarray(term.counts) * 20 / np.sum(term.counts)).tolist()
    sparse = [f for f in review_flags(model) if f.kind == "sparse_data" and f.term == "haemoglobin"]
    assert sparse and "rests on" in sparse[0].message
    assert "sparse_data" not in kinds(review_flags(model, settings=FlagSettings(sparse_patients=0.0)), "haemoglobin")


def test_care_flag_from_an_adjusted_logistic_fit(cohort_frame):
    """The same trap with an adjusted estimate: scikit-learn's LogisticRegression on the demo cohort, all
    recorded features in, and the geriatric_review coefficient set as that term's score (centred)."""
    from sklearn.linear_model import LogisticRegression

    frame = cohort_frame.drop(columns=["patient_id", "delirium"])
    frame["albumin_not_measured"] = frame["albumin"].isna().astype(float)
    frame["albumin"] = frame["albumin"].fillna(frame["albumin"].median())
    x = pd.get_dummies(frame, columns=["anaesthesia", "residence"], drop_first=True, dtype=float)
    x = (x - x.mean()) / x.std()
    fit = LogisticRegression(C=1e6, max_iter=5000).fit(x, cohort_frame["delirium"])
    coefficient = float(fit.coef_[0][list(x.columns).index("geriatric_review")] / frame["geriatric_review"].std())
    assert coefficient < 0  # protective-looking even after adjustment: the hidden routine is not recorded
    model = true_model()
    # the true model already marks the review as a care process, with effect 0: nothing to flag
    assert model.feature("geriatric_review").role == "care_process"
    assert "protective_care_marker" not in kinds(review_flags(model), "geriatric_review")
    term = model.term("geriatric_review")
    counts = np.asarray(term.counts, dtype=float)
    scores = np.array([0.0, coefficient])
    term.scores = (scores - np.average(scores, weights=counts)).tolist()
    flags = [f for f in review_flags(model) if f.kind == "protective_care_marker"]
    assert [f.term for f in flags] == ["geriatric_review"]
    assert f"lowers risk by {-coefficient:.2f} log-odds" in flags[0].message
