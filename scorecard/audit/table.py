"""The scored cohort as CSV columns (scorecard.csv_cells writes them), built so a million patients take seconds.

Printed texts (rows, risk) have only a few distinct values per column: each is quoted once and looked up.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import ScoredCohort, total_band_index
from scorecard.csv_cells import cell, number_cells, text_cells

__all__ = ["scored_columns"]


def scored_columns(scored: ScoredCohort, sheet: dict, keep: pd.DataFrame | None = None,
                   model_risk: np.ndarray | None = None) -> list[tuple[list[str], np.ndarray]]:
    """(headers, cells) per group of output columns: kept columns, then per term its printed row and points,
    then the total, the risk read from the conversion table (fraction and printed text) and the band, and the
    model's risk. Columns that depend on the same choice share one lookup (cells already joined by commas)."""
    columns: list[tuple[list[str], np.ndarray]] = []
    if keep is not None:
        for name in keep.columns:
            columns.append(([name], text_cells(keep[name].astype(str).tolist())))
    for t in scored.terms:
        cells = [f"{cell(text)},{int(p)}" for text, p in zip(t.texts, t.points)]
        columns.append(([f"row:{t.name}", f"points:{t.name}"], np.array(cells, dtype=object)[t.index]))
    first = int(scored.total.min())
    span = range(first, int(scored.total.max()) + 1)
    risk_by_total = {int(c["total"]): c for c in sheet["conversion"]}
    headers = ["total", "sheet_risk", "sheet_risk_text"] + (["band"] if scored.band is not None else [])
    cells = []
    for v in span:
        entry = risk_by_total[v]
        parts = [str(v), repr(float(entry["risk"])), cell(entry["text"])]
        if scored.band is not None:
            parts.append(cell(sheet["bands"][int(total_band_index(sheet, np.array([v]))[0])]["name"]))
        cells.append(",".join(parts))
    columns.append((headers, np.array(cells, dtype=object)[scored.total - first]))
    if model_risk is not None:
        columns.append((["model_risk"], number_cells(model_risk)))
        columns.append((["risk_difference"], number_cells(scored.risk - model_risk)))
    return columns


def scored_table(scored: ScoredCohort, sheet: dict, keep: pd.DataFrame | None = None,
                 model_risk: np.ndarray | None = None) -> pd.DataFrame:
    """The same columns as `scored_columns`, typed for a Parquet output: texts as text, points and totals as
    integers, risks as floats (full precision, where the CSV prints 10 significant digits)."""
    table: dict[str, object] = {}
    if keep is not None:
        for name in keep.columns:
            table[name] = keep[name].to_numpy()
    for t in scored.terms:
        table[f"row:{t.name}"] = np.asarray(t.texts, dtype=object)[t.index]
        table[f"points:{t.name}"] = t.points[t.index]
    risk_by_total = {int(c["total"]): c for c in sheet["conversion"]}
    first = int(scored.total.min())
    span = [risk_by_total[v] for v in range(first, int(scored.total.max()) + 1)]
    at = scored.total - first
    table["total"] = scored.total
    table["sheet_risk"] = np.array([float(e["risk"]) for e in span])[at]
    table["sheet_risk_text"] = np.array([e["text"] for e in span], dtype=object)[at]
    if scored.band is not None:
        table["band"] = np.array([b["name"] for b in sheet["bands"]], dtype=object)[scored.band]
    if model_risk is not None:
        table["model_risk"] = model_risk
        table["risk_difference"] = scored.risk - model_risk
    return pd.DataFrame(table)
