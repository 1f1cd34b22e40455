"""The coefficient-table importer against statsmodels' Logit, and its one-line errors.

Outside reference: statsmodels.api.Logit (maximum likelihood logistic regression) fitted on a few features of
scikit-learn's bundled breast-cancer dataset (sklearn.datasets.load_breast_cancer), chosen so the classes are
not separated; a flag and a three-level categorical are derived from the same data.
"""

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from sklearn.datasets import load_breast_cancer

from scorecard.errors import UserError
from scorecard.model import contributions, predict_logodds, predict_risk
from scorecard.model.importers import import_coefficient_table


@pytest.fixture(scope="module")
def statsmodels_fit():
    X, y = load_breast_cancer(return_X_y=True, as_frame=True)
    data = pd.DataFrame({
        "mean_texture": X["mean texture"],
        "mean_smoothness": X["mean smoothness"],
        "mean_symmetry": X["mean symmetry"],
        "concave": (X["mean concavity"] > X["mean concavity"].median()).astype(int),
        "fractal": pd.qcut(X["mean fractal dimension"], 3, labels=["low", "mid", "high"]).astype(str),
    })
    design = pd.get_dummies(data, columns=["fractal"], dtype=float).drop(columns=["fractal_low"])
    result = sm.Logit(y, sm.add_constant(design)).fit(disp=0)
    assert result.mle_retvals["converged"]
    return data, design, result


def write_table(path, result, data):
    p = {k: float(v) for k, v in result.params.items()}  # repr of a float is exact (shortest round trip)
    se = {k: float(v) for k, v in result.bse.items()}
    rows = ["term,coefficient,min,max,label,unit,std_error",
            f"const,{p['const']!r},,,,,{se['const']!r}"]
    for name in ("mean_texture", "mean_smoothness", "mean_symmetry"):
        lo, hi = float(data[name].min()), float(data[name].max())
        rows.append(f"{name},{p[name]!r},{lo!r},{hi!r},{name.replace('_', ' ')},,{se[name]!r}")
    rows.append(f"concave,{p['concave']!r},,,Concave,,")
    rows.append("fractal=low,0,,,Fractal dimension tertile,,")
    rows.append(f"fractal=mid,{p['fractal_mid']!r},,,,,")
    rows.append(f"fractal=high,{p['fractal_high']!r},,,,,")
    path.write_text("\n".join(rows) + "\n")
    return path


def test_coefficient_table_matches_statsmodels_logit(statsmodels_fit, tmp_path):
    data, design, result = statsmodels_fit
    model = import_coefficient_table(write_table(tmp_path / "bc.coefficients.csv", result, data))
    # reference: statsmodels Logit predicted probabilities on the same rows
    expected = result.predict(sm.add_constant(design)).to_numpy()
    assert np.max(np.abs(predict_risk(model, data) - expected)) <= 1e-9
    kinds = {f.name: f.kind for f in model.features}
    assert kinds == {"mean_texture": "continuous", "mean_smoothness": "continuous", "mean_symmetry": "continuous",
                     "concave": "flag", "fractal": "categorical"}
    assert model.term("fractal").levels == ["low", "mid", "high"]
    assert model.term("fractal").scores[0] == 0.0  # the reference level
    assert model.term("mean_texture").shape == "linear"
    assert model.feature("mean_texture").label == "mean texture"
    assert model.provenance["source"].startswith("coefficient table")


def test_continuous_terms_are_flat_beyond_their_stated_range(statsmodels_fit, tmp_path):
    data, _, result = statsmodels_fit
    model = import_coefficient_table(write_table(tmp_path / "bc.coefficients.csv", result, data))
    hi = data["mean_texture"].max()
    probe = data.iloc[[0, 0]].copy()
    probe["mean_texture"] = [hi, hi + 10]
    parts, report = contributions(model, probe)
    b = result.params["mean_texture"]
    assert parts["mean_texture"].tolist() == pytest.approx([b * hi, b * hi], rel=1e-10)  # 11-digit document numbers (jsondoc)
    assert report.out_of_range == {"mean_texture": 1}


def test_centring_on_a_cohort_keeps_predictions(statsmodels_fit, tmp_path):
    data, _, result = statsmodels_fit
    table = write_table(tmp_path / "bc.coefficients.csv", result, data)
    plain = import_coefficient_table(table)
    centred = import_coefficient_table(table, centre_on=data)
    a, _ = predict_logodds(plain, data)
    b, _ = predict_logodds(centred, data)
    assert np.max(np.abs(a - b)) < 1e-9
    parts, _ = contributions(centred, data)
    assert np.max(np.abs(parts.mean(axis=0).to_numpy())) < 1e-9
    assert centred.provenance["centred"] is True


def test_not_measured_column_gives_the_missing_score(tmp_path):
    table = tmp_path / "t.csv"
    # hand-checkable: albumin contributes -0.04 x value, or -1.1 when not measured
    table.write_text("term,coefficient,min,max,not_measured\n(intercept),-2,,,\nalbumin,-0.04,18,50,-1.1\nprior_delirium,1.0,,,\n")
    model = import_coefficient_table(table)
    frame = pd.DataFrame({"albumin": ["30", ""], "prior_delirium": ["yes", "no"]})
    logodds, _ = predict_logodds(model, frame)
    assert logodds == pytest.approx([-2 - 1.2 + 1.0, -2 - 1.1], abs=1e-12)
    assert model.feature("albumin").missing == "score"
    assert model.feature("prior_delirium").missing == "error"
    assert model.feature("albumin").decimals == 0


HEADER = "term,coefficient,min,max,kind,decimals\n"


@pytest.mark.parametrize(
    "body, expected",
    [
        ("age,0.05,60,100,,\n", "no intercept row"),
        ("(intercept),-2,,,,\nconst,-1,,,,\n", "row 2: a second intercept row"),
        ("(intercept),-2,,,,\n(intercept),-1,,,,\n", "row 2: term '(intercept)' already appears in row 1"),
        ("(intercept),-2,,,,\nage,0.05,60,,,\n", "row 2: continuous term 'age' needs both min and max"),
        ("(intercept),-2,,,,\nage,0.05,100,60,,\n", "row 2: min 100 must be below max 60"),
        ("(intercept),-2,,,,\nage,0.05,60,100,,\nage,0.06,60,100,,\n", "row 3: term 'age' already appears in row 2"),
        ("(intercept),-2,,,,\nage,big,60,100,,\n", "row 2: coefficient 'big' is not a number"),
        ("(intercept),-2,,,,\nage,inf,60,100,,\n", "row 2: coefficient 'inf' must be a finite number"),
        ("(intercept),-2,,,,\nage,,60,100,,\n", "row 2: coefficient of 'age' is empty"),
        ("(intercept),-2,,,,\nresidence=care_home,0.5,,,,\n", "row 2: categorical feature 'residence' lists one level"),
        ("(intercept),-2,,,,\nresidence=,0.5,,,,\n", "row 2: term 'residence=' has no level"),
        ("(intercept),-2,,,,\nage years,0.05,60,100,,\n", "row 2: 'age years' is not usable as a feature name"),
        ("(intercept),-2,,,,\nage,0.05,60,100,,\nage=old,0.1,,,,\n", "row 3: feature 'age' is already a continuous term"),
        ("(intercept),-2,,,,\nflag,0.5,1,,flag,\n", "row 2: flag 'flag' takes no min/max"),
        ("(intercept),-2,,,,\nage,0.05,60,100,ordinal,\n", "row 2: kind 'ordinal' is not one of"),
        ("(intercept),-2,,,,\nage,0.05,60,100,,7\n", "row 2: decimals '7' must be a whole number from 0 to 6"),
        ("(intercept),-2,,,,\n,0.05,60,100,,\n", "row 2: column term is empty"),
        ("(intercept),-2,,,,\n", "no terms besides the intercept"),
    ],
)
def test_malformed_coefficient_tables_name_the_row(tmp_path, body, expected):
    table = tmp_path / "t.csv"
    table.write_text(HEADER + body)
    with pytest.raises(UserError) as info:
        import_coefficient_table(table)
    assert expected in str(info.value) and "\n" not in str(info.value), str(info.value)
    assert str(info.value).startswith(str(table))


def test_table_without_required_columns_or_rows(tmp_path):
    table = tmp_path / "t.csv"
    table.write_text("name,beta\nage,0.1\n")
    with pytest.raises(UserError, match="column 'term' is missing"):
        import_coefficient_table(table)
    table.write_text("")
    with pytest.raises(UserError, match="file is empty"):
        import_coefficient_table(table)
    with pytest.raises(UserError, match="no such file"):
        import_coefficient_table(tmp_path / "missing.csv")
