"""Import a fitted scikit-learn logistic regression (alone, or at the end of a Pipeline of per-column
transformers) as an additive model, and prove on the supplied data that nothing was lost.

Method. A logistic regression fed by per-column transformers (StandardScaler, SplineTransformer,
OneHotEncoder, ...) has log-odds  f(x) = b + sum_j g_j(x_j): each column enters through its own function.
Holding every column at a reference patient r (the first row of X) and moving column j alone gives
g_j(v) - g_j(r_j) = f(r with x_j = v) - f(r), so each partial function is read off the estimator's own
decision_function. Continuous columns are evaluated on every distinct value in X plus a regular grid over
their range and stored as a linear shape with those knots, so the imported model is exact at every value in
X (knots where the curve is straight are dropped; the check below guards that). Terms are then centred on X
(the intercept absorbs the means).

Verification. On every row of X, the imported model's log-odds must equal the estimator's
decision_function within `tolerance`; otherwise the estimator is not additive (or not over this data) and is
refused. The largest difference is recorded in the model's provenance.
"""

from __future__ import annotations

import hashlib

import numpy as np
import pandas as pd
import sklearn
from sklearn.compose import ColumnTransformer
from sklearn.linear_model import LogisticRegression, LogisticRegressionCV
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import (
    FunctionTransformer,
    MaxAbsScaler,
    MinMaxScaler,
    OneHotEncoder,
    PolynomialFeatures,
    RobustScaler,
    SplineTransformer,
    StandardScaler,
)

from scorecard.jsondoc import canonical_float
from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel, Feature, Term, model_from_dict
from scorecard.model.importers.common import centre_terms, importer_stamp, outcome_block, safe_feature_name
from scorecard.model.predict import predict_logodds

# transformers that act on each column separately, so a logistic regression on their output stays additive
PER_COLUMN_TRANSFORMERS = (StandardScaler, MinMaxScaler, MaxAbsScaler, RobustScaler, SplineTransformer, OneHotEncoder)
KINDS = ("continuous", "categorical", "flag")


def from_sklearn(
    estimator,
    X,
    *,
    feature_kinds: dict[str, str] | None = None,
    tolerance: float = 1e-6,
    grid_points: int = 101,
    name: str = "imported scikit-learn model",
    version: str = "1",
    event: str | None = None,
    horizon: str | None = None,
    population: str | None = None,
    labels: dict[str, str] | None = None,
    units: dict[str, str] | None = None,
    require_listed_steps: bool = True,
) -> AdditiveModel:
    """Return the additive model equal to `estimator` on the rows of `X` (see the module docstring).

    X: the data the estimator is checked on (a DataFrame, or an array whose columns are named after
    `estimator.feature_names_in_` or x1, x2, ...). Column names become feature names with anything other than
    letters, digits and _ replaced by _ ('mean radius' -> 'mean_radius'); the original name is the label.
    feature_kinds: optional {column: continuous | categorical | flag}; by default text columns are
    categorical, 0/1 and boolean columns flags, other numbers continuous.
    require_listed_steps: refuse any step that is not a known per-column transformer before checking
    numerically; with False, only the numerical additivity check decides.
    Raises UserError for an unsupported or non-additive estimator, naming the step or the largest difference.
    """
    if not tolerance > 0:
        raise UserError(f"tolerance {tolerance!r} must be a positive number (log-odds)")
    if grid_points < 2:
        raise UserError(f"grid_points {grid_points!r} must be at least 2")
    _check_binary(estimator)
    if require_listed_steps:
        _check_structure(estimator)
    frame, pass_frame = _as_frame(estimator, X)
    kinds = _feature_kinds(frame, feature_kinds or {})
    names = _feature_names(frame.columns)

    def decide(part: pd.DataFrame) -> np.ndarray:
        try:
            return np.asarray(estimator.decision_function(part if pass_frame else part.to_numpy()), dtype=float).ravel()
        except Exception as exc:  # the estimator's own complaint, as one line
            raise UserError(f"the estimator cannot score the supplied X: {str(exc).splitlines()[0]}") from None

    target = decide(frame)
    reference = frame.iloc[[0]]
    base = float(decide(reference)[0])
    features: list[Feature] = []
    terms: list[Term] = []
    unused: list[str] = []
    for column in frame.columns:
        feature, term = _read_partial(frame, column, names[column], kinds[column], reference, base, decide, grid_points)
        if term is None:
            unused.append(str(column))
            continue
        feature.label = (labels or {}).get(column, feature.label)
        feature.unit = (units or {}).get(column, "")
        features.append(feature)
        terms.append(term)
    if not terms:
        raise UserError("the estimator's log-odds do not change with any column of X; nothing to import")

    renamed = frame.rename(columns=names)
    renamed.attrs["source"] = "X"
    model = AdditiveModel(
        name=name,
        version=version,
        outcome=outcome_block(event, horizon, population),
        intercept=base,
        features=features,
        terms=terms,
    )
    centre_terms(model, renamed)
    model = model_from_dict(model.to_dict(), source="imported scikit-learn model")

    logodds, _ = predict_logodds(model, renamed)
    gaps = np.abs(logodds - target)
    worst = int(np.argmax(gaps))
    largest = float(gaps[worst])
    if not largest <= tolerance:
        raise UserError(
            f"{describe(estimator)} is not additive on the supplied X: at row {worst + 1} the imported log-odds differ "
            f"from decision_function by {largest:.3g} (tolerance {tolerance:g}); import only additive models "
            "(per-column transformers feeding a logistic regression)"
        )
    model.provenance = {
        "source": "scikit-learn estimator",
        "estimator": describe(estimator),
        "scikit_learn_version": sklearn.__version__,
        "event_class": str(np.asarray(estimator.classes_)[1]),
        "rows_checked": int(len(frame)),
        "largest_logodds_difference": largest,
        "tolerance": float(tolerance),
        "data_sha256": hashlib.sha256(frame.to_csv(index=False).encode("utf-8")).hexdigest(),
        "imported_by": importer_stamp(),
        "centred": True,
    }
    if any(str(k) != v for k, v in names.items()):
        model.provenance["renamed_columns"] = {str(k): v for k, v in names.items() if str(k) != v}
    if unused:
        model.provenance["unused_columns"] = unused
    return model_from_dict(model.to_dict(), source="imported scikit-learn model")


# -- structure -------------------------------------------------------------------------------------


def _is_identity(step) -> bool:
    # a fitted ColumnTransformer stores 'passthrough' as a FunctionTransformer without a function
    return isinstance(step, FunctionTransformer) and step.func is None


def describe(estimator) -> str:
    """A short, stable description of an estimator's steps (for messages and provenance)."""
    if isinstance(estimator, str):
        return estimator
    if _is_identity(estimator):
        return "passthrough"
    if isinstance(estimator, Pipeline):
        return "Pipeline(" + " -> ".join(describe(step) for _, step in estimator.steps) + ")"
    if isinstance(estimator, ColumnTransformer):
        parts = getattr(estimator, "transformers_", estimator.transformers)
        return "ColumnTransformer(" + "; ".join(f"{describe(t)} on {_columns_text(c)}" for _, t, c in parts) + ")"
    return type(estimator).__name__


def _columns_text(columns) -> str:
    if isinstance(columns, (list, tuple, np.ndarray, pd.Index)):
        return "[" + ", ".join(str(c) for c in columns) + "]"
    return str(columns)


def _check_binary(estimator) -> None:
    if not hasattr(estimator, "decision_function"):
        raise UserError(f"{describe(estimator)} has no decision_function (log-odds); import a logistic regression")
    classes = getattr(estimator, "classes_", None)
    if classes is None:
        raise UserError(f"{describe(estimator)} is not fitted; fit it before importing")
    if len(classes) != 2:
        raise UserError(f"{describe(estimator)} predicts {len(classes)} classes; a risk model has exactly two (event / no event)")


def _check_structure(estimator) -> None:
    final, steps = estimator, []
    if isinstance(estimator, Pipeline):
        steps = [step for _, step in estimator.steps[:-1]]
        final = estimator.steps[-1][1]
    if not isinstance(final, (LogisticRegression, LogisticRegressionCV)):
        module = type(final).__module__
        if module.startswith(("sklearn.ensemble", "sklearn.tree")):
            raise UserError(
                f"{type(final).__name__} is a tree model: its trees combine features, so it is not additive on the "
                "log-odds scale; import a logistic regression, or fit an additive model with `scorecard fit`"
            )
        raise UserError(f"final step {type(final).__name__} is not a LogisticRegression; only a logistic regression can be imported")
    for step in steps:
        _check_step(step)


def _check_step(step) -> None:
    if step is None or (isinstance(step, str) and step in ("passthrough", "drop")) or _is_identity(step):
        return
    if isinstance(step, Pipeline):
        for _, inner in step.steps:
            _check_step(inner)
        return
    if isinstance(step, ColumnTransformer):
        for _, inner, _ in getattr(step, "transformers_", step.transformers):
            _check_step(inner)
        return
    if isinstance(step, PolynomialFeatures):
        raise UserError(
            "PolynomialFeatures multiplies columns together (interactions), so the model is not additive; "
            "refit without it, or with per-column SplineTransformer"
        )
    if isinstance(step, PER_COLUMN_TRANSFORMERS):
        return
    known = ", ".join(t.__name__ for t in PER_COLUMN_TRANSFORMERS)
    raise UserError(
        f"step {type(step).__name__} is not supported (it may combine columns); supported steps: {known}, "
        "ColumnTransformer, Pipeline, passthrough"
    )


# -- data ------------------------------------------------------------------------------------------


def _as_frame(estimator, X) -> tuple[pd.DataFrame, bool]:
    """X as a DataFrame with a fresh index; and whether the estimator wants a DataFrame (fitted on one)."""
    pass_frame = hasattr(estimator, "feature_names_in_")
    if isinstance(X, pd.DataFrame):
        frame = X.reset_index(drop=True)
    else:
        arr = np.asarray(X)
        if arr.ndim != 2:
            raise UserError(f"X must be a table (2-D), found {arr.ndim}-D")
        names = list(getattr(estimator, "feature_names_in_", [f"x{i + 1}" for i in range(arr.shape[1])]))
        frame = pd.DataFrame(arr, columns=names)
    if len(frame) == 0:
        raise UserError("X has no rows; supply the data the estimator should be checked on")
    for column in frame.columns:
        if frame[column].isna().any():
            row = int(np.flatnonzero(frame[column].isna().to_numpy())[0])
            raise UserError(f"X row {row + 1}, column {column!r}: missing value; the importer needs complete rows")
    return frame, pass_frame


def _feature_kinds(frame: pd.DataFrame, given: dict[str, str]) -> dict:
    kinds = {}
    for column, kind in given.items():
        if column not in frame.columns:
            raise UserError(f"feature_kinds names {column!r}, which is not a column of X")
        if kind not in KINDS:
            raise UserError(f"feature_kinds[{column!r}] = {kind!r} is not one of {', '.join(KINDS)}")
    for column in frame.columns:
        col = frame[column]
        if column in given:
            kinds[column] = given[column]
        elif pd.api.types.is_bool_dtype(col):
            kinds[column] = "flag"
        elif not pd.api.types.is_numeric_dtype(col):
            kinds[column] = "categorical"
        elif set(np.unique(col.to_numpy(dtype=float))) <= {0.0, 1.0}:
            kinds[column] = "flag"
        else:
            kinds[column] = "continuous"
        if kinds[column] == "continuous" and not pd.api.types.is_numeric_dtype(col):
            raise UserError(f"X column {column!r} is text, so it cannot be continuous; say categorical in feature_kinds")
    return kinds


def _feature_names(columns) -> dict:
    names, used = {}, set()
    for column in columns:
        base = safe_feature_name(column)
        candidate, k = base, 2
        while candidate in used:
            candidate, k = f"{base}_{k}", k + 1
        used.add(candidate)
        names[column] = candidate
    return names


def _decimals(values: np.ndarray) -> int:
    """Fewest decimals (0-6) that write every value exactly (display only)."""
    for d in range(7):
        if np.allclose(np.round(values, d), values, rtol=0, atol=1e-9 * max(1.0, float(np.max(np.abs(values))))):
            return d
    return 6


# -- partial functions -----------------------------------------------------------------------------


def _read_partial(frame, column, fname, kind, reference, base, decide, grid_points):
    """The estimator's log-odds as `column` alone moves from the reference patient's value."""
    col = frame[column]
    if kind == "continuous":
        values = col.to_numpy(dtype=float)
        lo, hi = float(values.min()), float(values.max())
        grid = np.union1d(np.unique(values), np.linspace(lo, hi, grid_points)) if hi > lo else np.array([lo, lo + 1.0])
        # read the estimator at knots the document can hold exactly (its canonical numbers), so two knots a
        # few digits apart never merge when the model is saved
        grid = np.unique([canonical_float(float(v)) for v in grid])
        settings = pd.Series(grid)
    elif kind == "flag":
        settings = pd.Series([False, True] if pd.api.types.is_bool_dtype(col) else [0, 1]).astype(col.dtype)
    else:
        originals = list(pd.unique(col))
        texts = [str(v).strip() for v in originals]
        if any(not t for t in texts) or len(set(texts)) != len(texts):
            raise UserError(f"X column {column!r}: level names must be distinct and not blank once spaces are trimmed")
        order = sorted(range(len(texts)), key=lambda i: texts[i])
        originals, texts = [originals[i] for i in order], [texts[i] for i in order]
        settings = pd.Series(originals, dtype=col.dtype)
    probe = reference.loc[reference.index.repeat(len(settings))].reset_index(drop=True)
    probe[column] = settings.to_numpy() if kind == "continuous" else settings.array
    partial = decide(probe) - base
    if not np.all(np.isfinite(partial)):
        raise UserError(f"X column {column!r}: the estimator gives a non-finite log-odds; check the data")
    if np.max(np.abs(partial)) <= 1e-13 * max(1.0, abs(base)):
        return None, None  # the estimator ignores this column (dropped by a ColumnTransformer); rounding aside
    if kind == "continuous":
        knots, scores = drop_straight_knots(grid, partial)
        p01, p99 = np.percentile(col.to_numpy(dtype=float), [1, 99])
        feature = Feature(
            name=fname, label=str(column), kind="continuous", decimals=_decimals(col.to_numpy(dtype=float)),
            training_range={"min": lo, "max": hi, "p01": float(p01), "p99": float(p99)}, missing="error",
        )
        return feature, Term(kind="continuous", name=fname, feature=fname, shape="linear", edges=list(knots), scores=list(scores))
    if kind == "flag":
        feature = Feature(name=fname, label=str(column), kind="flag", missing="error")
        return feature, Term(kind="flag", name=fname, feature=fname, scores=[float(partial[0]), float(partial[1])])
    feature = Feature(name=fname, label=str(column), kind="categorical", levels=texts, missing="error")
    return feature, Term(kind="categorical", name=fname, feature=fname, levels=texts, scores=[float(v) for v in partial], unseen="error")


def drop_straight_knots(x: np.ndarray, y: np.ndarray, rtol: float = 1e-13) -> tuple[np.ndarray, np.ndarray]:
    """Remove interior knots that lie on the line through their neighbours, keeping the curve unchanged.

    A knot is dropped when it is within rtol * max|y| of the chord of its two original neighbours; the result
    is kept only if it reproduces every original knot to that tolerance (else all knots are kept).
    """
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if len(x) <= 2:
        return x, y
    atol = rtol * max(1.0, float(np.max(np.abs(y))))
    chord = y[:-2] + (y[2:] - y[:-2]) * (x[1:-1] - x[:-2]) / (x[2:] - x[:-2])
    keep = np.ones(len(x), dtype=bool)
    keep[1:-1] = np.abs(y[1:-1] - chord) > atol
    if np.max(np.abs(np.interp(x, x[keep], y[keep]) - y)) > atol:
        return x, y
    return x[keep], y[keep]
