"""Running a list of edits on a model and writing each into the model's edit history (provenance.edits).

Each step is a function model -> (edited model, record), from `scorecard.review.edits`. The record gains who,
when and why, the fingerprint of the model it was applied to and, with a cohort, the data it was measured on
and its cost (`scorecard.review.cost`).
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import pandas as pd

from scorecard.model.document import AdditiveModel
from scorecard.review.cost import edit_cost

Step = Callable[[AdditiveModel], tuple[AdditiveModel, dict]]


def apply_edits(model: AdditiveModel, steps: list[Step], by: str, at: str, reason: str,
                cohort: pd.DataFrame | None = None, observed: np.ndarray | None = None,
                data_note: dict | None = None) -> tuple[AdditiveModel, list[dict]]:
    """The model after every step, each on the result of the one before, and the records of this run."""
    records = []
    current = model
    for step in steps:
        edited, record = step(current)
        record = {"by": by, "at": at, **record, "reason": reason, "applied_to": current.fingerprint}
        if cohort is not None and record["action"] != "declare":
            record["data"] = data_note
            record["cost"] = edit_cost(current, edited, cohort, observed)
        records.append(record)
        # each step's model carries its own record, so `applied_to` of the next edit is the fingerprint the
        # model would have had if the edits had been run one command at a time
        edited.provenance["edits"] = list(current.provenance.get("edits", [])) + [record]
        current = edited
    return current, records
