"""What the agreement check keeps of a cohort, gathered a chunk of patients at a time.

`scorecard check` streams a cohort of any size; each chunk is scored with the sheet and the exact model and
then dropped, leaving only this compact state, from which `scorecard.audit.agreement` computes every figure.
A cohort read whole is the one-chunk case of the same code, so a streamed and an in-memory check agree.

Per patient (about 14 bytes: 280 MB for 20,000,000 patients):
- the exact model's log-odds (float64), so every model-side figure is computed exactly as on the whole cohort
  (percentiles, AUCs, calibration: no histogram and no approximation);
- the sheet's total (int32), which gives the sheet's risk, log-odds and band;
- the observed outcome (int8: 1, 0, or -1 for not known), when an outcome column is used;
- whether any measurement is outside its training range (bool).
Per cohort: the slip tally (patients per row and total of every table, `scorecard.audit.slips.SlipTally`), each
term's summed points and model contribution (for the centring of the 'off by' column), the patients who
disagree most with everything their rows show, and the reading and model notes as counts.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.audit.paper import SheetReading, parse_cohort, score_cohort
from scorecard.audit.slips import SlipTally
from scorecard.errors import UserError
from scorecard.model import AdditiveModel, PredictionReport, contributions, logistic
from scorecard.sheet.printed import term_label
from scorecard.suggest import did_you_mean
from scorecard.tabular import flag_column, source_of

TOP_PATIENTS = 20


def outcome_values(frame: pd.DataFrame, column: str | None) -> np.ndarray | None:
    """0/1/NaN outcome per patient, or None when no outcome column is used."""
    if column is None:
        return None
    if column not in frame.columns:
        raise UserError(f"{source_of(frame)}: outcome column {column!r} is not in the file"
                        f"{did_you_mean(column, list(frame.columns))}; check --outcome")
    return flag_column(frame, column)


def _parsed_frame(frame: pd.DataFrame, values: dict[str, np.ndarray], model: AdditiveModel) -> pd.DataFrame:
    """The cohort with the columns the sheet already parsed handed over as typed values (floats with NaN,
    levels with None), which the model reads exactly as it reads their text; other columns stay as text."""
    columns = {}
    for name in model.used_features:
        if name in values:
            columns[name] = pd.Series(values[name], index=frame.index, dtype=object if values[name].dtype == object else float)
        elif name in frame.columns:
            columns[name] = frame[name]
    typed = pd.DataFrame(columns, index=frame.index)
    typed.attrs["source"] = source_of(frame)
    typed.attrs["first_row"] = frame.attrs.get("first_row", 0)
    return typed


def model_logodds(sheet: dict, model: AdditiveModel, parts: pd.DataFrame) -> np.ndarray:
    """The exact model's log-odds the sheet is compared with: a locally recalibrated sheet stands for the model
    recalibrated the same way (docs/ward-workflow.md)."""
    lo = model.intercept + parts.to_numpy().sum(axis=1)
    recalibrated = sheet.get("recalibration")
    if recalibrated:
        lo = recalibrated["model_logodds"]["intercept"] + recalibrated["model_logodds"]["slope"] * lo
    return lo


class CheckState:
    """`add(chunk)` for every chunk of the cohort, in file order; then `patients()` and the tallies."""

    def __init__(self, sheet: dict, model: AdditiveModel, outcome: str | None = None):
        self.sheet, self.model, self.outcome = sheet, model, outcome
        self.lpp = float(sheet["scale"]["logodds_per_point"])
        self.on_sheet = [t["name"] for t in sheet["terms"]]
        self.dropped = [t.name for t in model.terms if t.name not in self.on_sheet]
        self.slips = SlipTally(sheet)
        self.reading = SheetReading()
        self.model_report = PredictionReport()
        self.point_sums = {name: 0 for name in self.on_sheet}  # integers: exact
        self.model_sums = {name: 0.0 for name in self.on_sheet + self.dropped}
        self.largest: list[dict] = []
        self.source: str | None = None
        self.n = 0
        self._chunks: dict[str, list[np.ndarray]] = {"logodds": [], "total": [], "outcome": [], "outside": []}

    def add(self, frame: pd.DataFrame) -> None:
        if self.source is None:
            self.source = source_of(frame)
        first_row = int(frame.attrs.get("first_row", 0))
        values = parse_cohort(self.sheet, frame)
        scored = score_cohort(self.sheet, frame, values)
        y = outcome_values(frame, self.outcome)
        parts, report = contributions(self.model, _parsed_frame(frame, values, self.model))
        lo = model_logodds(self.sheet, self.model, parts)
        self._chunks["logodds"].append(lo)
        self._chunks["total"].append(scored.total.astype(np.int32))
        self._chunks["outside"].append(scored.outside_training.copy())
        if y is not None:
            self._chunks["outcome"].append(np.where(np.isnan(y), -1, y).astype(np.int8))
        self.slips.add(scored)
        self.reading.add(scored.reading)
        self.model_report.add(report)
        for t in scored.terms:
            self.point_sums[t.name] += int(t.patient_points().sum())
        for name in self.model_sums:
            if name in parts.columns:
                self.model_sums[name] += float(parts[name].to_numpy().sum())
        self._keep_largest(scored, parts, logistic(lo), first_row)
        self.n += scored.n

    def _keep_largest(self, scored, parts: pd.DataFrame, model_risk: np.ndarray, first_row: int) -> None:
        """The chunk's candidates for the patients with the largest |sheet risk - model risk| (ties: the
        earlier row first), merged with those kept so far; each with the row of every table and the model's
        contribution of each term, 'off by' centred once the whole cohort is in (`largest`)."""
        diff = scored.risk - model_risk
        a = np.abs(diff)
        if len(a) > TOP_PATIENTS:
            cut = np.partition(a, len(a) - TOP_PATIENTS)[len(a) - TOP_PATIENTS]
            pick = np.flatnonzero(a >= cut)
        else:
            pick = np.arange(len(a))
        pick = pick[np.lexsort((pick, -a[pick]))][:TOP_PATIENTS]
        for i in pick:
            terms = []
            for t in scored.terms:
                model_part = float(parts[t.name].iloc[i]) if t.name in parts.columns else 0.0
                terms.append({"term": t.name, "label": t.label, "row": t.texts[t.index[i]], "points": int(t.points[t.index[i]]),
                              "model_logodds": model_part, "on_sheet": float(t.points[t.index[i]]) * self.lpp})
            for name in self.dropped:
                terms.append({"term": name, "label": term_label(self.model, name), "row": "(not on the sheet)", "points": 0,
                              "model_logodds": float(parts[name].iloc[i]), "on_sheet": 0.0})
            self.largest.append({"row": first_row + int(i) + 1, "total": int(scored.total[i]), "sheet_risk": float(scored.risk[i]),
                                 "sheet_risk_text": str(scored.risk_text[i]), "model_risk": float(model_risk[i]),
                                 "difference": float(diff[i]), "terms": terms})
        self.largest.sort(key=lambda r: (-abs(r["difference"]), r["row"]))
        del self.largest[TOP_PATIENTS:]

    def largest_rows(self) -> list[dict]:
        """The kept patients, each term's 'off by' = its row's log-odds - the model's contribution, centred on
        the cohort's mean of that difference, so the term with the largest |off by| is the row that causes
        the disagreement."""
        centre = {name: ((self.lpp * self.point_sums.get(name, 0)) - self.model_sums[name]) / self.n for name in self.model_sums}
        rows = []
        for r in self.largest:
            terms = [{**{k: v for k, v in t.items() if k != "on_sheet"},
                      "off_by": t["on_sheet"] - t["model_logodds"] - centre[t["term"]]} for t in r["terms"]]
            rows.append({**r, "terms": terms})
        return rows

    def patients(self) -> dict[str, np.ndarray | None]:
        """The per-patient arrays of the whole cohort, sorted by the model's log-odds (a stable sort, so the
        order is the same however the cohort was chunked): the model's AUC is then summed in one pass over
        its tie groups. Every figure computed from them is a figure of the cohort, not of its order. The
        chunks are released as they are joined."""
        joined = {}
        for name, parts in self._chunks.items():
            joined[name] = np.concatenate(parts) if parts else None
            parts.clear()
        order = np.argsort(joined["logodds"], kind="stable")
        for name, values in joined.items():
            if values is not None:
                joined[name] = values[order]  # one array at a time: the unsorted copy goes at once
                del values
        return joined
