"""Import an additive model written as a long-format shape table (CSV): one row per bin, level or
not-measured score. Full description in docs/model-document.md, "Shape table".

    feature,lower,upper,level,score,label,unit,decimals
    (intercept),,,,-1.6,,,
    sodium,,130,,0.55,Sodium,mmol/L,0
    sodium,130,135,,0.20,,,
    sodium,135,145,,0.00,,,
    sodium,145,,,0.40,,,
    sodium,,,not measured,0.10,,,
    residence,,,own_home,0.0,Residence before admission,,
    residence,,,care_home,0.5,,,
    prior_delirium,,,no,0.0,Previous delirium,,
    prior_delirium,,,yes,1.1,,,

- bins of a continuous feature cover [lower, upper): lower inclusive, upper exclusive. Each bin's lower must
  equal the previous bin's upper (no gap, no overlap). An empty `lower` on the first bin or an empty `upper`
  on the last means open-ended; a number there is the training range end (values beyond it still fall in
  that bin, and prediction reports them);
- `level` rows are categorical levels; a feature whose levels are exactly no/yes (or 0/1, false/true) is a
  flag;
- a row with `level` `not measured` gives the score for a missing value; without one, a missing value of
  that feature is refused at prediction time;
- one `(intercept)` row holds the baseline log-odds.
"""

from __future__ import annotations

import math
from pathlib import Path

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel, Feature, Term, model_from_dict
from scorecard.model.importers.common import (
    decimals_of,
    file_provenance,
    importer_stamp,
    is_feature_name,
    is_intercept,
    outcome_block,
    parse_number,
)
from scorecard.tabular import read_csv

REQUIRED_COLUMNS = ("feature", "lower", "upper", "score")
NOT_MEASURED = frozenset({"not measured", "(not measured)", "missing", "not_measured"})
_OPEN_ENDED = " (leave it empty for open-ended)"  # how to write a bin end without a number
FLAG_SPELLINGS = {"no": 0, "yes": 1, "0": 0, "1": 1, "false": 0, "true": 1, "absent": 0, "present": 1}


class _Feature:
    def __init__(self, name: str, where: str):
        self.name = name
        self.first_where = where
        self.bins: list[tuple[float | None, float | None, float, str, str, str]] = []  # lower, upper, score, where, ltext, utext
        self.levels: list[tuple[str, float, str]] = []  # level, score, where
        self.missing: tuple[float, str] | None = None
        self.label = ""
        self.unit = ""
        self.decimals: int | None = None


def import_shape_table(
    path: str | Path,
    *,
    name: str | None = None,
    version: str = "1",
    event: str | None = None,
    horizon: str | None = None,
    population: str | None = None,
) -> AdditiveModel:
    """Build a model document of step shapes, categorical and flag terms from a shape table."""
    frame = read_csv(path, what="shape table")
    frame.columns = [c.strip().lower() for c in frame.columns]
    for col in REQUIRED_COLUMNS:
        if col not in frame.columns:
            raise UserError(f"{path}: column {col!r} is missing; a shape table needs columns feature, lower, upper, score (and level)")
    intercept: float | None = None
    features: dict[str, _Feature] = {}
    for i, rec in enumerate(frame.to_dict("records")):
        where = f"{path}: row {i + 1}"
        cell = {k: (v or "").strip() for k, v in rec.items()}
        fname = cell["feature"]
        if not fname:
            raise UserError(f"{where}: column feature is empty; name the feature or delete the row")
        if not cell["score"]:
            raise UserError(f"{where}: score is empty; give the log-odds score of this row")
        score = parse_number(cell["score"], where, "score", finite_hint=_OPEN_ENDED)
        if is_intercept(fname):
            if intercept is not None:
                raise UserError(f"{where}: a second intercept row; give the intercept once")
            intercept = score
            continue
        if not is_feature_name(fname):
            raise UserError(f"{where}: {fname!r} is not usable as a feature name; use letters, digits and _ (it must match the cohort column)")
        feat = features.setdefault(fname, _Feature(fname, where))
        feat.label = feat.label or cell.get("label", "")
        feat.unit = feat.unit or cell.get("unit", "")
        if cell.get("decimals"):
            d = cell["decimals"]
            if not d.isdigit() or int(d) > 6:
                raise UserError(f"{where}: decimals {d!r} must be a whole number from 0 to 6")
            feat.decimals = int(d)
        level = cell.get("level", "")
        low, high = cell["lower"], cell["upper"]
        if level.lower() in NOT_MEASURED:
            if low or high:
                raise UserError(f"{where}: a not-measured row takes no lower/upper; leave them empty")
            if feat.missing is not None:
                raise UserError(f"{where}: feature {fname!r} already has a not-measured row ({feat.missing[1].rsplit(': ', 1)[1]})")
            feat.missing = (score, where)
            continue
        if level:
            if low or high:
                raise UserError(f"{where}: a row has a level and lower/upper; give a level (categorical) or a range (continuous), not both")
            if any(lv == level for lv, _, _ in feat.levels):
                raise UserError(f"{where}: level {level!r} of {fname!r} is listed twice")
            feat.levels.append((level, score, where))
            continue
        if not low and not high:
            raise UserError(f"{where}: give lower and/or upper for a bin, a level for a category, or level 'not measured'")
        lo = parse_number(low, where, "lower", finite_hint=_OPEN_ENDED) if low else None
        hi = parse_number(high, where, "upper", finite_hint=_OPEN_ENDED) if high else None
        if lo is not None and hi is not None and not lo < hi:
            raise UserError(f"{where}: lower {low} must be below upper {high}")
        feat.bins.append((lo, hi, score, where, low, high))

    if intercept is None:
        raise UserError(f"{path}: no intercept row; add a row with feature '(intercept)' and the baseline log-odds as score")
    if not features:
        raise UserError(f"{path}: no feature rows besides the intercept")

    model_features: list[Feature] = []
    terms: list[Term] = []
    for feat in features.values():
        if feat.bins and feat.levels:
            raise UserError(f"{feat.levels[0][2]}: feature {feat.name!r} has both bins and levels; a feature is continuous or categorical")
        if not feat.bins and not feat.levels:
            raise UserError(f"{feat.missing[1]}: feature {feat.name!r} has only a not-measured row; add its bins or levels")
        missing_policy = "score" if feat.missing else "error"
        missing_score = feat.missing[0] if feat.missing else None
        label = feat.label or feat.name
        if feat.bins:
            edges, scores, rng, decimals = _bins_to_step(feat)
            model_features.append(Feature(
                name=feat.name, label=label, kind="continuous", unit=feat.unit,
                decimals=feat.decimals if feat.decimals is not None else decimals,
                training_range=rng, missing=missing_policy,
            ))
            terms.append(Term(kind="continuous", name=feat.name, feature=feat.name, shape="step", edges=edges,
                              scores=scores, missing_score=missing_score))
            continue
        flag = _as_flag(feat)
        if flag is not None:
            model_features.append(Feature(name=feat.name, label=label, kind="flag", missing=missing_policy))
            terms.append(Term(kind="flag", name=feat.name, feature=feat.name, scores=flag, missing_score=missing_score))
            continue
        if len(feat.levels) < 2:
            raise UserError(f"{feat.levels[0][2]}: feature {feat.name!r} lists one level; list every level it can take")
        levels = [lv for lv, _, _ in feat.levels]
        model_features.append(Feature(name=feat.name, label=label, kind="categorical", levels=levels, missing=missing_policy))
        terms.append(Term(kind="categorical", name=feat.name, feature=feat.name, levels=levels,
                          scores=[s for _, s, _ in feat.levels], missing_score=missing_score, unseen="error"))

    model = AdditiveModel(
        name=name or Path(path).name.split(".")[0],
        version=version,
        outcome=outcome_block(event, horizon, population),
        intercept=intercept,
        features=model_features,
        terms=terms,
        provenance={"source": "shape table", **file_provenance(path), "imported_by": importer_stamp()},
    )
    return model_from_dict(model.to_dict(), source=f"{path} (imported)")


def _bins_to_step(feat: _Feature) -> tuple[list[float], list[float], dict | None, int]:
    """Sort the bins, refuse gaps and overlaps (naming the CSV row), and return interior edges and scores."""
    bins = sorted(feat.bins, key=lambda b: -math.inf if b[0] is None else b[0])
    for k, (lo, hi, _, where, _, _) in enumerate(bins):
        if lo is None and k > 0:
            raise UserError(f"{where}: only the first bin of {feat.name!r} may have an empty lower; {bins[0][3].rsplit(': ', 1)[1]} is also open below")
        if hi is None and k < len(bins) - 1:
            raise UserError(f"{where}: only the last bin of {feat.name!r} may have an empty upper (bins sorted by lower)")
        if k > 0:
            prev_hi, prev_where = bins[k - 1][1], bins[k - 1][3].rsplit(": ", 1)[1]
            if lo > prev_hi:
                raise UserError(f"{where}: gap in {feat.name!r}: this bin starts at {lo:g} but the bin in {prev_where} ends at {prev_hi:g}; make them meet")
            if lo < prev_hi:
                raise UserError(f"{where}: overlap in {feat.name!r}: this bin starts at {lo:g} but the bin in {prev_where} ends at {prev_hi:g}; make them meet")
    edges = [b[1] for b in bins[:-1]]
    scores = [b[2] for b in bins]
    first_lo, last_hi = bins[0][0], bins[-1][1]
    rng = {"min": first_lo, "max": last_hi} if first_lo is not None and last_hi is not None else None
    texts = [t for b in bins for t in (b[4], b[5]) if t]
    return edges, scores, rng, decimals_of(*texts)


def _as_flag(feat: _Feature) -> list[float] | None:
    spelled = {lv.lower(): s for lv, s, _ in feat.levels}
    if len(spelled) != 2 or not all(k in FLAG_SPELLINGS for k in spelled):
        return None
    by_value = {FLAG_SPELLINGS[k]: s for k, s in spelled.items()}
    if set(by_value) != {0, 1}:
        return None
    return [by_value[0], by_value[1]]  # flag scores are [absent, present]
