"""`AdditiveRiskClassifier`: the scikit-learn face of the fit (fit / predict_proba / decision_function).

A thin class around `fit_additive_terms`: `__init__` only stores settings, inputs are checked once in
`fit`, fitted state ends in `_`. Columns may be numbers (NaN = not measured), 0/1 flags, or categories
(text, or the columns named in `categorical_features`); a pandas DataFrame keeps its column names.
"""

from __future__ import annotations

import hashlib
import sys

import numpy as np
import pandas as pd
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.utils.multiclass import check_classification_targets
from sklearn.utils.validation import _check_sample_weight, check_is_fitted, column_or_1d, validate_data

from scorecard.fit.bagging import TableInMemory, fit_additive_terms, logodds_of, pair_code
from scorecard.fit.binning import UNSEEN, ValueSummary, categorical_bins, coarse_bins, numeric_bins
from scorecard.fit.boosting import BoostSettings


class AdditiveRiskClassifier(ClassifierMixin, BaseEstimator):
    """A generalized additive risk model with a few pairwise terms, fitted by cyclic gradient boosting.

    Parameters
    ----------
    learning_rate : scale of every boosting step (low, so all shapes grow together).
    leaves_per_step : leaves of the tiny tree each step adds to a one-feature term (2 or 3).
    max_rounds : most rounds over all features per bag.
    n_iter_no_change : rounds without improvement on the held-out rows before a bag stops.
    tol : an improvement counts only if it lowers the held-out log-loss by this share (relative).
    validation_fraction : share of rows each bag holds out for early stopping.
    bags : number of bags; terms are bag means, spread bands their standard deviation.
    bag_fraction : share of the non-held-out rows each bag fits on (1.0 = all of them); "auto" is 1.0 up to
        20,000 rows and 0.5 above, where half the rows already pin the shapes down and the fit is twice as fast.
    pairs : "auto" (pairs that pass a held-out interaction test, at most `max_pairs`), or a number of pairs.
    max_pairs : cap for "auto".
    pair_alpha : family-wise significance level of the "auto" test (Bonferroni over all pairs).
    max_bins : most bins per continuous feature (plus one for "not measured").
    pair_bins : most bins per feature on a pair grid.
    min_samples_leaf : fewest patients (sum of weights) in any leaf of any step.
    l2_regularization : added to every leaf's hessian: shrinks leaves with few patients toward zero.
    min_level_count : categorical levels seen fewer times are pooled into one shared bin.
    categorical_features : column names or indices to treat as categories (text columns always are).
    n_jobs : processes for the bags (None: all usable cores). The result does not depend on it.
    random_state : seed of the bags' splits and the pair test's halves.
    verbose : 1 prints progress (bags, rounds, pairs) on stderr.
    """

    def __init__(
        self,
        learning_rate=0.1,
        leaves_per_step=3,
        max_rounds=500,
        n_iter_no_change=15,
        tol=1e-3,
        validation_fraction=0.15,
        bags=8,
        bag_fraction="auto",
        pairs="auto",
        max_pairs=3,
        pair_alpha=0.01,
        max_bins=256,
        pair_bins=32,
        min_samples_leaf=5,
        l2_regularization=1.0,
        min_level_count=10,
        categorical_features=None,
        n_jobs=None,
        random_state=0,
        verbose=0,
    ):
        self.learning_rate = learning_rate
        self.leaves_per_step = leaves_per_step
        self.max_rounds = max_rounds
        self.n_iter_no_change = n_iter_no_change
        self.tol = tol
        self.validation_fraction = validation_fraction
        self.bags = bags
        self.bag_fraction = bag_fraction
        self.pairs = pairs
        self.max_pairs = max_pairs
        self.pair_alpha = pair_alpha
        self.max_bins = max_bins
        self.pair_bins = pair_bins
        self.min_samples_leaf = min_samples_leaf
        self.l2_regularization = l2_regularization
        self.min_level_count = min_level_count
        self.categorical_features = categorical_features
        self.n_jobs = n_jobs
        self.random_state = random_state
        self.verbose = verbose

    # -- inputs ------------------------------------------------------------------------------------
    def _columns(self, X, reset: bool) -> list[np.ndarray]:
        """One array per column: float (NaN = not measured) or object (level text, None = not measured)."""
        if hasattr(X, "iloc") and hasattr(X, "columns"):
            validate_data(self, X, reset=reset, skip_check_array=True)
            if not reset and X.shape[1] != self.n_features_in_:
                raise ValueError(f"X has {X.shape[1]} features, but {type(self).__name__} is expecting {self.n_features_in_} features as input.")
            names = [str(c) for c in X.columns]
            raw = [X.iloc[:, j] for j in range(X.shape[1])]
            textual = [not (pd.api.types.is_numeric_dtype(col.dtype) or pd.api.types.is_bool_dtype(col.dtype)) for col in raw]
            values = [col.to_numpy(dtype=object) if t else col.to_numpy(dtype=float) for col, t in zip(raw, textual)]
        else:
            arr = validate_data(self, X, reset=reset, dtype=None, ensure_all_finite=False, ensure_min_samples=1)
            if arr.dtype.kind in "biuf":
                arr = arr.astype(float)
            names = [f"x{j}" for j in range(arr.shape[1])]
            values = [arr[:, j] for j in range(arr.shape[1])]
            textual = [arr.dtype == object and any(isinstance(v, str) for v in col) for col in values]
        if reset:
            wanted = self.categorical_features or []
            if isinstance(wanted, (str, int)):
                wanted = [wanted]
            unknown = [c for c in wanted if not (isinstance(c, (int, np.integer)) and 0 <= c < len(names)) and c not in names]
            if unknown:
                raise ValueError(f"categorical_features: {unknown[0]!r} is not a column of X")
            self.feature_kinds_ = [
                "categorical" if (t or j in wanted or names[j] in wanted) else "numeric" for j, t in enumerate(textual)
            ]
            self.column_names_ = names
        out = []
        for j, col in enumerate(values):
            if self.feature_kinds_[j] == "categorical":
                out.append(_as_levels(col))
            else:
                try:
                    x = np.asarray(col, dtype=float)
                except ValueError:
                    raise ValueError(f"column {names[j]!r} holds text; name it in categorical_features") from None
                if np.isinf(x).any():
                    raise ValueError(f"column {names[j]!r} holds an infinite value; Input contains infinity")
                out.append(x)
        return out

    def _settings(self) -> BoostSettings:
        return BoostSettings(
            learning_rate=float(self.learning_rate),
            leaves=int(self.leaves_per_step),
            max_rounds=int(self.max_rounds),
            patience=int(self.n_iter_no_change),
            l2=float(self.l2_regularization),
            min_leaf=float(self.min_samples_leaf),
            validation_fraction=float(self.validation_fraction),
            tolerance=float(self.tol),
        )

    # -- fitting -----------------------------------------------------------------------------------
    def fit(self, X, y, sample_weight=None, engine=None):
        """Fit the additive model to X (patients x features) and the binary outcome y.

        `engine`: None fits in this process; a `scorecard.fit.dask_engine.DaskEngine` fits on its Dask
        cluster (the per-row work on the cluster's partitions) and gives the same model."""
        self._check_params()
        columns = self._columns(X, reset=True)
        y = column_or_1d(y, warn=True)
        if len(y) != len(columns[0]):
            raise ValueError(f"X has {len(columns[0])} rows but y has {len(y)}")
        check_classification_targets(y)
        self.classes_, y_index = np.unique(y, return_inverse=True)
        if len(self.classes_) != 2:
            raise ValueError(f"Only binary classification is supported: the outcome must have exactly 2 classes; found {len(self.classes_)} class(es): {self.classes_.tolist()[:5]}")
        target = y_index.astype(float)
        w = _check_sample_weight(sample_weight, columns[0].reshape(-1, 1) if columns[0].dtype != object else np.zeros((len(y), 1)), dtype=float)
        if np.any(w < 0) or np.sum(w) <= 0:
            raise ValueError("sample_weight must be non-negative with a positive sum")
        if engine is None:
            summaries = [ValueSummary.of(col, w) for col in columns]
            self._learn_bins(summaries)
            table = TableInMemory([b.codes(col) for b, col in zip(self.bins_, columns)], target, w, self.n_jobs)
            return self._fit_table(table, summaries, _fingerprint(self.column_names_, columns, target, w))
        with engine.table(columns, target, w) as cluster:
            summaries = cluster.summaries()
            self._learn_bins(summaries)
            table = cluster.coded(self.bins_)
            return self._fit_table(table, summaries, _fingerprint(self.column_names_, columns, target, w))

    def _learn_bins(self, summaries) -> None:
        self.bins_ = [
            categorical_bins(name, summary, int(self.min_level_count)) if kind == "categorical"
            else numeric_bins(name, summary, int(self.max_bins))
            for name, kind, summary in zip(self.column_names_, self.feature_kinds_, summaries)
        ]

    def _fit_table(self, table, summaries, fingerprint: str):
        """Everything after the bins, on a table of bin codes (in memory or on a cluster)."""
        target, w = table.outcome(), table.weights()
        counts = table.slot_weights([b.n_slots for b in self.bins_])
        coarse = [coarse_bins(b, cnt, int(self.pair_bins)) for b, cnt in zip(self.bins_, counts)]
        self.pair_maps_ = [m for m, _ in coarse]
        self.pair_edges_ = [e for _, e in coarse]
        progress = (lambda msg: print(msg, file=sys.stderr, flush=True)) if self.verbose else None
        terms = fit_additive_terms(
            table,
            n_slots=[b.n_slots for b in self.bins_],
            ordered=[b.kind != "categorical" for b in self.bins_],
            coarse_maps=self.pair_maps_,
            settings=self._settings(),
            n_bags=int(self.bags),
            seed=int(self.random_state or 0),
            pairs=self.pairs,
            max_pairs=int(self.max_pairs),
            alpha=float(self.pair_alpha),
            bag_fraction=self._bag_fraction(len(target)),
            progress=progress,
            names=self.column_names_,
        )
        self.intercept_ = terms.intercept
        self.shapes_ = terms.mains
        self.shape_spread_ = terms.main_spread
        self.slot_weight_ = terms.slot_weight
        self.pairs_ = terms.pairs
        self.pair_scores_ = terms.pair_grids
        self.pair_spread_ = terms.pair_spread
        self.pair_weight_ = terms.pair_weight
        self.pair_ranking_ = [(self.column_names_[s.first], self.column_names_[s.second], s.gain, s.p_value) for s in terms.ranking]
        self.fit_report_ = {k: v for k, v in terms.report.items() if not k.startswith("oob")}
        self.fit_report_["rows"] = int(len(target))
        self.fit_report_["events"] = float(np.sum(w * target))
        oob = terms.report["oob_rows"]
        if oob.any() and len(np.unique(target[oob])) == 2:
            from sklearn.metrics import log_loss, roc_auc_score

            f = terms.report["oob_logodds"][oob]
            self.fit_report_["out_of_bag_auc"] = float(roc_auc_score(target[oob], f, sample_weight=w[oob]))
            self.fit_report_["out_of_bag_log_loss"] = float(log_loss(target[oob], 1 / (1 + np.exp(-f)), sample_weight=w[oob], labels=[0, 1]))
            self.fit_report_["out_of_bag_rows"] = int(oob.sum())
        self.level_weight_ = [summary.weight.copy() if b.kind == "categorical" else None for b, summary in zip(self.bins_, summaries)]
        self.ranges_ = [_range(summary) if kind == "numeric" else None for kind, summary in zip(self.feature_kinds_, summaries)]
        self.decimals_ = [_decimals(summary.values) if kind == "numeric" else 0 for kind, summary in zip(self.feature_kinds_, summaries)]
        self.data_fingerprint_ = fingerprint
        return self

    def _bag_fraction(self, rows: int) -> float:
        if self.bag_fraction == "auto":
            return 1.0 if rows <= 20_000 else 0.5
        return float(self.bag_fraction)

    def _check_params(self) -> None:
        if not (isinstance(self.pairs, (int, np.integer)) and self.pairs >= 0) and self.pairs != "auto":
            raise ValueError(f"pairs must be 'auto' or a non-negative integer, got {self.pairs!r}")
        if self.leaves_per_step not in (2, 3):
            raise ValueError(f"leaves_per_step must be 2 or 3, got {self.leaves_per_step!r}")
        if not 0 < self.learning_rate <= 1:
            raise ValueError(f"learning_rate must be in (0, 1], got {self.learning_rate!r}")
        if int(self.bags) < 1:
            raise ValueError(f"bags must be at least 1, got {self.bags!r}")
        if not 0 <= self.validation_fraction < 1:
            raise ValueError(f"validation_fraction must be in [0, 1), got {self.validation_fraction!r}")
        if self.bag_fraction != "auto" and not (isinstance(self.bag_fraction, (int, float)) and 0 < self.bag_fraction <= 1):
            raise ValueError(f"bag_fraction must be in (0, 1], got {self.bag_fraction!r}")
        if int(self.max_bins) < 2 or int(self.pair_bins) < 2:
            raise ValueError("max_bins and pair_bins must be at least 2")

    # -- prediction --------------------------------------------------------------------------------
    def decision_function(self, X) -> np.ndarray:
        """Log-odds of the event for every row (unknown categorical levels add 0, the average)."""
        check_is_fitted(self)
        columns = self._columns(X, reset=False)
        codes = [b.codes(col) for b, col in zip(self.bins_, columns)]
        unseen = [c == UNSEEN for c in codes]
        shapes = [np.append(s, 0.0) for s in self.shapes_]  # index -1 (UNSEEN) reads the appended 0
        f = logodds_of(self.intercept_, shapes, codes)
        for lay, grid in zip(self.pairs_, self.pair_scores_):
            safe = [np.where(u, b.missing_code, c) for u, b, c in zip(unseen, self.bins_, codes)]
            f += np.append(grid.ravel(), 0.0)[pair_code(lay, safe)]
        return f

    def predict_proba(self, X) -> np.ndarray:
        f = self.decision_function(X)
        p = 1.0 / (1.0 + np.exp(-f))
        return np.column_stack([1.0 - p, p])

    def predict(self, X) -> np.ndarray:
        check_is_fitted(self)
        return self.classes_[(self.decision_function(X) > 0).astype(int)]

    # -- export ------------------------------------------------------------------------------------
    def to_model(self, **kwargs):
        """The fitted model as a model document (`AdditiveModel`); see `scorecard.fit.export.model_document`."""
        from scorecard.fit.export import model_document

        check_is_fitted(self)
        return model_document(self, **kwargs)

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = True
        tags.classifier_tags.multi_class = False
        return tags


def _as_levels(col) -> np.ndarray:
    """Level names as stripped text (a whole number written without '.0'), None where not measured.
    Each distinct value is converted once (pandas.factorize), so a long column costs one hashing pass."""
    codes, distinct = pd.factorize(pd.Series(np.asarray(col, dtype=object)), use_na_sentinel=True)
    names = [_level_name(v) for v in distinct]
    return np.array(names + [None], dtype=object)[codes]


def _level_name(value) -> str | None:
    if isinstance(value, (float, np.floating)) and float(value).is_integer():
        return str(int(value))
    text = str(value).strip()
    return text or None


def _range(summary: ValueSummary) -> dict | None:
    if len(summary.values) == 0:
        return None
    return {
        "min": float(summary.values[0]),
        "max": float(summary.values[-1]),
        "p01": summary.quantile(0.01),
        "p99": summary.quantile(0.99),
    }


def _decimals(distinct: np.ndarray, most: int = 4) -> int:
    """Fewest decimals that write every distinct training value exactly (at most `most`)."""
    for d in range(most + 1):
        scaled = distinct * 10**d
        if np.all(np.abs(scaled - np.round(scaled)) <= 1e-6 * np.maximum(1.0, np.abs(scaled))):
            return d
    return most


def _fingerprint(names, columns, y, w) -> str:
    """SHA-256 of the training data as the fit saw it (names, values, outcome, weights)."""
    digest = hashlib.sha256()
    for name, col in zip(names, columns):
        digest.update(name.encode("utf-8") + b"\x1e")
        if col.dtype == object:
            digest.update("\x1f".join("\x00" if v is None else v for v in col).encode("utf-8"))
        else:
            digest.update(np.ascontiguousarray(col, dtype="<f8").tobytes())
    digest.update(np.ascontiguousarray(y, dtype="<f8").tobytes())
    digest.update(np.ascontiguousarray(w, dtype="<f8").tobytes())
    return digest.hexdigest()
