"""The answer key: the vignettes scored by the audit's own paper scoring (`scorecard.audit.paper.score_cohort`,
the `score` verb), never by arithmetic of its own, and written as key.csv.

key.csv has one row per vignette: `id`, the vignette's values under the model's feature names (empty = not
measured), `total_points`, `risk` (as printed on the conversion table), `band`, then per block `row:<term>` and
`points:<term>` (what `mark` compares table by table), and the sheet's `sheet_fingerprint`, `offset` and
`logodds_per_point` so that `mark` can state the risk error an answer causes without the sheet at hand.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.audit.paper import ScoredCohort, score_cohort
from scorecard.csv_cells import cell, csv_text
from scorecard.exercise.vignettes import Target
from scorecard.invented import MARK, is_invented


@dataclass
class Key:
    ids: list[str]
    features: list[str]
    vignettes: list[dict[str, Target]]
    scored: ScoredCohort
    sheet: dict

    def band_name(self, i: int) -> str:
        return "" if self.scored.band is None else self.sheet["bands"][int(self.scored.band[i])]["name"]


def vignette_frame(features: list[str], vignettes: list[dict[str, Target]]) -> pd.DataFrame:
    frame = pd.DataFrame({name: [v[name].text for v in vignettes] for name in features}, dtype=str)
    frame.attrs["source"] = "the exercise's vignettes"
    return frame


def answer_key(sheet: dict, features: list[str], vignettes: list[dict[str, Target]]) -> Key:
    scored = score_cohort(sheet, vignette_frame(features, vignettes))
    ids = [f"V{k + 1:02d}" for k in range(len(vignettes))]
    return Key(ids=ids, features=features, vignettes=vignettes, scored=scored, sheet=sheet)


def key_csv_text(key: Key) -> str:
    n = len(key.ids)
    cols: list[tuple[list[str], np.ndarray]] = [(["id"], np.array(key.ids, dtype=object))]
    for name in key.features:
        cols.append(([name], np.array([cell(v[name].text) for v in key.vignettes], dtype=object)))
    cols.append((["total_points"], np.array([str(int(t)) for t in key.scored.total], dtype=object)))
    cols.append((["risk"], np.array([cell(str(t)) for t in key.scored.risk_text], dtype=object)))
    cols.append((["band"], np.array([cell(key.band_name(i)) for i in range(n)], dtype=object)))
    for t in key.scored.terms:
        cols.append(([f"row:{t.name}"], np.array([cell(t.texts[j]) for j in t.index], dtype=object)))
        cols.append(([f"points:{t.name}"], np.array([str(int(t.points[j])) for j in t.index], dtype=object)))
    scale = key.sheet["scale"]
    cols.append((["sheet_fingerprint"], np.array([key.sheet["fingerprint"]] * n, dtype=object)))
    cols.append((["offset"], np.array([repr(float(scale["offset"]))] * n, dtype=object)))
    cols.append((["logodds_per_point"], np.array([repr(float(scale["logodds_per_point"]))] * n, dtype=object)))
    if is_invented(key.sheet):
        cols.append((["note"], np.array([cell(MARK)] * n, dtype=object)))
    return csv_text(cols)


def template_csv_text(key: Key) -> str:
    """An empty answers sheet for the trainer to fill in: id, points per table, total, risk, band."""
    headers = ["id"] + [f"points:{t.name}" for t in key.scored.terms] + ["total_points", "risk", "band"]
    blank = np.full(len(key.ids), "", dtype=object)
    return csv_text([(["id"], np.array([cell(i) for i in key.ids], dtype=object))] + [([h], blank) for h in headers[1:]])
