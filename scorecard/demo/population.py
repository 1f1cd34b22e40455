"""The invented demo population as exact discrete distributions.

Every recorded measurement in the demo is recorded at its display precision (whole years, whole mmol/L, one
decimal for temperature), so each feature takes a finite set of values and its distribution can be written
down exactly as a table of probabilities. The cohort generator samples from these tables (inverse CDF), and
the true model is centred and purified with the same tables, so "population mean 0" holds for the
generator's population itself, not for one sample of it.

Age is drawn first; cognition, haemoglobin, medicines, albumin, residence, prior delirium and hearing
impairment depend on age (older patients have lower cognition, lower haemoglobin, more medicines, lower
albumin, live in care homes more often). Sodium, temperature, hours to surgery and anaesthesia do not.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import expit, ndtr
from scipy.stats import binom, poisson


@dataclass(frozen=True)
class Table:
    """The distribution of one recorded feature.

    `values` are the recorded values (ints, or floats at one decimal); `probs` is either one row of
    probabilities (independent of age) or one row per age in `AGES` (conditional on age). Rows sum to 1.
    """

    values: np.ndarray
    probs: np.ndarray

    @property
    def given_age(self) -> bool:
        return self.probs.ndim == 2

    def marginal(self) -> np.ndarray:
        """P(value), averaging over the age distribution where the table depends on age."""
        if self.given_age:
            return AGE_PROBS @ self.probs
        return self.probs


def _normalised(p: np.ndarray) -> np.ndarray:
    return p / p.sum(axis=-1, keepdims=True)


def discretised_normal(values: np.ndarray, mean, sd: float, step: float = 1.0) -> np.ndarray:
    """P(recorded value = v) when a normal measurement is rounded to `step` and kept only inside the grid.

    `mean` may be a 1-D array (one mean per age); the result then has one row per mean.
    """
    mean = np.asarray(mean, dtype=float)[..., None]
    lo = (values - step / 2 - mean) / sd
    hi = (values + step / 2 - mean) / sd
    return _normalised(ndtr(hi) - ndtr(lo))


def discretised_lognormal(values: np.ndarray, median: float, sigma: float) -> np.ndarray:
    """P(recorded whole value = v) for a log-normal measurement rounded to whole units, kept inside the grid."""
    lo = (np.log(np.maximum(values - 0.5, 1e-9)) - np.log(median)) / sigma
    hi = (np.log(values + 0.5) - np.log(median)) / sigma
    return _normalised(ndtr(hi) - ndtr(lo))


# -- age: the driver of the correlations -----------------------------------------------------------
AGES = np.arange(60, 103)  # 60..102 years
AGE_PROBS = discretised_normal(AGES, 82.0, 8.0)
_A = AGES.astype(float)[:, None]  # a column: one row per age

# -- cognition: a mixture of patients with and without dementia; dementia commoner with age --------
COGNITION = np.arange(0, 11)
DEMENTIA_SHARE = expit(-1.3 + 0.08 * (AGES - 82.0))
_cognition = (DEMENTIA_SHARE[:, None] * binom.pmf(COGNITION, 10, 0.38)
              + (1 - DEMENTIA_SHARE[:, None]) * binom.pmf(COGNITION, 10, 0.88))

SODIUM = np.arange(120, 157)
HAEMOGLOBIN = np.arange(70, 171)
HOURS = np.arange(1, 121)
MEDICINES = np.arange(0, 21)
ALBUMIN = np.arange(18, 51)
TEMPERATURE_TENTHS = np.arange(350, 396)  # 35.0..39.5 degrees C, kept in tenths so the grid is exact

ALBUMIN_NOT_MEASURED = 0.35  # share of patients whose albumin was not measured (independent of age)

TABLES: dict[str, Table] = {
    "age": Table(AGES, AGE_PROBS),
    "cognition": Table(COGNITION, _normalised(_cognition)),
    "sodium": Table(SODIUM, discretised_normal(SODIUM, 138.5, 4.2)),
    "haemoglobin": Table(HAEMOGLOBIN, discretised_normal(HAEMOGLOBIN, 122.0 - 0.4 * (AGES - 82.0), 15.0)),
    "hours_to_surgery": Table(HOURS, discretised_lognormal(HOURS, 24.0, 0.55)),
    "medicines": Table(MEDICINES, _normalised(poisson.pmf(MEDICINES, 3.5 + 0.1 * (_A - 70.0)))),
    "albumin": Table(ALBUMIN, discretised_normal(ALBUMIN, 35.0 - 0.1 * (AGES - 82.0), 5.0)),
    "temperature": Table(TEMPERATURE_TENTHS / 10.0, discretised_normal(TEMPERATURE_TENTHS, 368.0, 5.0)),
}

# categorical features and flags: probability of each level (given age where it matters)
ANAESTHESIA_LEVELS = ("general", "spinal")
RESIDENCE_LEVELS = ("own_home", "with_family", "care_home")
_care_home = expit(-2.2 + 0.08 * (AGES - 82.0))
TABLES["anaesthesia"] = Table(np.array(ANAESTHESIA_LEVELS, dtype=object), np.array([0.45, 0.55]))
TABLES["residence"] = Table(
    np.array(RESIDENCE_LEVELS, dtype=object),
    np.column_stack([0.8 * (1 - _care_home), 0.2 * (1 - _care_home), _care_home]),
)
TABLES["prior_delirium"] = Table(np.array([0, 1]), np.column_stack([1 - expit(-2.5 + 0.04 * (AGES - 82.0)), expit(-2.5 + 0.04 * (AGES - 82.0))]))
TABLES["hearing_impairment"] = Table(np.array([0, 1]), np.column_stack([1 - expit(-1.0 + 0.07 * (AGES - 82.0)), expit(-1.0 + 0.07 * (AGES - 82.0))]))

# The hidden delirium-prevention routine and the review (see scorecard.demo.truth for the story).
ROUTINE_IF_NO_DELIRIUM = 0.55  # P(routine | no delirium)
ROUTINE_IF_DELIRIUM = 0.25  # P(routine | delirium)
REVIEW_IF_ROUTINE = 0.70  # P(review | routine)
REVIEW_IF_NO_ROUTINE = 0.25  # P(review | no routine)


@lru_cache(maxsize=None)
def joint_age(feature: str) -> np.ndarray:
    """P(age, value) as an (ages x values) array."""
    table = TABLES[feature]
    probs = table.probs if table.given_age else np.broadcast_to(table.probs, (len(AGES), len(table.values)))
    return AGE_PROBS[:, None] * probs


def quantile(values: np.ndarray, probs: np.ndarray, q: float) -> float:
    """The smallest recorded value whose cumulative probability reaches q (the usual lower quantile)."""
    cdf = np.cumsum(probs)
    return float(values[min(int(np.searchsorted(cdf, q - 1e-12)), len(values) - 1)])
