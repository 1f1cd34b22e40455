"""The generator's true risk: raw (uncentred) log-odds contribution of each feature, and the one pair.

The outcome of a generated patient is drawn as delirium ~ Bernoulli(logistic(eta)), where

    eta = BASELINE[interaction] + sum of RAW_SHAPES[feature](value) + (AGE_COGNITION(age, cognition) if interaction)

`geriatric_review` is not in eta: its causal effect is nil. It still looks protective, because of a hidden
delirium-prevention routine that the data set does not record (see `scorecard.demo.cohort`).

The true model document (`scorecard.demo.true_model`) is this same function, rewritten the way a fitter
reports it: every term centred to population mean 0, the pair purified so its row and column means are 0,
and the constants moved into the intercept.
"""

from __future__ import annotations

import numpy as np


def age(x):
    """Rising, steeper after 80."""
    x = np.asarray(x, dtype=float)
    return 0.025 * (x - 60.0) + 0.055 * np.maximum(x - 80.0, 0.0)


def cognition(x):
    """Pre-operative cognitive screen 0-10: lower is worse, a little steeper at the bottom."""
    x = np.asarray(x, dtype=float)
    return 0.13 * (10.0 - x) + 0.05 * np.maximum(4.0 - x, 0.0)


def sodium(x):
    """U-shaped around 140 mmol/L, capped so the rare extremes stay plausible."""
    x = np.asarray(x, dtype=float)
    return np.minimum(0.012 * (x - 140.0) ** 2, 2.5)


def haemoglobin(x):
    """Lower is worse below 120 g/L, flat above."""
    x = np.asarray(x, dtype=float)
    return 0.022 * np.maximum(120.0 - x, 0.0)


def hours_to_surgery(x):
    """A step up once surgery waits more than 36 hours."""
    x = np.asarray(x, dtype=float)
    return np.where(x > 36.0, 0.55, 0.0)


def medicines(x):
    """Rises with each regular medicine, then flattens (a plateau from about 10)."""
    x = np.asarray(x, dtype=float)
    return 0.9 * (1.0 - np.exp(-x / 3.5))


ALBUMIN_NOT_MEASURED_RAW = 0.45  # not measured carries risk of its own (an out-of-hours, rushed admission)


def albumin(x):
    """Lower is worse below 35 g/L; not measured (NaN) has its own raw score."""
    x = np.asarray(x, dtype=float)
    measured = 0.035 * np.maximum(35.0 - np.nan_to_num(x, nan=35.0), 0.0)
    return np.where(np.isnan(x), ALBUMIN_NOT_MEASURED_RAW, measured)


def temperature(x):
    """U-shaped around 36.8 degrees C, capped."""
    x = np.asarray(x, dtype=float)
    return np.minimum(0.9 * (x - 36.8) ** 2, 3.0)


ANAESTHESIA = {"general": 0.25, "spinal": 0.0}
RESIDENCE = {"own_home": 0.0, "with_family": 0.2, "care_home": 0.55}
PRIOR_DELIRIUM = 0.9
HEARING_IMPAIRMENT = 0.3
GERIATRIC_REVIEW = 0.0  # no causal effect in the generator


def _levels(mapping):
    def shape(x):
        return np.array([mapping[v] for v in np.asarray(x, dtype=object)], dtype=float)

    return shape


def _flag(effect):
    def shape(x):
        return effect * np.asarray(x, dtype=float)

    return shape


RAW_SHAPES = {
    "age": age,
    "cognition": cognition,
    "sodium": sodium,
    "haemoglobin": haemoglobin,
    "hours_to_surgery": hours_to_surgery,
    "medicines": medicines,
    "albumin": albumin,
    "temperature": temperature,
    "anaesthesia": _levels(ANAESTHESIA),
    "residence": _levels(RESIDENCE),
    "prior_delirium": _flag(PRIOR_DELIRIUM),
    "hearing_impairment": _flag(HEARING_IMPAIRMENT),
    "geriatric_review": _flag(GERIATRIC_REVIEW),
}

AGE_COGNITION_STRENGTH = 2.4


def age_cognition(age_years, cognition_score):
    """The one true pair: low cognition matters more the older the patient.

    Nothing up to age 70; from 70 to 95 the extra log-odds of a low screen grows linearly, reaching +2.4 at 95
    and over for a screen of 0 (and +1.2 for a screen of 5); nothing at a screen of 10. This is the raw pair,
    before purification moves its population row and column averages into the age and cognition terms.
    """
    a = np.clip(np.asarray(age_years, dtype=float), 70.0, 95.0)
    c = np.asarray(cognition_score, dtype=float)
    return AGE_COGNITION_STRENGTH * (a - 70.0) / 25.0 * (10.0 - c) / 10.0


# Chosen so the population event rate is close to 20 % with and without the pair (measured on 4 million
# generated patients; see TRUE_EVENT_RATE in scorecard.demo).
BASELINE = {True: -5.08, False: -4.64}


def raw_logodds(frame, interaction: bool = True) -> np.ndarray:
    """The generator's log-odds for each patient in a cohort frame (columns as generate_cohort makes them)."""
    eta = np.full(len(frame), BASELINE[interaction], dtype=float)
    for name, shape in RAW_SHAPES.items():
        eta += shape(frame[name].to_numpy())
    if interaction:
        eta += age_cognition(frame["age"].to_numpy(), frame["cognition"].to_numpy())
    return eta
