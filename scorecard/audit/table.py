"""The scored cohort as a CSV table, written column by column so a million patients take seconds.

Printed texts (rows, risk) have only a few distinct values per column: each is quoted once and looked up.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import ScoredCohort


def _quote(text: str) -> str:
    """CSV quoting (RFC 4180): quote a field holding a comma, a quote or a line break; double inner quotes."""
    if any(c in text for c in ',"\n\r') or text != text.strip():
        return '"' + text.replace('"', '""') + '"'
    return text


def _lookup(texts, index: np.ndarray) -> np.ndarray:
    return np.array([_quote(str(t)) for t in texts], dtype=object)[index]


def _numbers(values: np.ndarray, fmt: str = "%.10g") -> np.ndarray:
    return np.array([fmt % v for v in values.tolist()], dtype=object)


def scored_columns(scored: ScoredCohort, sheet: dict, keep: pd.DataFrame | None = None,
                   model_risk: np.ndarray | None = None) -> list[tuple[str, np.ndarray]]:
    """(header, cells) per output column: kept columns, then per term its printed row and points, then the
    total, the risk read from the conversion table (fraction and printed text), the band, and the model's risk."""
    columns: list[tuple[str, np.ndarray]] = []
    if keep is not None:
        for name in keep.columns:
            columns.append((name, np.array([_quote(v) for v in keep[name].astype(str).tolist()], dtype=object)))
    for t in scored.terms:
        columns.append((f"row:{t.name}", _lookup(t.texts, t.index)))
        columns.append((f"points:{t.name}", _lookup([str(int(p)) for p in t.points], t.index)))
    first = int(scored.total.min())
    span = np.arange(first, int(scored.total.max()) + 1)
    columns.append(("total", _lookup([str(int(v)) for v in span], scored.total - first)))
    risk_by_total = {int(c["total"]): c for c in sheet["conversion"]}
    columns.append(("sheet_risk", _lookup([repr(float(risk_by_total[int(v)]["risk"])) for v in span], scored.total - first)))
    columns.append(("sheet_risk_text", _lookup([risk_by_total[int(v)]["text"] for v in span], scored.total - first)))
    if scored.band is not None:
        columns.append(("band", _lookup([b["name"] for b in sheet["bands"]], scored.band)))
    if model_risk is not None:
        columns.append(("model_risk", _numbers(model_risk)))
        columns.append(("risk_difference", _numbers(scored.risk - model_risk)))
    return columns


def csv_text(columns: list[tuple[str, np.ndarray]]) -> str:
    header = ",".join(_quote(name) for name, _ in columns)
    body = "\n".join(map(",".join, zip(*(cells for _, cells in columns))))
    return header + "\n" + body + ("\n" if body else "")
