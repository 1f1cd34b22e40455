"""The scikit-learn importer against scikit-learn itself, on scikit-learn's bundled breast-cancer data.

Outside references: scikit-learn's LogisticRegression.predict_proba / decision_function (the estimator being
imported), fitted on sklearn.datasets.load_breast_cancer (Wisconsin diagnostic breast cancer, 569 rows,
shipped inside scikit-learn).
"""

import warnings

import numpy as np
import pandas as pd
import pytest
from sklearn.compose import ColumnTransformer
from sklearn.datasets import load_breast_cancer
from sklearn.decomposition import PCA
from sklearn.ensemble import GradientBoostingClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import OneHotEncoder, PolynomialFeatures, SplineTransformer, StandardScaler

from scorecard.errors import UserError
from scorecard.model import contributions, load_model, predict_logodds, predict_risk, save_model
from scorecard.model.importers import from_sklearn
from scorecard.model.importers.sklearn_estimator import drop_straight_knots


@pytest.fixture(scope="module")
def breast_cancer():
    # scikit-learn's bundled breast-cancer dataset; the event is class 1 ("benign" in its coding)
    X, y = load_breast_cancer(return_X_y=True, as_frame=True)
    return X, y


@pytest.fixture(scope="module")
def scaled_fit(breast_cancer):
    X, y = breast_cancer
    estimator = make_pipeline(StandardScaler(), LogisticRegression(max_iter=5000)).fit(X, y)
    return estimator, from_sklearn(estimator, X)


@pytest.fixture(scope="module")
def spline_fit(breast_cancer):
    X, y = breast_cancer
    estimator = make_pipeline(SplineTransformer(n_knots=4, degree=3), LogisticRegression(C=0.1, max_iter=5000)).fit(X, y)
    return estimator, from_sklearn(estimator, X)


def ours(model, X):
    """X with the column names the imported model uses ('mean radius' -> 'mean_radius')."""
    return X.rename(columns=model.provenance.get("renamed_columns", {}))


def test_standard_scaler_logistic_regression_matches_predict_proba(breast_cancer, scaled_fit):
    X, y = breast_cancer
    estimator, model = scaled_fit
    # reference: scikit-learn's predict_proba, to 1e-9 on every patient
    assert np.max(np.abs(predict_risk(model, ours(model, X)) - estimator.predict_proba(X)[:, 1])) <= 1e-9
    assert model.provenance["largest_logodds_difference"] <= 1e-6
    assert model.provenance["estimator"] == "Pipeline(StandardScaler -> LogisticRegression)"
    assert model.provenance["event_class"] == "1"
    # a logistic regression after a scaler is a straight line in each feature: two knots suffice
    assert all(t.shape == "linear" and len(t.edges) == 2 for t in model.terms)
    assert len(model.terms) == 30
    assert model.feature("mean_radius").label == "mean radius"


def test_spline_pipeline_matches_predict_proba(breast_cancer, spline_fit):
    X, y = breast_cancer
    estimator, model = spline_fit
    risk = predict_risk(model, ours(model, X))
    # reference: scikit-learn's predict_proba (SplineTransformer pipeline), to 1e-9
    assert np.max(np.abs(risk - estimator.predict_proba(X)[:, 1])) <= 1e-9
    # curved shapes keep their grid: every distinct data value is a knot
    term = model.term("mean_radius")
    assert set(np.unique(X["mean radius"])) <= set(term.edges)
    assert len(term.edges) > 100


def test_terms_are_centred_on_the_data(breast_cancer, spline_fit):
    X, y = breast_cancer
    estimator, model = spline_fit
    parts, _ = contributions(model, ours(model, X))
    assert np.max(np.abs(parts.mean(axis=0).to_numpy())) < 1e-9
    # the intercept is then the log-odds of a patient at the average of every term
    assert model.intercept == pytest.approx(float(np.mean(estimator.decision_function(X))), abs=1e-9)


def test_column_transformer_with_one_hot_flag_and_dropped_column(breast_cancer):
    X, y = breast_cancer
    # a categorical and a flag column derived from the dataset's own measurements
    data = X[["mean texture", "mean smoothness", "mean radius"]].copy()
    data["size"] = pd.cut(X["mean area"], [0, 500, 900, np.inf], labels=["small", "medium", "large"]).astype(str)
    data["concave"] = (X["mean concavity"] > X["mean concavity"].median()).astype(int)
    transformer = ColumnTransformer([
        ("scaled", StandardScaler(), ["mean texture"]),
        ("curve", SplineTransformer(n_knots=4), ["mean smoothness"]),
        ("levels", OneHotEncoder(drop="first"), ["size"]),
        ("flag", "passthrough", ["concave"]),
    ], remainder="drop")
    estimator = make_pipeline(transformer, LogisticRegression(max_iter=5000)).fit(data, y)
    model = from_sklearn(estimator, data)
    # reference: scikit-learn's decision_function and predict_proba on every row
    logodds, _ = predict_logodds(model, ours(model, data))
    assert np.max(np.abs(logodds - estimator.decision_function(data))) <= 1e-9
    assert np.max(np.abs(predict_risk(model, ours(model, data)) - estimator.predict_proba(data)[:, 1])) <= 1e-9
    kinds = {f.name: f.kind for f in model.features}
    assert kinds == {"mean_texture": "continuous", "mean_smoothness": "continuous", "size": "categorical", "concave": "flag"}
    assert model.provenance["unused_columns"] == ["mean radius"]
    size = model.term("size")
    assert size.levels == ["large", "medium", "small"]
    # OneHotEncoder(drop="first") drops "large": its effect vs "medium" must equal the coefficient difference
    coef = estimator[-1].coef_[0]
    names = list(estimator[0].get_feature_names_out())
    medium, small = coef[names.index("levels__size_medium")], coef[names.index("levels__size_small")]
    assert size.scores[1] - size.scores[0] == pytest.approx(medium, abs=1e-9)  # 11-digit document numbers (jsondoc)
    assert size.scores[2] - size.scores[0] == pytest.approx(small, abs=1e-9)
    flag = model.term("concave")
    assert flag.scores[1] - flag.scores[0] == pytest.approx(coef[names.index("flag__concave")], abs=1e-9)


def test_plain_logistic_regression_on_an_array(breast_cancer):
    X, y = breast_cancer
    arr = StandardScaler().fit_transform(X.to_numpy()[:, :5])
    estimator = LogisticRegression().fit(arr, y)
    model = from_sklearn(estimator, arr)
    frame = pd.DataFrame(arr, columns=[f"x{i}" for i in range(1, 6)])
    # reference: scikit-learn's predict_proba
    assert np.max(np.abs(predict_risk(model, frame) - estimator.predict_proba(arr)[:, 1])) <= 1e-9
    # each term's slope is the coefficient (knots at the data range ends)
    for j, term in enumerate(model.terms):
        slope = (term.scores[1] - term.scores[0]) / (term.edges[1] - term.edges[0])
        assert slope == pytest.approx(estimator.coef_[0][j], rel=1e-9)


def test_imported_model_survives_save_and_load(breast_cancer, scaled_fit, tmp_path):
    X, y = breast_cancer
    estimator, _ = scaled_fit
    model = from_sklearn(estimator, X, event="benign tumour", horizon="at biopsy", population="breast-cancer dataset rows")
    fingerprint = save_model(model, tmp_path / "bc.model.json")
    again = load_model(tmp_path / "bc.model.json")
    assert again.fingerprint == fingerprint
    assert np.array_equal(predict_risk(again, ours(again, X)), predict_risk(model, ours(model, X)))
    # same estimator and data -> same document bytes
    save_model(from_sklearn(estimator, X, event="benign tumour", horizon="at biopsy", population="breast-cancer dataset rows"),
               tmp_path / "again.model.json")
    assert (tmp_path / "bc.model.json").read_bytes() == (tmp_path / "again.model.json").read_bytes()


@pytest.mark.parametrize(
    "make, expected",
    [
        (lambda: make_pipeline(StandardScaler(), PolynomialFeatures(degree=2), LogisticRegression(max_iter=2000)),
         "PolynomialFeatures multiplies columns together"),
        (lambda: GradientBoostingClassifier(n_estimators=5, max_depth=3, random_state=0), "is a tree model"),
        (lambda: make_pipeline(PCA(n_components=2), LogisticRegression()), "step PCA is not supported"),
    ],
    ids=["polynomial interactions", "tree ensemble", "PCA mixes columns"],
)
def test_non_additive_estimators_are_refused(breast_cancer, make, expected):
    X, y = breast_cancer
    X = X.iloc[:, :4]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        estimator = make().fit(X, y)
    with pytest.raises(UserError, match=expected):
        from_sklearn(estimator, X)


def test_numerical_check_refuses_interactions_even_when_steps_are_not_listed(breast_cancer):
    X, y = breast_cancer
    X = X.iloc[:, :4]
    estimator = make_pipeline(StandardScaler(), PolynomialFeatures(degree=2, interaction_only=True),
                              LogisticRegression(max_iter=5000)).fit(X, y)
    with pytest.raises(UserError, match=r"is not additive on the supplied X: at row \d+ the imported log-odds differ from decision_function by"):
        from_sklearn(estimator, X, require_listed_steps=False)


def test_numerical_check_accepts_an_additive_unlisted_estimator(breast_cancer):
    X, y = breast_cancer
    X = X.iloc[:, :4]
    # boosted stumps (depth 1) are additive: each tree looks at one feature (common practice)
    stumps = GradientBoostingClassifier(n_estimators=20, max_depth=1, random_state=0).fit(X, y)
    model = from_sklearn(stumps, X, require_listed_steps=False)
    logodds, _ = predict_logodds(model, ours(model, X))
    assert np.max(np.abs(logodds - stumps.decision_function(X))) <= 1e-6  # reference: scikit-learn's decision_function


def test_multiclass_and_unfitted_are_refused(breast_cancer):
    X, y = breast_cancer
    X = X.iloc[:, :3]
    three = make_pipeline(StandardScaler(), LogisticRegression()).fit(X, pd.cut(X.iloc[:, 0], 3, labels=False))
    with pytest.raises(UserError, match="predicts 3 classes"):
        from_sklearn(three, X)
    with pytest.raises(UserError, match="not fitted"):
        from_sklearn(LogisticRegression(), X)


def test_bad_arguments_are_refused(breast_cancer):
    X, y = breast_cancer
    X = X.iloc[:, :3]
    estimator = LogisticRegression(max_iter=2000).fit(X, y)
    with pytest.raises(UserError, match="feature_kinds names 'age'"):
        from_sklearn(estimator, X, feature_kinds={"age": "continuous"})
    with pytest.raises(UserError, match="tolerance"):
        from_sklearn(estimator, X, tolerance=0)
    holes = X.copy()
    holes.iloc[4, 1] = np.nan
    with pytest.raises(UserError, match="X row 5, column 'mean texture': missing value"):
        from_sklearn(estimator, holes)


def test_drop_straight_knots_keeps_bends_and_removes_straight_runs():
    x = np.array([0.0, 1.0, 2.0, 3.0, 4.0, 5.0])
    y = np.array([0.0, 1.0, 2.0, 3.0, 2.0, 1.0])  # hand-checkable: a tent with its peak at 3
    kx, ky = drop_straight_knots(x, y)
    assert kx.tolist() == [0.0, 3.0, 5.0] and ky.tolist() == [0.0, 3.0, 1.0]
    assert np.array_equal(np.interp(x, kx, ky), y)
