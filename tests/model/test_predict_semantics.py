"""Prediction semantics of the model document: bins, knots, out-of-range, not measured, unseen levels, pairs."""

import numpy as np
import pandas as pd
import pytest
from scipy.special import expit

from scorecard.errors import UserError
from scorecard.model import contributions, explain, logistic, model_from_dict, predict_logodds, predict_risk


def cohort(**columns):
    n = len(next(iter(columns.values()))) if columns else 1
    base = {"age": [75] * n, "sodium": [140] * n, "residence": ["own_home"] * n, "prior_delirium": ["no"] * n, "cognition": [7] * n}
    base.update(columns)
    frame = pd.DataFrame(base)
    frame.attrs["source"] = "cohort.csv"
    return frame


def test_value_equal_to_an_edge_goes_to_the_upper_bin(model_doc):
    model = model_from_dict(model_doc)  # age edges [70, 80], scores [-0.4, 0.0, 0.6]
    ages = [69, 69.999, 70, 79.5, 80, 80.001]
    parts, _ = contributions(model, cohort(age=ages))
    assert parts["age"].tolist() == [-0.4, -0.4, 0.0, 0.0, 0.6, 0.6]
    # outside reference: numpy.digitize(x, bins) gives i with bins[i-1] <= x < bins[i], the same convention
    expected = np.array([-0.4, 0.0, 0.6])[np.digitize(ages, [70, 80])]
    assert parts["age"].tolist() == expected.tolist()


def test_out_of_range_values_fall_in_the_end_bins_and_are_reported(model_doc):
    model = model_from_dict(model_doc)  # age training range 60..100
    parts, report = contributions(model, cohort(age=[40, 60, 100, 130]))
    assert parts["age"].tolist() == [-0.4, -0.4, 0.6, 0.6]
    assert report.out_of_range == {"age": 2}
    assert any("age: 2 of 4 values outside the training range" in line for line in report.lines())


def test_linear_shape_interpolates_between_knots_and_is_flat_beyond(model_doc):
    model = model_from_dict(model_doc)  # sodium knots [125, 140, 150] scores [0.5, 0.0, 0.3]
    parts, report = contributions(model, cohort(sodium=[110, 125, 132.5, 140, 145, 150, 170]))
    # hand-computed: halfway between 125 and 140 is 0.25; halfway between 140 and 150 is 0.15
    assert parts["sodium"].to_numpy() == pytest.approx([0.5, 0.5, 0.25, 0.0, 0.15, 0.3, 0.3], abs=1e-15)
    assert report.out_of_range == {"sodium": 2}  # 110 and 170 are outside 120..155


def test_not_measured_follows_each_features_policy(model_doc):
    model = model_from_dict(model_doc)
    # sodium: policy score -> the term's not-measured score 0.1; prior_delirium: score -> 0.3
    parts, report = contributions(model, cohort(sodium=["", "NA"], prior_delirium=["not measured", "yes"]))
    assert parts["sodium"].tolist() == [0.1, 0.1]
    assert parts["prior_delirium"].tolist() == [0.3, 1.1]
    assert report.not_measured == {"sodium": 2, "prior_delirium": 1}
    # cognition: policy average -> 0 (the centred population mean), reported
    parts, report = contributions(model, cohort(cognition=[None, 3]))
    assert parts["cognition"].tolist() == [0.0, 0.4]
    assert report.averaged == {"cognition": 1}
    # age: policy error -> one line naming file, row and column
    with pytest.raises(UserError) as info:
        contributions(model, cohort(age=[70, ""]))
    assert str(info.value).startswith("cohort.csv: row 2, column 'age': not measured")


def test_missing_error_policy_also_holds_for_pair_terms(model_doc):
    model_doc["features"][4]["missing"] = "error"  # cognition is used by the single term and the pair
    del model_doc["terms"][4]  # keep only the pair for cognition
    model = model_from_dict(model_doc)
    with pytest.raises(UserError, match=r"row 1, column 'cognition': not measured"):
        contributions(model, cohort(cognition=[""]))


def test_unseen_category_per_policy(model_doc):
    frame = cohort(residence=["own_home", "hotel", "care_home"])
    # error (default): a clear message naming row, column, level and the known levels
    with pytest.raises(UserError) as info:
        contributions(model_from_dict(model_doc), frame)
    assert "row 2, column 'residence': level 'hotel' is not one the model knows" in str(info.value)
    # average: contributes 0 and is reported
    model_doc["terms"][2]["unseen"] = "average"
    parts, report = contributions(model_from_dict(model_doc), frame)
    assert parts["residence"].tolist() == [0.0, 0.0, 0.55]
    assert report.unseen_levels == {"residence": {"hotel": 1}}
    # missing: scored as not measured (here the feature's policy is average with no not-measured score -> 0)
    model_doc["terms"][2]["unseen"] = "missing"
    model_doc["terms"][2]["missing_score"] = 0.7
    model_doc["features"][2]["missing"] = "score"
    parts, _ = contributions(model_from_dict(model_doc), frame)
    assert parts["residence"].tolist() == [0.0, 0.7, 0.55]
    # missing, when the feature refuses not-measured values: the message names the unknown level
    model_doc["features"][2]["missing"] = "error"
    with pytest.raises(UserError, match=r"row 2, column 'residence': level 'hotel' is not one the model knows"):
        contributions(model_from_dict(model_doc), frame)


def test_flag_spellings_and_bad_flag_value(model_doc):
    model = model_from_dict(model_doc)
    parts, _ = contributions(model, cohort(prior_delirium=["1", "0", "yes", "No", "TRUE", "false"]))
    assert parts["prior_delirium"].tolist() == [1.1, 0.0, 1.1, 0.0, 1.1, 0.0]
    with pytest.raises(UserError, match=r"row 1, column 'prior_delirium': 'maybe' is not a yes/no value"):
        contributions(model, cohort(prior_delirium=["maybe"]))


def test_pair_grid_lookup(model_doc):
    model = model_from_dict(model_doc)  # age edge 80 x cognition edge 5: [[0, 0], [0.3, -0.1]]
    parts, _ = contributions(model, cohort(age=[70, 70, 80, 85], cognition=[2, 5, 4, 9]))
    assert parts["age x cognition"].tolist() == [0.0, 0.0, 0.3, -0.1]


def test_logodds_is_intercept_plus_terms_and_risk_uses_the_logistic_link(model_doc):
    model = model_from_dict(model_doc)
    frame = cohort(age=[65, 85], sodium=[130, 150], residence=["care_home", "with_family"],
                   prior_delirium=["yes", "no"], cognition=[3, 8])
    logodds, _ = predict_logodds(model, frame)
    # hand sums: -1.5 + age + sodium + residence + flag + cognition + pair
    first = -1.5 - 0.4 + (0.5 * 10 / 15) + 0.55 + 1.1 + 0.4 + 0.0
    second = -1.5 + 0.6 + 0.3 + 0.2 + 0.0 - 0.1 - 0.1
    assert logodds == pytest.approx([first, second], abs=1e-12)
    # outside reference: scipy.special.expit is the logistic function
    assert predict_risk(model, frame) == pytest.approx(expit(logodds), rel=1e-15)


def test_logistic_is_stable_for_extreme_logodds():
    z = np.array([-800.0, -40.0, 0.0, 40.0, 800.0])
    assert np.all(np.isfinite(logistic(z)))
    assert logistic(z) == pytest.approx(expit(z), rel=1e-15)  # scipy.special.expit as the reference


def test_missing_column_is_named(model_doc):
    frame = cohort().drop(columns=["sodium"])
    with pytest.raises(UserError, match="column 'sodium' needed by the model is missing"):
        predict_logodds(model_from_dict(model_doc), frame)


def test_explain_sorts_terms_by_size(model_doc):
    model = model_from_dict(model_doc)
    frame = cohort(age=[85], sodium=[140], residence=["care_home"], prior_delirium=["yes"], cognition=[3])
    result = explain(model, frame, 0)
    sizes = [abs(t["contribution"]) for t in result["terms"]]
    assert sizes == sorted(sizes, reverse=True)
    assert result["terms"][0]["term"] == "prior_delirium"
    assert result["risk"] == pytest.approx(expit(result["logodds"]))
    with pytest.raises(UserError, match="row 5 does not exist"):
        explain(model, frame, 4)
