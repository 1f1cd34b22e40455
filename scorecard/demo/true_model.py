"""The demo's true additive model, written as a model document the way a fitter would report it.

What the true model contains: the generator's log-odds of delirium given the recorded features, exactly
(`scorecard.demo.truth.raw_logodds`), rewritten as
- one step term per continuous feature with one bin per recorded value (edges half-way between recorded
  values, so "round half up to the display precision, then look up" gives the same score);
- categorical and flag terms, and a `geriatric_review` flag term whose scores are 0 (no causal effect; its
  protective look in the data comes from a hidden routine, see `scorecard.demo.cohort`);
- with the pair: an `age x cognition` pair term, purified so that its population-weighted row and column
  means are 0, its averages moved into the age and cognition terms;
- every term centred to population mean 0 under the generator's exact population, the constants moved
  into the intercept.
Bin counts are the expected number of patients per bin in a population of REFERENCE_ROWS patients (the true
model has no training sample).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from scorecard.demo import population as pop
from scorecard.demo import truth
from scorecard.model.document import AdditiveModel, model_from_dict

PAIR_TERM = "age x cognition"
REFERENCE_ROWS = 10_000
GENERATOR_VERSION = "1"

OUTCOME_TEXT = {
    "event": "Delirium within 5 days after hip-fracture surgery",
    "horizon": "5 days after the operation",
    "population": "Adults aged 60 or over having surgery for a hip fracture",
    "score_at": "once the operation is scheduled, before surgery (time to surgery: hours from admission to the planned start)",
}
# recorded in completed units, as a ward records them (age in completed years: 79.6 counts as 79)
COMPLETED_UNITS = ("age",)

# name, label, unit, decimals, kind, missing policy, declared direction
FEATURE_INFO = [
    ("age", "Age", "years", 0, "continuous", "error", "increasing"),
    ("cognition", "Cognitive screen score (0–10)", "", 0, "continuous", "error", "decreasing"),
    ("sodium", "Sodium", "mmol/L", 0, "continuous", "error", None),
    ("haemoglobin", "Haemoglobin", "g/L", 0, "continuous", "error", "decreasing"),
    ("hours_to_surgery", "Time from admission to surgery", "hours", 0, "continuous", "error", "increasing"),
    ("medicines", "Number of regular medicines", "", 0, "continuous", "error", "increasing"),
    ("albumin", "Albumin", "g/L", 0, "continuous", "score", "decreasing"),
    ("temperature", "Temperature", "°C", 1, "continuous", "error", None),
    ("anaesthesia", "Anaesthesia", "", 0, "categorical", "error", None),
    ("residence", "Lives (before admission)", "", 0, "categorical", "error", None),
    ("prior_delirium", "Delirium before", "", 0, "flag", "error", None),
    ("hearing_impairment", "Hearing impairment", "", 0, "flag", "error", None),
    ("geriatric_review", "Reviewed by the older-people's team before the operation", "", 0, "flag", "average", None),
]


def purify_pair(grid: np.ndarray, weights: np.ndarray, tol: float = 1e-14, max_rounds: int = 10_000):
    """Split a two-feature grid into a pure interaction plus one-feature parts.

    Finds g*, r, c with grid[i, j] = g*[i, j] + r[i] + c[j] such that every weighted row mean and every
    weighted column mean of g* is 0 (weights = the joint population probability of cell (i, j)). This is the
    weighted functional-ANOVA purification of Lengerich, Tan, Chang, Hooker and Caruana, "Purifying
    Interaction Effects with the Functional ANOVA", AISTATS 2020 (from memory): alternately move row means into
    r and column means into c until both vanish; each pass is an orthogonal projection in the weighted L2
    space, so the alternation converges to the projection on the intersection.

    Returns (g*, r, c); r and c are not centred (the caller centres each one-feature term).
    """
    g = np.array(grid, dtype=float)
    w = np.asarray(weights, dtype=float)
    row_w, col_w = w.sum(axis=1), w.sum(axis=0)
    r = np.zeros(g.shape[0])
    c = np.zeros(g.shape[1])
    for _ in range(max_rounds):
        row_mean = (w * g).sum(axis=1) / row_w
        g -= row_mean[:, None]
        r += row_mean
        col_mean = (w * g).sum(axis=0) / col_w
        g -= col_mean[None, :]
        c += col_mean
        if max(np.abs(row_mean).max(), np.abs(col_mean).max()) < tol:
            break
    return g, r, c


def _edges(values: np.ndarray, decimals: int) -> list[float]:
    """Half-way between neighbouring recorded values, at one more decimal than displayed."""
    mids = (values[:-1] + values[1:]) / 2.0
    return [round(float(m), decimals + 1) for m in mids]


def _training_range(values: np.ndarray, probs: np.ndarray) -> dict[str, float]:
    return {
        "min": float(values[0]),
        "max": float(values[-1]),
        "p01": pop.quantile(values, probs, 0.01),
        "p99": pop.quantile(values, probs, 0.99),
    }


@lru_cache(maxsize=2)
def _true_model_document(interaction: bool) -> dict:
    raw: dict[str, np.ndarray] = {}  # score per recorded value (or level), before centring
    probs: dict[str, np.ndarray] = {}
    for name, *_ in FEATURE_INFO:
        table = pop.TABLES.get(name)
        if table is None:  # geriatric_review: a flag whose effect is nil
            raw[name] = truth.RAW_SHAPES[name](np.array([0, 1]))
            continue
        raw[name] = truth.RAW_SHAPES[name](table.values)
        probs[name] = table.marginal()

    pair = None
    if interaction:
        weights = pop.joint_age("cognition")
        grid = truth.age_cognition(pop.AGES[:, None], pop.COGNITION[None, :])
        pure, to_age, to_cognition = purify_pair(grid, weights)
        raw["age"] = raw["age"] + to_age
        raw["cognition"] = raw["cognition"] + to_cognition
        pair = (pure, weights)

    review_share = _review_share(interaction)
    intercept = truth.BASELINE[interaction]
    features, terms = [], []
    for name, label, unit, decimals, kind, missing, direction in FEATURE_INFO:
        feature = {"name": name, "label": label, "kind": kind, "unit": unit, "decimals": decimals, "missing": missing,
                   "role": "care_process" if name == "geriatric_review" else "measurement"}
        if direction:
            feature["direction"] = direction
        if name in COMPLETED_UNITS:
            feature["reading"] = "completed"
        scores = raw[name]
        if name == "geriatric_review":
            p = np.array([1 - review_share, review_share])
        else:
            p = probs[name]
        term = {"kind": kind, "name": name, "feature": name}
        if name == "albumin":
            measured = 1.0 - pop.ALBUMIN_NOT_MEASURED
            mean = measured * float(p @ scores) + pop.ALBUMIN_NOT_MEASURED * truth.ALBUMIN_NOT_MEASURED_RAW
            term["missing_score"] = truth.ALBUMIN_NOT_MEASURED_RAW - mean
            term["missing_count"] = pop.ALBUMIN_NOT_MEASURED * REFERENCE_ROWS
            counts = measured * p * REFERENCE_ROWS
        else:
            mean = float(p @ scores)
            counts = p * REFERENCE_ROWS
        intercept += mean
        term["scores"] = scores - mean
        term["counts"] = counts
        values = pop.TABLES[name].values if name in pop.TABLES else None
        if kind == "continuous":
            feature["training_range"] = _training_range(values, p)
            term.update(shape="step", edges=_edges(values, decimals))
        elif kind == "categorical":
            feature["levels"] = list(values)
            term.update(levels=list(values), unseen="error")
        features.append(feature)
        terms.append(term)

    if pair is not None:
        pure, weights = pair
        terms.append({
            "kind": "pair",
            "name": PAIR_TERM,
            "features": ["age", "cognition"],
            "axes": [{"edges": _edges(pop.AGES, 0)}, {"edges": _edges(pop.COGNITION, 0)}],
            "scores": pure,
            "counts": weights * REFERENCE_ROWS,
        })

    doc = {
        "format_version": 1,
        "document": "scorecard-model",
        "name": "demo-delirium-true" + ("" if interaction else "-additive"),
        "version": GENERATOR_VERSION,
        "outcome": dict(OUTCOME_TEXT),
        "link": "logit",
        "intercept": intercept,
        "features": features,
        "terms": terms,
        "invented_data": True,
        "provenance": {
            "source": "invented: the true model of scorecard's demo generator (scorecard.demo), not fitted to any data",
            "generator_version": GENERATOR_VERSION,
            "interaction": interaction,
            "population": "the generator's exact discrete population (scorecard.demo.population); every term has "
                          "population mean 0 and the pair has population row and column means 0",
            "counts": f"expected patients per bin in a population of {REFERENCE_ROWS} (no training sample)",
            "geriatric_review": "no causal effect (scores 0); it looks protective in generated data only because a "
                                "hidden delirium-prevention routine, not recorded, both lowers risk and makes the "
                                "review more likely",
        },
    }
    # through the document layer once, so numpy values become plain JSON numbers and the result is validated
    return model_from_dict(_plain(doc), source="demo true model").to_dict()


def _review_share(interaction: bool) -> float:
    """P(review) in the population: from P(routine | delirium) and the population event rate."""
    from scorecard.demo import TRUE_EVENT_RATE

    rate = TRUE_EVENT_RATE[interaction]
    routine = pop.ROUTINE_IF_DELIRIUM * rate + pop.ROUTINE_IF_NO_DELIRIUM * (1 - rate)
    return pop.REVIEW_IF_ROUTINE * routine + pop.REVIEW_IF_NO_ROUTINE * (1 - routine)


def _plain(value):
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return _plain(value.tolist())
    if isinstance(value, np.generic):
        return value.item()
    return value


def true_model(interaction: bool = True) -> AdditiveModel:
    """The true additive model of the demo generator as a valid model document (a fresh copy each call)."""
    return model_from_dict(_true_model_document(bool(interaction)), source="demo true model")


def true_shape(feature: str, interaction: bool = True):
    """A function mapping values to the true, centred log-odds contribution of one term.

    `feature` is a feature name (its one-feature term) or PAIR_TERM (a function of age and cognition, only
    with the interaction). The function equals the true model's term exactly: a value is scored by the bin it
    falls in (so values between recorded values round half up), values beyond the recorded range score as the
    end bin, and a not-measured albumin (NaN) scores the not-measured score.
    """
    model = true_model(interaction)
    names = [t.name for t in model.terms]
    if feature not in names:
        raise KeyError(f"{feature!r} is not a term of the demo's true model; terms: {', '.join(names)}")
    term = model.term(feature)
    scores = np.asarray(term.scores, dtype=float)
    if term.kind == "pair":
        age_edges = np.asarray(term.axes[0]["edges"])
        cog_edges = np.asarray(term.axes[1]["edges"])

        def pair_shape(age, cognition):
            i = np.searchsorted(age_edges, np.asarray(age, dtype=float), side="right")
            j = np.searchsorted(cog_edges, np.asarray(cognition, dtype=float), side="right")
            return scores[i, j]

        return pair_shape
    if term.kind == "continuous":
        edges = np.asarray(term.edges)
        missing = np.nan if term.missing_score is None else term.missing_score

        def continuous_shape(x):
            x = np.asarray(x, dtype=float)
            out = scores[np.searchsorted(edges, np.nan_to_num(x, nan=0.0), side="right")]
            return np.where(np.isnan(x), missing, out)

        return continuous_shape
    if term.kind == "categorical":
        lookup = dict(zip(term.levels, scores))

        def level_shape(x):
            levels = np.asarray(x, dtype=object)
            scored = np.array([lookup[v] for v in levels.ravel()], dtype=float).reshape(levels.shape)
            return scored if scored.ndim else float(scored)

        return level_shape

    def flag_shape(x):
        return scores[np.asarray(x, dtype=float).astype(np.int64)]

    return flag_shape

