"""The demo generator: seeding, columns, stated bounds and the correlations it promises."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import spearmanr

from scorecard.demo import (
    ALBUMIN_MISSING_BOUNDS,
    EVENT_RATE_BOUNDS,
    FEATURES,
    OUTCOME,
    TRUE_EVENT_RATE,
    generate_cohort,
)
from scorecard.errors import UserError

COLUMNS = ["patient_id", "age", "cognition", "sodium", "haemoglobin", "hours_to_surgery", "medicines", "albumin",
           "temperature", "anaesthesia", "residence", "prior_delirium", "hearing_impairment", "geriatric_review",
           "delirium"]


def test_same_seed_gives_identical_frames():
    pd.testing.assert_frame_equal(generate_cohort(3000, seed=7), generate_cohort(3000, seed=7))


def test_different_seeds_give_different_patients():
    a, b = generate_cohort(3000, seed=1), generate_cohort(3000, seed=2)
    for name in ("age", "sodium", "haemoglobin", "delirium"):
        assert (a[name].to_numpy() != b[name].to_numpy()).any(), name


def test_columns_in_the_promised_order():
    frame = generate_cohort(50)
    assert list(frame.columns) == COLUMNS
    assert FEATURES == COLUMNS[1:-1] and OUTCOME == "delirium"


def test_without_pair_only_the_outcome_changes():
    with_pair, without = generate_cohort(4000, seed=3), generate_cohort(4000, seed=3, interaction=False)
    pd.testing.assert_frame_equal(with_pair[COLUMNS[:-2]], without[COLUMNS[:-2]])
    assert (with_pair[OUTCOME] != without[OUTCOME]).any()


@settings(max_examples=25, deadline=None)
@given(n=st.integers(1, 400), seed=st.integers(0, 2**32 - 1))
def test_any_size_and_seed_gives_valid_recorded_values(n, seed):
    frame = generate_cohort(n, seed=seed)
    assert len(frame) == n and frame["patient_id"].tolist() == list(range(1, n + 1))
    assert frame["age"].between(60, 102).all()
    assert frame["cognition"].between(0, 10).all()
    assert frame["sodium"].between(120, 156).all()
    assert frame["haemoglobin"].between(70, 170).all()
    assert frame["hours_to_surgery"].between(1, 120).all()
    assert frame["medicines"].between(0, 20).all()
    measured = frame["albumin"].dropna()
    assert measured.between(18, 50).all() and (measured == measured.round()).all()
    assert frame["temperature"].between(35.0, 39.5).all()
    assert np.allclose(frame["temperature"] * 10, np.round(frame["temperature"] * 10), atol=1e-9)  # one decimal
    assert set(frame["anaesthesia"]) <= {"general", "spinal"}
    assert set(frame["residence"]) <= {"own_home", "with_family", "care_home"}
    for flag in ("prior_delirium", "hearing_impairment", "geriatric_review", "delirium"):
        assert set(frame[flag]) <= {0, 1}
    for name in ("age", "cognition", "sodium", "haemoglobin", "hours_to_surgery", "medicines"):
        assert frame[name].dtype == np.int64, name
    assert frame.drop(columns="albumin").notna().all().all()  # only albumin is ever not measured


@pytest.mark.parametrize("interaction", [True, False])
def test_event_rate_and_missingness_within_the_stated_bounds(interaction):
    low, high = EVENT_RATE_BOUNDS
    miss_low, miss_high = ALBUMIN_MISSING_BOUNDS
    for seed in range(12):
        frame = generate_cohort(5000, seed=seed, interaction=interaction)
        assert low <= frame[OUTCOME].mean() <= high, seed
        assert miss_low <= frame["albumin"].isna().mean() <= miss_high, seed
    assert low <= TRUE_EVENT_RATE[interaction] <= high


def test_event_rate_on_a_large_sample_matches_the_documented_rate():
    # 200,000 patients: standard error of the rate is about 0.0009, so 0.004 is more than 4 standard errors
    frame = generate_cohort(200_000, seed=11)
    assert abs(frame[OUTCOME].mean() - TRUE_EVENT_RATE[True]) < 0.004


def test_realistic_correlations():
    # Spearman rank correlations (scipy.stats.spearmanr): older patients have lower cognition and haemoglobin,
    # take more medicines and live in care homes more often; sodium is drawn independently of age
    frame = generate_cohort(20_000, seed=5)
    assert spearmanr(frame["age"], frame["cognition"]).statistic < -0.1
    assert spearmanr(frame["age"], frame["haemoglobin"]).statistic < -0.1
    assert spearmanr(frame["age"], frame["medicines"]).statistic > 0.1
    assert frame.loc[frame["age"] >= 90, "residence"].eq("care_home").mean() > frame.loc[frame["age"] < 75, "residence"].eq("care_home").mean()
    assert abs(spearmanr(frame["age"], frame["sodium"]).statistic) < 0.03


@pytest.mark.parametrize("n, seed", [(0, 0), (-5, 0), (2.5, 0), (True, 0), (10, -1), (10, "a")])
def test_bad_size_or_seed_is_a_one_line_user_error(n, seed):
    with pytest.raises(UserError) as err:
        generate_cohort(n, seed=seed)
    assert "\n" not in str(err.value)
