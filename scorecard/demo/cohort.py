"""Drawing an invented cohort from the demo population.

How the care-process trap is made (the reviewer's trap): a hidden delirium-prevention routine (reorientation,
sleep, hydration, glasses and hearing aids, started in the emergency department) lowers delirium risk, and
the older-people's team reviews before the operation mostly the patients it has put on that routine. The data
set records the review (`geriatric_review`) but not the routine. In the generator the review itself changes
nothing: delirium is drawn from the true model's log-odds, which has no review term.

Technically the routine is drawn after the outcome, from P(routine | delirium) (0.25) and
P(routine | no delirium) (0.55), and the review from P(review | routine) (0.70 versus 0.25). By Bayes' rule
this is the same joint distribution as a world in which the routine lowers the log-odds by
log(0.25/0.55) - log(0.75/0.45) = -1.30 and is a little less common among high-risk patients, while
delirium given the recorded features alone follows the true model exactly. So:

- the true model (`true_model`) is exactly the log-odds of delirium given the recorded features, and its
  `geriatric_review` term is 0 (the review has no effect);
- the review is associated with lower risk, crudely (odds ratio about 0.57) and also after adjusting for
  every recorded feature, because the routine behind it is not recorded.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.csv_cells import frame_csv_text
from scorecard.demo import population as pop
from scorecard.demo.truth import raw_logodds
from scorecard.errors import UserError

OUTCOME = "delirium"
FEATURES = [
    "age",
    "cognition",
    "sodium",
    "haemoglobin",
    "hours_to_surgery",
    "medicines",
    "albumin",
    "temperature",
    "anaesthesia",
    "residence",
    "prior_delirium",
    "hearing_impairment",
    "geriatric_review",
]
COLUMNS = ["patient_id", *FEATURES, OUTCOME]

# drawn in this order from one generator, so a seed fixes every column
_DRAW_ORDER = [f for f in FEATURES if f not in ("age", "geriatric_review")]


def _draw(table: pop.Table, age_index: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Inverse-CDF draw of one feature's recorded values; rows of a conditional table are chosen by age."""
    if not table.given_age:
        idx = np.searchsorted(np.cumsum(table.probs), u, side="right")
        return table.values[np.minimum(idx, len(table.values) - 1)]
    cdf = np.cumsum(table.probs, axis=1)
    idx = np.empty(len(u), dtype=np.int64)
    for i in np.unique(age_index):
        rows = np.flatnonzero(age_index == i)
        idx[rows] = np.searchsorted(cdf[i], u[rows], side="right")
    return table.values[np.minimum(idx, len(table.values) - 1)]


def _logistic(z: np.ndarray) -> np.ndarray:
    return 1.0 / (1.0 + np.exp(-z))


def _check_size_and_seed(n, seed) -> None:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise UserError(f"rows: {n!r} is not a positive whole number; ask for at least 1 patient")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise UserError(f"seed: {seed!r} is not a whole number >= 0; give a seed such as 0")


def generate_cohort(n: int, seed: int = 0, interaction: bool = True) -> pd.DataFrame:
    """An invented cohort of `n` older adults after hip-fracture surgery, one row per patient.

    Seeded with numpy's default_rng(seed): the same (n, seed, interaction) always gives the same frame.
    Columns, in order: patient_id (1..n), the FEATURES, then `delirium` (0/1). Integer measurements are int64,
    albumin is float (NaN = not measured; about 35 %), temperature is float at one decimal, anaesthesia and
    residence are strings, flags and the outcome are 0/1 int64. The expected event rate is about 20 %
    (see scorecard.demo.EVENT_RATE_BOUNDS).
    """
    _check_size_and_seed(n, seed)
    return _draw_cohort(int(n), np.random.default_rng(int(seed)), interaction, first_id=1)


CHUNK_ROWS = 1_000_000


def cohort_chunks(n: int, seed: int = 0, interaction: bool = True, chunk_rows: int = CHUNK_ROWS):
    """The same kind of cohort in frames of at most `chunk_rows` patients, so any size needs bounded memory.

    Up to `chunk_rows` patients this is exactly `generate_cohort(n, seed)` (one frame). Above, chunk b is drawn
    from its own generator, default_rng([seed, b]) (numpy's SeedSequence keeps the streams independent), and
    patient_id runs on across chunks: the same (n, seed) always gives the same rows, whatever reads them.
    """
    _check_size_and_seed(n, seed)
    n = int(n)
    if n <= chunk_rows:
        yield generate_cohort(n, seed, interaction)
        return
    for b, start in enumerate(range(0, n, chunk_rows)):
        size = min(chunk_rows, n - start)
        yield _draw_cohort(size, np.random.default_rng([int(seed), b]), interaction, first_id=start + 1)


def _draw_cohort(n: int, rng: np.random.Generator, interaction: bool, first_id: int) -> pd.DataFrame:
    age_index = np.minimum(np.searchsorted(np.cumsum(pop.AGE_PROBS), rng.random(n), side="right"), len(pop.AGES) - 1)
    data: dict[str, np.ndarray] = {"age": pop.AGES[age_index]}
    for name in _DRAW_ORDER:
        data[name] = _draw(pop.TABLES[name], age_index, rng.random(n))
    albumin = data["albumin"].astype(float)
    albumin[rng.random(n) < pop.ALBUMIN_NOT_MEASURED] = np.nan
    data["albumin"] = albumin
    data["temperature"] = np.round(data["temperature"].astype(float), 1)
    # the review is drawn after the outcome (see the module docstring); its log-odds effect is 0, so while the
    # outcome is drawn its column can hold zeros
    data["geriatric_review"] = np.zeros(n, dtype=np.int64)
    frame = pd.DataFrame({"patient_id": np.arange(first_id, first_id + n, dtype=np.int64), **{f: data[f] for f in FEATURES}})
    for name in ("age", "cognition", "sodium", "haemoglobin", "hours_to_surgery", "medicines", "prior_delirium", "hearing_impairment"):
        frame[name] = frame[name].astype(np.int64)
    for name in ("anaesthesia", "residence"):
        frame[name] = frame[name].astype(str)

    delirium = rng.random(n) < _logistic(raw_logodds(frame, interaction))
    routine = rng.random(n) < np.where(delirium, pop.ROUTINE_IF_DELIRIUM, pop.ROUTINE_IF_NO_DELIRIUM)
    review = rng.random(n) < np.where(routine, pop.REVIEW_IF_ROUTINE, pop.REVIEW_IF_NO_ROUTINE)
    frame["geriatric_review"] = review.astype(np.int64)
    frame[OUTCOME] = delirium.astype(np.int64)
    return frame[COLUMNS]


def cohort_csv_text(frame: pd.DataFrame, header: bool = True) -> str:
    """The cohort as CSV text: integers without decimals, temperature at one decimal, empty = not measured
    (header=False for a chunk after the first)."""
    out = frame.copy()
    out["albumin"] = out["albumin"].astype("Int64")
    return frame_csv_text(out, formats={"temperature": "%.1f"}, header=header)


def cohort_arrow_table(frame: pd.DataFrame):
    """The cohort as an Arrow table for Parquet: albumin a nullable integer (null = not measured), temperature
    float, the rest as generated; read back it gives the same values as the CSV."""
    import pyarrow as pa

    columns = {name: pa.array(frame[name].to_numpy()) for name in frame.columns}
    columns["albumin"] = pa.array(frame["albumin"].astype("Int64"), type=pa.int64())
    return pa.table(columns)
