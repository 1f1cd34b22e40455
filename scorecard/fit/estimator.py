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
from sklearn.utils.validation import check_is_fitted, column_or_1d, validate_data

from scorecard.fit import defaults
from scorecard.fit.bagging import TableInMemory, fit_additive_terms, logodds_of, pair_code
from scorecard.fit.binning import UNSEEN, ValueSummary, bin_positions, categorical_bins, coarse_bins, numeric_bins
from scorecard.fit.boosting import BoostSettings


class AdditiveRiskClassifier(ClassifierMixin, BaseEstimator):
    """A generalized additive risk model with a few pairwise terms, fitted by cyclic gradient boosting.

    Parameters (defaults and why: `scorecard.fit.defaults`; "auto" means chosen from the number of rows)
    ----------
    learning_rate : scale of every boosting step (low, so all shapes grow together).
    leaves_per_step : leaves of the tiny tree each step adds to a one-feature term (2 or 3).
    max_rounds : most rounds over all features per repeat.
    patience : rounds without a better held-out deviance before a repeat stops.
    min_improvement : a round counts as better only if it lowers the held-out deviance by this share.
    held_out_share : share of rows each repeat holds out for early stopping; "auto" by rows.
    repeats : number of repeat fits, each on its own held-out split; terms are their mean, spread bands
        their standard deviation; "auto" by rows.
    repeat_share : share of the non-held-out rows each repeat fits on (1.0 = all of them); "auto" by rows.
    pairs : "auto" (pairs that pass a held-out interaction test and gain at least `pair_min_gain`, at most
        `max_pairs`), or a number of pairs.
    max_pairs : cap for "auto".
    pair_significance : family-wise significance level of the "auto" test (Bonferroni over all pairs).
    pair_min_gain : held-out log-likelihood gain per patient (nats) a pair needs for "auto".
    bins : most bins per continuous feature (plus one for "not measured").
    pair_bins : most bins per feature on a pair grid.
    min_leaf_patients : fewest patients (sum of weights) in any leaf of any step.
    shrinkage : added to every leaf's hessian (L2 on leaf values): shrinks leaves with few patients toward
        zero; "auto" lets small cohorts choose it by held-out deviance (see `scorecard.fit.defaults`).
    min_level_count : categorical levels seen fewer times are pooled into one shared bin.
    categorical_features : column names or indices to treat as categories (text columns always are).
    n_jobs : processes for the repeats (None: all usable cores). The result does not depend on it.
    random_state : seed of the repeats' splits and the pair test's halves.
    verbose : 1 prints progress (repeats, rounds, pairs) on stderr.
    """

    def __init__(
        self,
        learning_rate=defaults.LEARNING_RATE,
        leaves_per_step=defaults.LEAVES_PER_STEP,
        max_rounds=defaults.MAX_ROUNDS,
        patience=defaults.PATIENCE,
        min_improvement=defaults.MIN_IMPROVEMENT,
        held_out_share="auto",
        repeats="auto",
        repeat_share="auto",
        pairs="auto",
        max_pairs=defaults.MAX_PAIRS,
        pair_significance=defaults.PAIR_SIGNIFICANCE,
        pair_min_gain=defaults.PAIR_MIN_GAIN,
        bins=defaults.BINS,
        pair_bins=defaults.PAIR_BINS,
        min_leaf_patients=defaults.MIN_LEAF_PATIENTS,
        shrinkage="auto",
        min_level_count=defaults.MIN_LEVEL_COUNT,
        categorical_features=None,
        n_jobs=None,
        random_state=0,
        verbose=0,
    ):
        self.learning_rate = learning_rate
        self.leaves_per_step = leaves_per_step
        self.max_rounds = max_rounds
        self.patience = patience
        self.min_improvement = min_improvement
        self.held_out_share = held_out_share
        self.repeats = repeats
        self.repeat_share = repeat_share
        self.pairs = pairs
        self.max_pairs = max_pairs
        self.pair_significance = pair_significance
        self.pair_min_gain = pair_min_gain
        self.bins = bins
        self.pair_bins = pair_bins
        self.min_leaf_patients = min_leaf_patients
        self.shrinkage = shrinkage
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

    def resolved_settings(self, rows: int) -> dict:
        """Every size-dependent setting as this fit uses it on `rows` patients ("auto" replaced by its value;
        shrinkage stays "auto" where the data will choose it)."""
        held_out_share = defaults.held_out_share_for(rows) if self.held_out_share == "auto" else float(self.held_out_share)
        shrinkage = self.shrinkage
        if shrinkage == "auto":  # without held-out rows there is no deviance to choose by
            shrinkage = "auto" if rows < defaults.CHOOSE_SHRINKAGE_BELOW and held_out_share > 0 else defaults.SHRINKAGE
        return {
            "learning_rate": float(self.learning_rate),
            "held_out_share": held_out_share,
            "repeats": defaults.repeats_for(rows) if self.repeats == "auto" else int(self.repeats),
            "repeat_share": defaults.repeat_share_for(rows) if self.repeat_share == "auto" else float(self.repeat_share),
            "shrinkage": shrinkage if shrinkage == "auto" else float(shrinkage),
        }

    def _settings(self, resolved: dict) -> BoostSettings:
        return BoostSettings(
            learning_rate=resolved["learning_rate"],
            leaves=int(self.leaves_per_step),
            max_rounds=int(self.max_rounds),
            patience=int(self.patience),
            l2=defaults.SHRINKAGE if resolved["shrinkage"] == "auto" else resolved["shrinkage"],
            min_leaf=float(self.min_leaf_patients),
            held_out_share=resolved["held_out_share"],
            tolerance=float(self.min_improvement),
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
        w = _sample_weights(sample_weight, len(y))
        if np.any(w < 0) or np.sum(w) <= 0:
            raise ValueError("sample_weight must be non-negative and not every weight zero")
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
            else numeric_bins(name, summary, int(self.bins))
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
        resolved = self.resolved_settings(len(target))
        terms = fit_additive_terms(
            table,
            n_slots=[b.n_slots for b in self.bins_],
            ordered=[b.kind != "categorical" for b in self.bins_],
            coarse_maps=self.pair_maps_,
            settings=self._settings(resolved),
            shrinkage_choices=defaults.SHRINKAGE_CHOICES if resolved["shrinkage"] == "auto" else (),
            positions=[bin_positions(b, summary) for b, summary in zip(self.bins_, summaries)],
            try_lines=resolved["shrinkage"] == "auto",
            trial_repeats=defaults.SHRINKAGE_TRIAL_REPEATS,
            n_bags=resolved["repeats"],
            seed=int(self.random_state or 0),
            pairs=self.pairs,
            max_pairs=int(self.max_pairs),
            alpha=float(self.pair_significance),
            min_gain=float(self.pair_min_gain),
            bag_fraction=resolved["repeat_share"],
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
        self.pair_ranking_ = [(self.column_names_[s.first], self.column_names_[s.second], s.gain, s.p_value, s.held_out_gain)
                              for s in terms.ranking]
        self.fit_report_ = {k: v for k, v in terms.report.items() if not k.startswith("oob")}
        resolved["shrinkage"] = terms.report["shrinkage"]
        resolved["shapes"] = terms.report["shapes"]
        self.settings_used_ = resolved
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

    def _check_params(self) -> None:
        if not (isinstance(self.pairs, (int, np.integer)) and self.pairs >= 0) and self.pairs != "auto":
            raise ValueError(f"pairs must be 'auto' or a non-negative integer, got {self.pairs!r}")
        if self.leaves_per_step not in (2, 3):
            raise ValueError(f"leaves_per_step must be 2 or 3, got {self.leaves_per_step!r}")
        if not 0 < self.learning_rate <= 1:
            raise ValueError(f"learning_rate must be in (0, 1], got {self.learning_rate!r}")
        _auto_or_within("held_out_share", self.held_out_share, 0, 1, high_open=True)
        _auto_or_within("repeat_share", self.repeat_share, 0, 1, low_open=True)
        _auto_or_within("shrinkage", self.shrinkage, 0, np.inf)
        if self.repeats != "auto" and not (isinstance(self.repeats, (int, np.integer)) and self.repeats >= 1):
            raise ValueError(f"repeats must be 'auto' or at least 1, got {self.repeats!r}")
        if int(self.bins) < 2 or int(self.pair_bins) < 2:
            raise ValueError("bins and pair_bins must be at least 2")
        if not self.pair_min_gain >= 0:
            raise ValueError(f"pair_min_gain must be at least 0, got {self.pair_min_gain!r}")

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


def _auto_or_within(name: str, value, low: float, high: float, low_open: bool = False, high_open: bool = False) -> None:
    if value == "auto":
        return
    ok = isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool)
    if ok:
        ok = (value > low if low_open else value >= low) and (value < high if high_open else value <= high)
    if not ok:
        interval = f"{'(' if low_open else '['}{low}, {high}{')' if high_open else ']'}"
        raise ValueError(f"{name} must be 'auto' or in {interval}, got {value!r}")


def _sample_weights(sample_weight, n_rows: int) -> np.ndarray:
    """One finite float weight per row: None is 1 for every row, a number the same for every row (written here:
    scikit-learn's own helper for this is private)."""
    if sample_weight is None:
        return np.ones(n_rows)
    w = np.asarray(sample_weight, dtype=float)
    if w.ndim == 0:
        w = np.full(n_rows, float(w))
    elif w.ndim != 1 or len(w) != n_rows:
        raise ValueError(f"sample_weight has shape {w.shape}, expected ({n_rows},)")
    if not np.all(np.isfinite(w)):
        raise ValueError("sample_weight contains NaN or infinity")
    return w


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
