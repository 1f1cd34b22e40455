"""Writing a fitted `AdditiveRiskClassifier` as a model document (`AdditiveModel`).

The document holds exactly what the estimator predicts with: the same bin edges (midpoints between
adjacent distinct training values, or quantile cuts), the bag-mean scores, the bag spread per bin, the
training counts (sums of sample weights) per bin and the not-measured score. A feature with no missing
value in training gets the policy "error": a not-measured score learned from nobody is no score, so the
document refuses such a patient and the printed sheet says the measurement is needed, rather than
printing a "not measured" row nobody was ever scored on.
"""

from __future__ import annotations

import re

import numpy as np

from scorecard import __version__
from scorecard.model.document import FLAG_LEVELS, AdditiveModel, Feature, Term

METHOD = (
    "generalized additive model with pairwise interactions, fitted by cyclic gradient boosting of "
    "one-feature trees (Lou, Caruana & Gehrke, KDD 2012), bagged; pairs ranked by the FAST test (Lou, "
    "Caruana, Gehrke & Hooker, KDD 2013) and purified (Lengerich et al., AISTATS 2020)"
)


def safe_name(name: str, taken: set[str]) -> str:
    """A document-safe feature name ([A-Za-z_][A-Za-z0-9_]*), unique among `taken`."""
    base = re.sub(r"[^A-Za-z0-9_]+", "_", name.strip()).strip("_") or "feature"
    if base[0].isdigit():
        base = f"f_{base}"
    out, i = base, 2
    while out in taken:
        out, i = f"{base}_{i}", i + 1
    taken.add(out)
    return out


def model_document(
    est,
    name: str = "fitted additive risk model",
    version: str = "1",
    event: str = "event",
    horizon: str = "not stated",
    population: str = "not stated",
    labels: dict | None = None,
    units: dict | None = None,
    decimals: dict | None = None,
    flag_levels: dict | None = None,
    provenance: dict | None = None,
) -> AdditiveModel:
    """Build the model document of a fitted estimator. `labels`, `units`, `decimals` are keyed by column
    name; `provenance` is merged into the recorded provenance (e.g. the source file's fingerprint)."""
    labels, units, decimals = labels or {}, units or {}, decimals or {}
    taken: set[str] = set()
    names = [safe_name(n, taken) for n in est.column_names_]
    features, terms = [], []
    for j, (column, doc_name, bins) in enumerate(zip(est.column_names_, names, est.bins_)):
        if (bins.kind == "categorical" and not bins.levels) or (bins.kind == "continuous" and est.ranges_[j] is None):
            continue  # never measured in training: nothing to print
        scores = est.shapes_[j]
        spread = est.shape_spread_[j]
        weight = est.slot_weight_[j]
        n = bins.n_bins
        measured_missing = weight[n] > 0
        feature = Feature(
            name=doc_name,
            label=str(labels.get(column, column)),
            kind=bins.kind,
            unit=str(units.get(column, "")),
            decimals=int(decimals.get(column, est.decimals_[j])),
            missing="score" if measured_missing else "error",
        )
        term = Term(
            kind=bins.kind,
            name=doc_name,
            feature=doc_name,
            scores=[],
            missing_score=float(scores[n]) if measured_missing else None,
            missing_count=float(weight[n]),
        )
        if bins.kind == "continuous":
            feature.training_range = est.ranges_[j]
            term.shape = "step"
            term.edges = [float(e) for e in bins.edges]
            term.scores, term.spread, term.counts = scores[:n], spread[:n], weight[:n]
        elif bins.kind == "flag":
            term.scores, term.spread, term.counts = scores[:2], spread[:2], weight[:2]
        else:
            feature.levels = list(bins.levels)
            level_bin = bins.level_bin
            term.levels = list(bins.levels)
            term.scores = scores[level_bin]
            term.spread = spread[level_bin]
            term.counts = _level_counts(est, j)
            term.unseen = "average"
        features.append(feature)
        terms.append(term)
    for lay, grid, spread, weight in zip(est.pairs_, est.pair_scores_, est.pair_spread_, est.pair_weight_):
        axes, expand = [], []
        for feature_index, mapping in ((lay.first, lay.maps[0]), (lay.second, lay.maps[1])):
            bins = est.bins_[feature_index]
            if bins.kind == "continuous":
                axes.append({"edges": [float(e) for e in est.pair_edges_[feature_index]]})
                expand.append(np.arange(int(mapping.max()) + 1))
            elif bins.kind == "flag":
                axes.append({"levels": list(FLAG_LEVELS)})
                expand.append(np.arange(2))
            else:  # one grid cell per level; pooled rare levels repeat their shared cell
                axes.append({"levels": list(bins.levels)})
                expand.append(mapping[bins.level_bin])
        rows, cols = expand
        first, second = names[lay.first], names[lay.second]
        terms.append(
            Term(
                kind="pair",
                name=f"{first} x {second}",
                features=[first, second],
                axes=axes,
                scores=grid[np.ix_(rows, cols)],
                spread=spread[np.ix_(rows, cols)],
                counts=_pair_counts(weight, rows, cols),
                missing_score=0.0,
            )
        )
    record = {
        "method": METHOD,
        "software": f"scorecard {__version__}",
        "settings": _plain_settings(est.get_params()),
        "settings_used": _plain_settings(est.settings_used_),
        "data": {
            "fingerprint": est.data_fingerprint_,
            "rows": est.fit_report_["rows"],
            "events": est.fit_report_["events"],
            "columns": list(est.column_names_),
        },
        "validation": {
            k: _finite_or_none(est.fit_report_[k])
            for k in ("out_of_bag_auc", "out_of_bag_log_loss", "out_of_bag_rows", "held_out_log_loss", "rounds_one_feature",
                      "rounds_pairs", "shrinkage_held_out_log_loss", "line_plus_steps_held_out_log_loss")
            if k in est.fit_report_
        },
        "pair_ranking": [
            {"pair": f"{a} x {b}", "fast_gain": float(g), "held_out_p": float(p), "held_out_gain": float(d)}
            for a, b, g, p, d in est.pair_ranking_[:10]
        ],
    }
    record.update(provenance or {})
    return AdditiveModel(
        name=name,
        version=version,
        outcome={"event": event, "horizon": horizon, "population": population},
        intercept=float(est.intercept_),
        features=features,
        terms=terms,
        provenance=record,
    )


def _finite_or_none(value):
    """JSON has no NaN: a figure that could not be computed (no held-out rows) is written as null."""
    if isinstance(value, list):
        return [_finite_or_none(v) for v in value]
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value


def _level_counts(est, j: int) -> list[float]:
    """Training weight of every level, pooled levels counted separately."""
    return [float(c) for c in est.level_weight_[j]]


def _pair_counts(weight: np.ndarray, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
    """Cell counts on the document's grid; a pooled cell's count is shared evenly by its repeated levels
    so that the grid's counts still add up to the patients measured on both features."""
    row_rep = np.bincount(rows, minlength=weight.shape[0])[rows]
    col_rep = np.bincount(cols, minlength=weight.shape[1])[cols]
    return weight[np.ix_(rows, cols)] / np.outer(row_rep, col_rep)


def _plain_settings(params: dict) -> dict:
    out = {}
    for key, value in sorted(params.items()):
        if key in ("n_jobs", "verbose"):
            continue  # they change neither the model nor its bytes
        if isinstance(value, (np.integer,)):
            value = int(value)
        elif isinstance(value, (np.floating,)):
            value = float(value)
        elif isinstance(value, tuple):
            value = list(value)
        out[key] = value
    return out
