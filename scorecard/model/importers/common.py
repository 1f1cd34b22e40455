"""Pieces every importer shares: names, the outcome block, file provenance, reading numbers, and centring terms on a cohort."""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard import __version__
from scorecard.errors import UserError
from scorecard.jsondoc import file_sha256
from scorecard.model.document import AdditiveModel, Term
from scorecard.model.predict import _Evaluator, feature_values

# what regression software calls the constant: R "(Intercept)", statsmodels "const", others "intercept"
INTERCEPT_NAMES = frozenset({"(intercept)", "intercept", "const", "constant", "(constant)"})
NAME_PATTERN = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
NOT_STATED = "not stated"


def is_intercept(text: str) -> bool:
    return text.strip().lower() in INTERCEPT_NAMES


def is_feature_name(text: str) -> bool:
    return bool(NAME_PATTERN.match(text))


def safe_feature_name(text: str) -> str:
    """A column name turned into a feature name (letters, digits, _), e.g. 'mean radius' -> 'mean_radius'."""
    name = re.sub(r"[^A-Za-z0-9_]+", "_", str(text).strip()).strip("_") or "feature"
    return f"_{name}" if name[0].isdigit() else name


def outcome_block(event: str | None, horizon: str | None, population: str | None) -> dict[str, str]:
    """The outcome as printed on the sheet; anything not given says so rather than guessing."""
    return {
        "event": (event or "").strip() or NOT_STATED,
        "horizon": (horizon or "").strip() or NOT_STATED,
        "population": (population or "").strip() or NOT_STATED,
    }


def file_provenance(path: str | Path) -> dict[str, str]:
    """File name (not the full path, so the same file gives the same document anywhere) and its SHA-256."""
    return {"file": Path(path).name, "file_sha256": file_sha256(path)}


def parse_number(text: str, where: str, what: str, *, finite_hint: str = "") -> float:
    """A table cell read as a finite number; `finite_hint` ends the message for inf/nan (e.g. how to say open-ended)."""
    try:
        value = float(text)
    except ValueError:
        raise UserError(f"{where}: {what} {text!r} is not a number; write it with digits and a decimal point") from None
    if not math.isfinite(value):
        raise UserError(f"{where}: {what} {text!r} must be a finite number{finite_hint}")
    return value


def importer_stamp() -> str:
    return f"scorecard {__version__}"


def decimals_of(*texts: str) -> int:
    """Display decimals implied by how numbers were written ('35.5' -> 1), at most 6."""
    best = 0
    for t in texts:
        t = t.strip().lower()
        if "e" in t:
            continue
        if "." in t:
            best = max(best, len(t.split(".", 1)[1]))
    return min(best, 6)


def shift_term(term: Term, amount: float) -> None:
    """Subtract `amount` from every score of a term (and its not-measured score), in place."""
    if term.kind == "pair":
        term.scores = [[float(v) - amount for v in row] for row in term.scores]
    else:
        term.scores = [float(v) - amount for v in term.scores]
    if term.missing_score is not None:
        term.missing_score = float(term.missing_score) - amount


def centre_terms(model: AdditiveModel, frame: pd.DataFrame) -> dict[str, float]:
    """Shift each term so its mean over the measured patients in `frame` is 0; the intercept absorbs the shift.

    Predictions for measured values do not change (common practice for additive models: centred terms make
    the intercept the population baseline). Returns the mean removed from each term.
    """
    removed: dict[str, float] = {}
    for term in model.terms:
        measured = np.ones(len(frame), dtype=bool)
        for name in term.feature_names:
            vals = feature_values(frame, model.feature(name))
            measured &= np.array([v is not None for v in vals]) if vals.dtype == object else ~np.isnan(vals)
        if not measured.any():
            raise UserError(f"{frame.attrs.get('source', 'data')}: no patient has every value term {term.name!r} needs; cannot centre it")
        part = frame.loc[measured]
        part.attrs.update(frame.attrs)
        single = AdditiveModel(model.name, model.version, model.outcome, 0.0, model.features, [term])
        mean = float(np.mean(_Evaluator(single, part).contribution(term)))
        shift_term(term, mean)
        model.intercept = float(model.intercept) + mean
        removed[term.name] = mean
    return removed
