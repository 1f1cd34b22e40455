"""Writing CSV: the one home of how a cell is written, so every CSV the tool writes (predict, score, the
exercise key, the demo cohort) is safe to open in a spreadsheet and reads back through scorecard.tabular.

Two rules, both applied by `cell`:
- RFC 4180 quoting: a field holding a comma, a quote or a line break is quoted, inner quotes doubled (a field
  with spaces at its ends is quoted too, so that no reader trims them).
- Formula injection (OWASP, "CSV Injection"): a spreadsheet runs a cell starting with =, +, -, @, a tab or a
  carriage return as a formula (`=HYPERLINK(...)`, `=cmd|' /C calc'!A0`). Such a cell, when it is not a
  number, is written with a leading apostrophe inside quotes, as the OWASP page advises; the spreadsheet then
  shows it as text. A cell that already starts with apostrophes before such a character gets one more, so
  `unescape` (used by the reader) gives back exactly the text that was written.

Tables are written column by column (`csv_text`): a million patients take seconds, and a column with few
distinct texts (printed rows, risk) quotes each text once.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
# a plain decimal number (what a spreadsheet reads as a number, not a formula): -1.5, +2, .5, 1e-3
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\Z")


def _runs_as_formula(text: str) -> bool:
    """True when `text`, after any leading apostrophes, starts as a formula and is not a number."""
    body = text.lstrip("'")
    return body.startswith(FORMULA_STARTS) and not (body == text and _NUMBER.match(text))


def cell(text: str) -> str:
    """One CSV field for `text`: quoted where RFC 4180 needs it, formula-looking text made inert."""
    if _runs_as_formula(text):
        return "\"'" + text.replace('"', '""') + '"'
    if any(c in text for c in ',"\n\r') or text != text.strip():
        return '"' + text.replace('"', '""') + '"'
    return text


def unescape(text: str) -> str:
    """The text a field held before `cell` made it inert (the reader's side: a cell read back from a file
    this tool, or a careful spreadsheet export, wrote with a protective apostrophe)."""
    if text.startswith("'") and _runs_as_formula(text):
        return text[1:]
    return text


def unescape_column(values: pd.Series) -> pd.Series:
    """`unescape` on every text cell of a column; the column itself when no cell starts with an apostrophe
    (the common case costs one vectorised test)."""
    marked = values.str.startswith("'", na=False)
    if not marked.any():
        return values
    out = values.copy()
    out[marked] = values[marked].map(unescape)
    return out


def text_cells(values) -> np.ndarray:
    """A column of texts as CSV fields; each distinct text is made a field once."""
    series = pd.Series(values, dtype=object).astype(str)
    codes, uniques = pd.factorize(series)
    fields = np.array([cell(u) for u in uniques], dtype=object)
    return fields[codes] if len(fields) else np.array([], dtype=object)


def number_cells(values, fmt: str = "%.10g") -> np.ndarray:
    """A column of floats as CSV fields (`fmt`), empty for NaN (not measured)."""
    return np.array(["" if v != v else fmt % v for v in np.asarray(values, dtype=float).tolist()], dtype=object)


def frame_columns(frame: pd.DataFrame, fmt: str = "%.10g",
                  formats: dict[str, str] | None = None) -> list[tuple[list[str], np.ndarray]]:
    """(header, fields) per column of `frame`: integer columns as integers (empty when missing), float columns
    with `fmt` (or the column's own in `formats`), anything else as text."""
    columns = []
    for name in frame.columns:
        col = frame[name]
        if pd.api.types.is_bool_dtype(col):
            fields = np.where(col.to_numpy(dtype=bool), "1", "0").astype(object)
        elif pd.api.types.is_integer_dtype(col):
            missing = col.isna().to_numpy()
            fields = col.to_numpy(dtype=np.int64, na_value=0).astype(str).astype(object)
            fields[missing] = ""
        elif pd.api.types.is_float_dtype(col):
            fields = number_cells(col.to_numpy(dtype=float), (formats or {}).get(name, fmt))
        else:
            fields = text_cells(col.where(col.notna(), "").tolist())
        columns.append(([str(name)], fields))
    return columns


def csv_text(columns: list[tuple[list[str], np.ndarray]], header: bool = True) -> str:
    """The CSV file for (headers, fields) column groups; a group's fields may already join several columns
    with commas (each part made by `cell`). Headers go through `cell` here; header=False for a chunk of a
    streamed file after the first."""
    body = "\n".join(map(",".join, zip(*(fields for _, fields in columns))))
    body += "\n" if body else ""
    if not header:
        return body
    return ",".join(cell(name) for names, _ in columns for name in names) + "\n" + body


def frame_csv_text(frame: pd.DataFrame, fmt: str = "%.10g", formats: dict[str, str] | None = None,
                   header: bool = True) -> str:
    """`frame` as a safe CSV file (see the module's rules)."""
    return csv_text(frame_columns(frame, fmt, formats), header=header)
