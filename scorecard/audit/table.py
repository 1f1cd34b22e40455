"""The scored cohort as a CSV table, written column by column so a million patients take seconds.

Printed texts (rows, risk) have only a few distinct values per column: each is quoted once and looked up.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import ScoredCohort, band_index


def _quote(text: str) -> str:
    """CSV quoting (RFC 4180): quote a field holding a comma, a quote or a line break; double inner quotes."""
    if any(c in text for c in ',"\n\r') or text != text.strip():
        return '"' + text.replace('"', '""') + '"'
    return text


def _numbers(values: np.ndarray, fmt: str = "%.10g") -> np.ndarray:
    return np.array([fmt % v for v in values.tolist()], dtype=object)


def scored_columns(scored: ScoredCohort, sheet: dict, keep: pd.DataFrame | None = None,
                   model_risk: np.ndarray | None = None) -> list[tuple[list[str], np.ndarray]]:
    """(headers, cells) per group of output columns: kept columns, then per term its printed row and points,
    then the total, the risk read from the conversion table (fraction and printed text) and the band, and the
    model's risk. Columns that depend on the same choice share one lookup (cells already joined by commas)."""
    columns: list[tuple[list[str], np.ndarray]] = []
    if keep is not None:
        for name in keep.columns:
            columns.append(([name], np.array([_quote(v) for v in keep[name].astype(str).tolist()], dtype=object)))
    for t in scored.terms:
        cells = [f"{_quote(text)},{int(p)}" for text, p in zip(t.texts, t.points)]
        columns.append(([f"row:{t.name}", f"points:{t.name}"], np.array(cells, dtype=object)[t.index]))
    first = int(scored.total.min())
    span = range(first, int(scored.total.max()) + 1)
    risk_by_total = {int(c["total"]): c for c in sheet["conversion"]}
    headers = ["total", "sheet_risk", "sheet_risk_text"] + (["band"] if scored.band is not None else [])
    cells = []
    for v in span:
        entry = risk_by_total[v]
        parts = [str(v), repr(float(entry["risk"])), _quote(entry["text"])]
        if scored.band is not None:
            parts.append(_quote(sheet["bands"][int(band_index(sheet, np.array([float(entry["risk"])]))[0])]["name"]))
        cells.append(",".join(parts))
    columns.append((headers, np.array(cells, dtype=object)[scored.total - first]))
    if model_risk is not None:
        columns.append((["model_risk"], _numbers(model_risk)))
        columns.append((["risk_difference"], _numbers(scored.risk - model_risk)))
    return columns


def csv_text(columns: list[tuple[list[str], np.ndarray]]) -> str:
    header = ",".join(_quote(name) for names, _ in columns for name in names)
    body = "\n".join(map(",".join, zip(*(cells for _, cells in columns))))
    return header + "\n" + body + ("\n" if body else "")


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
