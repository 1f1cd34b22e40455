"""Writing a patient table in pieces: CSV or Parquet (by the output's suffix), whole or absent.

The streaming verbs (predict, score) hand over one chunk of rows at a time; the file is written beside its
final name and renamed when the last chunk is in (`jsondoc.atomic_output`), so a failure half-way leaves
nothing behind and never a half-written output. Parquet gets one row group per chunk, its schema fixed by the
first chunk (a later chunk whose column is all empty is cast to it).
"""

from __future__ import annotations

import os

import pandas as pd

from scorecard.jsondoc import atomic_output
from scorecard.tabular import is_parquet


class TableWriter:
    """`with TableWriter(path, protect) as out: out.write_frame(frame)` (Parquet) or `out.write_text(csv)`."""

    def __init__(self, path: str | os.PathLike, protect: tuple[str | os.PathLike, ...] = ()):
        self.path = path
        self.parquet = is_parquet(path)
        self._context = atomic_output(path, protect, text=not self.parquet)  # CSV may go to standard output
        self._writer = None
        self._handle = None
        self._schema = None
        self.rows = 0

    def __enter__(self) -> "TableWriter":
        self._tmp = self._context.__enter__()
        if not self.parquet:
            self._handle = open(self._tmp, "w", encoding="utf-8", newline="")
        return self

    def write_text(self, text: str) -> None:
        """A CSV piece, the header included in the first (the caller makes the text)."""
        self._handle.write(text)

    def write_frame(self, frame) -> None:
        """A chunk of rows (a DataFrame or an Arrow table) as one Parquet row group."""
        import pyarrow as pa
        import pyarrow.parquet as pq

        table = frame if isinstance(frame, pa.Table) else pa.Table.from_pandas(frame, preserve_index=False)
        if self._writer is None:
            fields = [pa.field(f.name, pa.string() if pa.types.is_null(f.type) else f.type) for f in table.schema]
            self._schema = pa.schema(fields)
            self._writer = pq.ParquetWriter(self._tmp, self._schema)
        self._writer.write_table(table.cast(self._schema))
        self.rows += len(frame)

    def __exit__(self, kind, value, trace) -> bool:
        try:
            if self._writer is not None:
                self._writer.close()
            if self._handle is not None:
                self._handle.close()
        finally:
            self._context.__exit__(kind, value, trace)  # renames the file, or removes it on an error
        return False
