"""What the demo generator promises about its cohorts, measured once and stated here for tests and users.

TRUE_AUC and TRUE_EVENT_RATE were measured on 4,000,000 generated patients (seed 0; standard error about
0.0003 for the AUC and 0.0002 for the rate) with `python tests/benchmarks/demo_figures.py`.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import rankdata

# the true model's AUC on its own population, with and without the age x cognition pair
TRUE_AUC = {True: 0.8184, False: 0.7642}
# a sample of 200,000 patients (the size true_auc uses by default) lands within this of TRUE_AUC: about 4
# standard errors of the AUC at that size, plus the rounding of TRUE_AUC
TRUE_AUC_TOLERANCE = 0.005
# the population share of patients with delirium
TRUE_EVENT_RATE = {True: 0.2000, False: 0.2002}
# guaranteed for n >= 5000 and any seed in the sense of > 5 standard errors (sd of the rate <= 0.0057 at n = 5000)
EVENT_RATE_BOUNDS = (0.17, 0.23)
# share of patients with albumin not measured, for n >= 5000 (population share 0.35; > 4.4 standard errors)
ALBUMIN_MISSING_BOUNDS = (0.32, 0.38)


def rank_auc(outcome, score) -> float:
    """Area under the ROC curve as the Mann-Whitney statistic: the chance that a random patient with the event
    scores higher than a random patient without it, ties counting one half (Hanley and McNeil, Radiology 1982)."""
    y = np.asarray(outcome).astype(bool)
    ranks = rankdata(np.asarray(score, dtype=float))
    positives = int(y.sum())
    negatives = len(y) - positives
    if positives == 0 or negatives == 0:
        raise ValueError("the AUC needs patients with and without the event")
    return float((ranks[y].sum() - positives * (positives + 1) / 2) / (positives * negatives))


def true_auc(rows: int = 200_000, seed: int = 0, interaction: bool = True) -> float:
    """The true model's AUC on a generated cohort of `rows` patients."""
    from scorecard.demo.cohort import OUTCOME, generate_cohort
    from scorecard.demo.true_model import true_model
    from scorecard.model import predict_logodds

    cohort = generate_cohort(rows, seed=seed, interaction=interaction)
    logodds, _ = predict_logodds(true_model(interaction), cohort)
    return rank_auc(cohort[OUTCOME].to_numpy(), logodds)

