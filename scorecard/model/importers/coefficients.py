"""Import a logistic regression written as a coefficient table (CSV).

The table (full description in docs/model-document.md, "Coefficient table"):

    term,coefficient,min,max,label,unit,decimals,kind
    (intercept),-4.1,,,,,,
    age,0.045,60,102,Age,years,0,
    residence=own_home,0,,,Residence before admission,,,
    residence=care_home,0.62,,,,,,
    prior_delirium,1.1,,,Previous delirium,,,

- one intercept row (`(intercept)`, `intercept` or `const`);
- a continuous term needs `min` and `max`: the range it is trusted over. It becomes a linear shape with knots
  at the two ends, so inside the range it equals coefficient x value exactly, and beyond it the score stays
  at the end value (the sheet's open-ended end rows);
- `feature=level` rows are the one-hot columns of one categorical feature; list every level, the reference
  level with coefficient 0;
- a term without `min`/`max` is a flag (0/1, no/yes): score 0 when absent, the coefficient when present;
- `kind` (continuous, flag) may be given to say so explicitly; other columns (standard error, p-value, ...)
  are ignored;
- `not_measured` (continuous and flag terms) is the term's log-odds contribution when the value is missing,
  as a missing-indicator regression gives it (indicator coefficient + coefficient x fill-in value). Without
  it, a missing value is refused at prediction time: a regression has no score for it.

The imported terms are not centred unless a cohort is given (then each term's mean over it is moved into the
intercept; predictions do not change).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel, Feature, Term, model_from_dict
from scorecard.model.importers.common import (
    centre_terms,
    decimals_of,
    file_provenance,
    importer_stamp,
    is_feature_name,
    is_intercept,
    outcome_block,
    parse_number,
)
from scorecard.tabular import read_csv

REQUIRED_COLUMNS = ("term", "coefficient")
KINDS = ("continuous", "flag", "categorical")


class _Row:
    """One table row with its position for error messages."""

    def __init__(self, source: str, index: int, cells: dict[str, str]):
        self.where = f"{source}: row {index + 1}"
        self.cells = cells

    def get(self, column: str) -> str:
        return (self.cells.get(column) or "").strip()


def read_coefficient_table(path: str | Path) -> list[_Row]:
    frame = read_csv(path, what="coefficient table")
    frame.columns = [c.strip().lower() for c in frame.columns]
    for col in REQUIRED_COLUMNS:
        if col not in frame.columns:
            raise UserError(f"{path}: column {col!r} is missing; a coefficient table needs columns term and coefficient")
    return [_Row(str(path), i, rec) for i, rec in enumerate(frame.to_dict("records"))]


def import_coefficient_table(
    path: str | Path,
    *,
    name: str | None = None,
    version: str = "1",
    event: str | None = None,
    horizon: str | None = None,
    population: str | None = None,
    centre_on: pd.DataFrame | None = None,
) -> AdditiveModel:
    """Build a model document from a logistic regression's coefficient table (see the module docstring)."""
    rows = read_coefficient_table(path)
    intercept: float | None = None
    seen_terms: dict[str, str] = {}
    continuous: dict[str, dict] = {}
    flags: dict[str, dict] = {}
    categorical: dict[str, dict] = {}
    order: list[str] = []  # features in table order

    for row in rows:
        term = row.get("term")
        if not term:
            raise UserError(f"{row.where}: column term is empty; name the term or delete the row")
        if term in seen_terms:
            raise UserError(f"{row.where}: term {term!r} already appears in {seen_terms[term]}; give each term once")
        seen_terms[term] = row.where.rsplit(": ", 1)[1]
        coef_text = row.get("coefficient")
        if not coef_text:
            raise UserError(f"{row.where}: coefficient of {term!r} is empty; give a number (0 for a reference level)")
        coef = parse_number(coef_text, row.where, "coefficient")
        kind = row.get("kind").lower()
        if kind and kind not in KINDS:
            raise UserError(f"{row.where}: kind {kind!r} is not one of {', '.join(KINDS)}; leave it empty to infer it")
        if is_intercept(term):
            if intercept is not None:
                raise UserError(f"{row.where}: a second intercept row; give the intercept once")
            intercept = coef
            continue
        low, high = row.get("min"), row.get("max")
        if "=" in term:
            feature, _, level = (p.strip() for p in term.partition("="))
            _check_name(feature, row)
            if not level:
                raise UserError(f"{row.where}: term {term!r} has no level after '='; write feature=level")
            if kind and kind != "categorical":
                raise UserError(f"{row.where}: term {term!r} is written feature=level, so its kind is categorical, not {kind}")
            if low or high:
                raise UserError(f"{row.where}: min/max are for continuous terms; leave them empty for level {term!r}")
            if row.get("not_measured"):
                raise UserError(f"{row.where}: not_measured is for continuous and flag terms; a categorical term has no not-measured score here")
            if feature in continuous or feature in flags:
                raise UserError(f"{row.where}: feature {feature!r} is already a {'continuous' if feature in continuous else 'flag'} term; a feature is one kind")
            entry = categorical.setdefault(feature, {"levels": [], "scores": [], "label": "", "where": row.where})
            if feature not in order:
                order.append(feature)
            entry["levels"].append(level)
            entry["scores"].append(coef)
            entry["label"] = entry["label"] or row.get("label")
            continue
        _check_name(term, row)
        if term in categorical:
            raise UserError(f"{row.where}: feature {term!r} already has feature=level rows; a feature is one kind")
        order.append(term)
        is_continuous = kind == "continuous" or (not kind and (low or high))
        not_measured = parse_number(row.get("not_measured"), row.where, "not_measured") if row.get("not_measured") else None
        if kind == "categorical":
            raise UserError(f"{row.where}: a categorical term is written feature=level, one row per level")
        if not is_continuous:
            if low or high:
                raise UserError(f"{row.where}: flag {term!r} takes no min/max; remove them or set kind to continuous")
            flags[term] = {"coef": coef, "label": row.get("label"), "missing": not_measured}
            continue
        if not low or not high:
            raise UserError(
                f"{row.where}: continuous term {term!r} needs both min and max (the range the model is trusted over)"
            )
        lo, hi = parse_number(low, row.where, "min"), parse_number(high, row.where, "max")
        if not lo < hi:
            raise UserError(f"{row.where}: min {low} must be below max {high} for term {term!r}")
        decimals_text = row.get("decimals")
        if decimals_text:
            if not decimals_text.isdigit() or int(decimals_text) > 6:
                raise UserError(f"{row.where}: decimals {decimals_text!r} must be a whole number from 0 to 6")
            decimals = int(decimals_text)
        else:
            decimals = decimals_of(low, high)
        continuous[term] = {
            "coef": coef, "min": lo, "max": hi, "label": row.get("label"), "unit": row.get("unit"), "decimals": decimals,
            "missing": not_measured,
        }

    if intercept is None:
        raise UserError(f"{path}: no intercept row; add a row with term '(intercept)' and its coefficient")
    if not order:
        raise UserError(f"{path}: no terms besides the intercept; a model needs at least one feature")
    for feature, entry in categorical.items():
        if len(entry["levels"]) < 2:
            raise UserError(
                f"{entry['where']}: categorical feature {feature!r} lists one level; list every level, "
                "the reference level with coefficient 0"
            )

    features: list[Feature] = []
    terms: list[Term] = []
    for feature in order:
        if feature in continuous:
            c = continuous[feature]
            features.append(Feature(
                name=feature, label=c["label"] or feature, kind="continuous", unit=c["unit"], decimals=c["decimals"],
                training_range={"min": c["min"], "max": c["max"]}, missing=_policy(c["missing"]),
            ))
            terms.append(Term(
                kind="continuous", name=feature, feature=feature, shape="linear",
                edges=[c["min"], c["max"]], scores=[c["coef"] * c["min"], c["coef"] * c["max"]], missing_score=c["missing"],
            ))
        elif feature in flags:
            f = flags[feature]
            features.append(Feature(name=feature, label=f["label"] or feature, kind="flag", missing=_policy(f["missing"])))
            terms.append(Term(kind="flag", name=feature, feature=feature, scores=[0.0, f["coef"]], missing_score=f["missing"]))
        else:
            c = categorical[feature]
            features.append(Feature(name=feature, label=c["label"] or feature, kind="categorical", levels=list(c["levels"]), missing="error"))
            terms.append(Term(kind="categorical", name=feature, feature=feature, levels=list(c["levels"]), scores=list(c["scores"]), unseen="error"))

    provenance = {
        "source": "coefficient table (logistic regression)",
        **file_provenance(path),
        "imported_by": importer_stamp(),
        "centred": False,
    }
    model = AdditiveModel(
        name=name or Path(path).name.split(".")[0],
        version=version,
        outcome=outcome_block(event, horizon, population),
        intercept=intercept,
        features=features,
        terms=terms,
        provenance=provenance,
    )
    if centre_on is not None:
        centre_terms(model, centre_on)
        provenance["centred"] = True
        provenance["centred_on"] = Path(centre_on.attrs.get("source", "data")).name
    return model_from_dict(model.to_dict(), source=f"{path} (imported)")


def _policy(not_measured: float | None) -> str:
    return "error" if not_measured is None else "score"


def _check_name(name: str, row: _Row) -> None:
    if not is_feature_name(name):
        raise UserError(
            f"{row.where}: {name!r} is not usable as a feature name; use letters, digits and _ "
            "(it must match the cohort column)"
        )
