"""Reading patient tables: CSV or Parquet files into DataFrames, and columns into the values a model expects.

Every stage that reads a cohort goes through here so that a bad cell is reported the same way everywhere:
one line naming the file, the row (1-based data row, the header is not counted) and the column. A Parquet
file keeps the types of its schema (numbers stay numbers, text stays text) and then meets the same per-column
rules, so a wrong type, a missing column or a damaged file gets the same one-line error as in a CSV.
`iter_table` reads either kind in chunks of rows (Parquet batches, CSV blocks) for the streaming verbs; each
chunk carries its first row's position in the file, so errors still name the file's own row.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.csv_cells import unescape, unescape_column
from scorecard.errors import UserError, shown
from scorecard.suggest import did_you_mean

MISSING_TOKENS = frozenset({"", "na", "n/a", "nan", "null", "none", "missing", "not measured", "."})
FLAG_TRUE = frozenset({"1", "1.0", "true", "yes", "y", "t"})
FLAG_FALSE = frozenset({"0", "0.0", "false", "no", "n", "f"})


PARQUET_SUFFIXES = (".parquet", ".pq")
DEFAULT_CHUNK_ROWS = 250_000


def is_parquet(path: str | Path) -> bool:
    return Path(path).suffix.lower() in PARQUET_SUFFIXES


def read_table(path: str | Path, what: str = "cohort") -> pd.DataFrame:
    """A patient table from a .csv or a .parquet file (by its suffix), checked the same way."""
    return read_parquet(path, what) if is_parquet(path) else read_csv(path, what)


def _existing_file(path: str | Path, what: str, kind: str) -> Path:
    p = Path(path)
    if not p.exists():
        raise UserError(f"{p}: no such file; check the path of the {what} {kind}")
    if p.is_dir():
        raise UserError(f"{p}: is a folder, expected a {what} {kind} file")
    return p


def read_csv(path: str | Path, what: str = "cohort") -> pd.DataFrame:
    """Read a CSV as text cells (parsing happens per feature, so errors can name the cell). Cells that
    scorecard.csv_cells made inert for spreadsheets are read back as the text they hold."""
    p = _existing_file(path, what, "CSV")
    with _csv_read_errors(p, what):
        frame = pd.read_csv(p, dtype=str, keep_default_na=False, skipinitialspace=True)
    return _checked_header(_unescaped(frame), p, what)


def _unescaped(frame: pd.DataFrame) -> pd.DataFrame:
    # a cell written with a protective apostrophe (scorecard.csv_cells: "'=SUM(1)") reads as the text it holds
    for name in frame.columns:
        frame[name] = unescape_column(frame[name])
    frame.columns = [unescape(str(c)) for c in frame.columns]
    return frame


def _checked_header(frame: pd.DataFrame, p: Path, what: str) -> pd.DataFrame:
    header = [str(c) for c in frame.columns]
    if len(header) == 1:
        # spreadsheet exports in many locales separate with ';' (or a tab): say so instead of "column missing"
        for mark, name in ((";", "semicolons"), ("\t", "tabs")):
            if mark in header[0]:
                raise UserError(f"{p}: the header is separated by {name}, not commas; save it as comma-separated "
                                f"CSV (UTF-8), or replace the {name} with commas")
    dupes = sorted({c.split(".")[0] for c in header if _is_pandas_dupe(c, header)})
    if dupes:
        raise UserError(f"{p}: column {dupes[0]!r} appears more than once in the header; rename or remove the copy")
    if len(frame) == 0:
        raise UserError(f"{p}: has a header but no data rows; expected at least one patient")
    stripped = [c.strip() for c in header]
    seen: dict[str, str] = {}
    for original, name in zip(header, stripped):
        if name in seen:
            raise UserError(f"{p}: columns {seen[name]!r} and {original!r} are the same name once spaces are removed; "
                            "rename or remove one")
        seen[name] = original
    frame.columns = stripped
    frame.attrs["source"] = str(p)
    return frame


# -- Parquet ---------------------------------------------------------------------------------------

def _parquet_file(p: Path, what: str):
    """The opened Parquet file, or the one-line error a damaged or foreign file gets."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        return pq.ParquetFile(p)
    except (pa.ArrowException, OSError, ValueError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise UserError(f"{p}: not a readable Parquet file ({reason}); write the {what} again, or give it as CSV") from None


def _parquet_names(handle, p: Path, what: str) -> list[str]:
    names = [str(n) for n in handle.schema_arrow.names]
    if not names:
        raise UserError(f"{p}: the Parquet file has no columns; expected a {what} with one column per field")
    seen: dict[str, str] = {}
    for original in names:
        name = original.strip()
        if name in seen:
            same = "appears more than once" if seen[name] == original else f"and {seen[name]!r} are the same name once spaces are removed"
            raise UserError(f"{p}: column {original!r} {same}; rename or remove the copy")
        seen[name] = original
    return names


def _frame_from_arrow(table, p: Path, names: list[str]) -> pd.DataFrame:
    """Arrow columns as pandas columns the per-feature rules read: numbers as float/int, flags as bool, text
    (also dictionary-encoded text) as objects with None for null; a type no rule reads (dates, lists) as text."""
    import pyarrow as pa
    import pyarrow.compute as pc

    columns = {}
    for name, column in zip(names, table.columns):
        kind = column.type
        if pa.types.is_dictionary(kind):
            column = column.cast(kind.value_type)
            kind = kind.value_type
        if pa.types.is_integer(kind) or pa.types.is_floating(kind) or pa.types.is_boolean(kind):
            series = column.to_pandas()
            if pa.types.is_boolean(kind) and column.null_count:
                series = series.map({True: 1.0, False: 0.0}).astype(float)  # a yes/no with not measured
        elif pa.types.is_string(kind) or pa.types.is_large_string(kind):
            series = pd.Series(column.to_numpy(zero_copy_only=False), dtype=object)
        else:
            try:
                text = pc.cast(column, pa.string())
            except (pa.ArrowException, NotImplementedError):
                text = pa.chunked_array([pa.array([None if v is None else str(v) for v in column.to_pylist()], pa.string())])
            series = pd.Series(text.to_numpy(zero_copy_only=False), dtype=object)
        columns[name.strip()] = series.reset_index(drop=True)
    frame = pd.DataFrame(columns)
    frame.attrs["source"] = str(p)
    return frame


def _open_parquet(path: str | Path, what: str):
    """(path, opened file, column names) of a Parquet table with at least one row, or its one-line error."""
    p = _existing_file(path, what, "Parquet")
    handle = _parquet_file(p, what)
    names = _parquet_names(handle, p, what)
    if handle.metadata.num_rows == 0:
        raise UserError(f"{p}: has columns but no data rows; expected at least one patient")
    return p, handle, names


def _unreadable_parquet(p: Path, exc: Exception, what: str) -> UserError:
    return UserError(f"{p}: not a readable Parquet file ({str(exc).splitlines()[0]}); write the {what} again, or give it as CSV")


@contextlib.contextmanager
def _csv_read_errors(p: Path, what: str):
    """pandas' errors while reading a CSV as the one line a user can act on."""
    try:
        yield
    except pd.errors.EmptyDataError:
        raise UserError(f"{p}: file is empty; expected a {what} CSV with a header row") from None
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise UserError(f"{p}: not a readable CSV ({str(exc).splitlines()[0]}); save it as comma-separated UTF-8") from None


def read_parquet(path: str | Path, what: str = "cohort") -> pd.DataFrame:
    """A whole Parquet file as a DataFrame (see `_frame_from_arrow` for the column types)."""
    import pyarrow as pa

    p, handle, names = _open_parquet(path, what)
    try:
        table = handle.read()
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise _unreadable_parquet(p, exc, what) from None
    return _frame_from_arrow(table, p, names)


def table_columns(path: str | Path, what: str = "cohort") -> list[str]:
    """The column names of a .csv or .parquet table (stripped), read without its rows."""
    if is_parquet(path):
        p = _existing_file(path, what, "Parquet")
        return [n.strip() for n in _parquet_names(_parquet_file(p, what), p, what)]
    return list(next(iter_table(path, 1, what)).columns)


def iter_table(path: str | Path, chunk_rows: int = DEFAULT_CHUNK_ROWS, what: str = "cohort") -> Iterator[pd.DataFrame]:
    """The table in chunks of at most `chunk_rows` rows, checked as `read_table` checks the whole; each chunk's
    attrs["first_row"] is its first row's position in the file (errors name file rows)."""
    import pyarrow as pa

    if chunk_rows < 1:
        raise ValueError("chunk_rows must be at least 1")
    first = 0
    if is_parquet(path):
        p, handle, names = _open_parquet(path, what)
        try:
            for batch in handle.iter_batches(batch_size=chunk_rows):
                frame = _frame_from_arrow(pa.Table.from_batches([batch]), p, names)
                frame.attrs["first_row"] = first
                first += len(frame)
                yield frame
        except (pa.ArrowException, OSError) as exc:
            raise _unreadable_parquet(p, exc, what) from None
        return
    p = _existing_file(path, what, "CSV")
    with _csv_read_errors(p, what):
        reader = pd.read_csv(p, dtype=str, keep_default_na=False, skipinitialspace=True, chunksize=chunk_rows)
        for chunk in reader:
            frame = _checked_header(_unescaped(chunk), p, what) if first == 0 else _renamed_like(_unescaped(chunk), p)
            frame.attrs["first_row"] = first
            first += len(frame)
            yield frame
    if first == 0:
        raise UserError(f"{p}: has a header but no data rows; expected at least one patient")


def _renamed_like(chunk: pd.DataFrame, p: Path) -> pd.DataFrame:
    chunk.columns = [str(c).strip() for c in chunk.columns]
    chunk.attrs["source"] = str(p)
    return chunk


def _is_pandas_dupe(name: str, header: list[str]) -> bool:
    # pandas renames a repeated column "x" to "x.1"; only report it when "x" itself is present
    base, dot, suffix = name.rpartition(".")
    return bool(dot) and suffix.isdigit() and base in header


def source_of(frame: pd.DataFrame) -> str:
    return frame.attrs.get("source", "data")


def data_row(frame: pd.DataFrame, position: int) -> int:
    """The file's 1-based data row of `position` in `frame`; a slice of one patient keeps the file's numbering
    through attrs["first_row"] (its position in the file), so an error names the row the user can find."""
    return int(frame.attrs.get("first_row", 0)) + position + 1


def _distinct(values: pd.Series) -> tuple[np.ndarray, pd.Series]:
    """Codes of each cell among the distinct cells (-1 for NaN/None) and the distinct cells: text rules are
    then applied once per distinct value, which keeps a million-row cohort to a second or so."""
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    return codes, pd.Series(np.asarray(uniques, dtype=object), dtype=object)


def _per_cell(codes: np.ndarray, per_unique: np.ndarray, fill) -> np.ndarray:
    out = np.asarray(per_unique)[np.clip(codes, 0, None)] if len(per_unique) else np.full(len(codes), fill)
    return np.where(codes < 0, fill, out)


def is_missing_text(values: pd.Series) -> np.ndarray:
    codes, uniques = _distinct(values)
    missing = uniques.astype(str).str.strip().str.lower().isin(MISSING_TOKENS).to_numpy()
    return _per_cell(codes, missing, True).astype(bool)


def require_columns(frame: pd.DataFrame, names: list[str], what: str = "the model") -> None:
    missing = [n for n in names if n not in frame.columns]
    if missing:
        raise UserError(
            f"{source_of(frame)}: column {missing[0]!r} needed by {what} is missing"
            f"{f' (and {len(missing) - 1} more)' if len(missing) > 1 else ''}"
            f"{did_you_mean(missing[0], [c for c in frame.columns if c not in names])}; add it (empty cells mean not measured)"
        )


def numeric_column(frame: pd.DataFrame, name: str) -> np.ndarray:
    """Float values with NaN for not measured; text that is not a number is an error naming the row."""
    col = frame[name]
    if pd.api.types.is_numeric_dtype(col) and not pd.api.types.is_bool_dtype(col):
        values = col.to_numpy(dtype=float)
        bad = ~np.isfinite(values) & ~np.isnan(values)
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise UserError(f"{source_of(frame)}: row {data_row(frame, row)}, column {name!r}: infinite value; give a measurement or leave it empty")
        return values
    codes, uniques = _distinct(col)
    missing_u = uniques.astype(str).str.strip().str.lower().isin(MISSING_TOKENS).to_numpy()
    parsed_u = pd.to_numeric(uniques.where(~missing_u, None), errors="coerce").to_numpy(dtype=float)
    missing = _per_cell(codes, missing_u, True).astype(bool)
    parsed = _per_cell(codes, parsed_u, np.nan).astype(float)
    bad = np.isnan(parsed) & ~missing
    bad |= np.isinf(parsed)
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise UserError(
            f"{source_of(frame)}: row {data_row(frame, row)}, column {name!r}: {shown(col.iloc[row], quote=repr)} is not a number; "
            "use digits with a decimal point, or leave the cell empty for not measured"
        )
    return parsed


def flag_column(frame: pd.DataFrame, name: str) -> np.ndarray:
    """1.0 / 0.0 / NaN from 1/0, yes/no, true/false (any case)."""
    col = frame[name]
    if pd.api.types.is_bool_dtype(col):
        return col.to_numpy(dtype=float)
    codes, uniques = _distinct(col)
    text = uniques.astype(str).str.strip().str.lower()
    values_u = np.full(len(uniques), np.nan)
    values_u[text.isin(FLAG_TRUE).to_numpy()] = 1.0
    values_u[text.isin(FLAG_FALSE).to_numpy()] = 0.0
    missing = _per_cell(codes, text.isin(MISSING_TOKENS).to_numpy(), True).astype(bool)
    values = _per_cell(codes, values_u, np.nan).astype(float)
    bad = np.isnan(values) & ~missing
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise UserError(
            f"{source_of(frame)}: row {data_row(frame, row)}, column {name!r}: {col.iloc[row]!r} is not a yes/no value; "
            "use 1/0, yes/no or true/false, or leave it empty for not measured"
        )
    return values


def category_column(frame: pd.DataFrame, name: str, levels: list[str] | tuple[str, ...] = ()) -> np.ndarray:
    """Object array of stripped level names, None for not measured.

    A cell that spells one of the feature's own `levels` is that level even if it looks like a
    not-measured token (a level may be called "none").
    """
    codes, uniques = _distinct(frame[name])
    text = uniques.astype(str).str.strip()
    missing_u = text.str.lower().isin(MISSING_TOKENS).to_numpy() & ~text.isin(list(levels)).to_numpy()
    levels = np.where(missing_u, None, text.to_numpy(dtype=object)) if len(uniques) else np.empty(0, dtype=object)
    return _per_cell(codes, levels, None).astype(object)
