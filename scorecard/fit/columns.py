"""Typing the columns of a patient table for fitting: the 0/1 outcome, and each feature as numbers, a yes/no
flag or categories; and the two warnings a fitter needs about a column (it cannot inform the model, or it looks
like an identifier). Errors are one line naming the file, the row and the column."""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.errors import UserError
from scorecard.model.document import MAX_MEASUREMENT
from scorecard.tabular import FLAG_FALSE, FLAG_TRUE, data_row, flag_column, is_missing_text, numeric_column, source_of

MIN_EVENTS = 10  # below this no shape can be told from noise (common practice: >= 10 events per variable is already generous)


def outcome_values(frame: pd.DataFrame, column: str, source: str) -> np.ndarray:
    """0/1 outcome from 1/0, yes/no or true/false; anything else names the values found."""
    col = frame[column]
    missing = is_missing_text(col)
    if missing.any():
        row = int(np.flatnonzero(missing)[0])
        raise UserError(f"{source}: row {row + 1}, column {column!r}: the outcome is empty; every patient needs 0 or 1")
    text = col.astype(str).str.strip().str.lower()
    known = text.isin(FLAG_TRUE | FLAG_FALSE)
    if not known.all():
        found = sorted(set(col.astype(str).str.strip()))
        shown = ", ".join(repr(v) for v in found[:6]) + (f" and {len(found) - 6} more" if len(found) > 6 else "")
        raise UserError(f"{source}: outcome column {column!r} must be binary (0/1, yes/no); found values {shown}")
    y = flag_column(frame, column)
    events = int(y.sum())
    if events == 0 or events == len(y):
        only = "1 (event)" if events else "0 (no event)"
        raise UserError(f"{source}: outcome column {column!r} has only one class, {only}, in all {len(y)} rows; a risk model needs both")
    if events < MIN_EVENTS:
        raise UserError(f"{source}: outcome column {column!r} has {events} events; at least {MIN_EVENTS} are needed to fit a model")
    return y


def feature_column(frame: pd.DataFrame, name: str, categorical: bool) -> tuple[np.ndarray, str]:
    """(values, kind): numbers (NaN = not measured), 0/1 from yes/no text, or level text (None = missing).

    A column is read as categories when named with --categorical or when none of its cells is a number; a
    column that is mostly numbers with some text is an error naming the first bad row."""
    col = frame[name]
    missing = is_missing_text(col)
    text = col.astype(str).str.strip()
    if categorical:
        levels = text.to_numpy(dtype=object)
        levels[missing] = None
        return levels, "categorical"
    present = text[~missing]
    lowered = present.str.lower()
    if len(present) and lowered.isin(FLAG_TRUE | FLAG_FALSE).all() and not pd.to_numeric(present, errors="coerce").notna().all():
        return flag_column(frame, name), "flag"
    if len(present) and pd.to_numeric(present, errors="coerce").isna().all():
        levels = text.to_numpy(dtype=object)
        levels[missing] = None
        return levels, "categorical"
    values = numeric_column(frame, name)
    # the model document refuses a training range beyond MAX_MEASUREMENT; say so now, not after the whole fit
    beyond = np.abs(np.nan_to_num(values)) > MAX_MEASUREMENT
    if beyond.any():
        row = int(np.flatnonzero(beyond)[0])
        raise UserError(f"{source_of(frame)}: row {data_row(frame, row)}, column {name!r}: {values[row]:g} is beyond "
                        f"±{MAX_MEASUREMENT:g} for a measurement; check the units, or leave the cell empty if not measured")
    return values, "numeric"


def uninformative_reason(values: np.ndarray) -> str | None:
    """Why a column cannot inform the model (all missing, or one value and nothing missing), or None."""
    if values.dtype == object:
        present = [v for v in values if v is not None]
        n_missing = len(values) - len(present)
        distinct = len(set(present))
    else:
        present = values[~np.isnan(values)]
        n_missing = len(values) - len(present)
        distinct = len(np.unique(present))
    if distinct == 0:
        return "every value is missing"
    if distinct == 1 and n_missing == 0:
        return "it has the same value for every patient"
    return None


def looks_like_identifier(values: np.ndarray) -> bool:
    """Whole numbers or text, all different, in a table of more than 50 patients."""
    if len(values) <= 50:
        return False
    if values.dtype == object:
        present = [v for v in values if v is not None]
        return len(present) == len(values) and len(set(present)) == len(present)
    if np.isnan(values).any() or not np.all(values == np.round(values)):
        return False
    return len(np.unique(values)) == len(values)
