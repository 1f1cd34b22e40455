"""The fit's default settings: one home, each value with the reason it was chosen.

The values were chosen by the study in tests/benchmarks/bench_fit_study.py (repeated 5-fold cross-validated
AUC and held-out deviance against scikit-learn's LogisticRegression and HistGradientBoostingClassifier on the
invented demo at n = 300 ... 200,000, scikit-learn's breast-cancer data and open clinical cohorts shipped in
registry packages); docs/fitting.md has its tables and the command that prints them. Settings that depend on
the cohort's size are functions of the number of rows, so `AdditiveRiskClassifier(...="auto")` and
`scorecard fit` agree.
"""

from __future__ import annotations

# Two leaves per step: one cut per step keeps each step a single, smooth change; three leaves fitted small
# cohorts faster but noisier (lower cross-validated AUC under 2,000 patients), and at large n the extra
# leaf bought nothing that more rounds did not.
LEAVES_PER_STEP = 2

# Shrinkage: added to every leaf's hessian sum (an L2 penalty on leaf values), so a leaf of few patients
# moves less. 10 is the value the study's large cohorts preferred (flat from 3 to 30 above 20,000 patients).
SHRINKAGE = 10.0

# Small cohorts choose their shrinkage from these by the repeats' held-out deviance: what suits 300
# patients differs between cohorts by more than the AUC the choice is worth (the study's Pima and breast-
# cancer rows), so the data chooses. Above CHOOSE_SHRINKAGE_BELOW rows the choice stops mattering and
# costs a fit per value, so SHRINKAGE is used.
SHRINKAGE_CHOICES = (3.0, 10.0, 30.0, 100.0)
CHOOSE_SHRINKAGE_BELOW = 5_000
# Below CHOOSE_SHRINKAGE_BELOW one more candidate competes on the same held-out deviance: every ordered
# feature first grown as a straight line in its bin's mean value, then steps on top from the line's best
# round (at SHRINKAGE). In the study none of the step settings (shrinkage up to 1,000, a leaf minimum of 40,
# patience 15) brought the 300-patient demo within 0.03 AUC of logistic regression, and the line did: with
# few events per feature a straight line is the better bet, and the steps on top keep what the held-out
# rows still support. The data decides, so cohorts whose shapes are not lines keep their steps.
# Each choice is tried on the first 8 repeats (their mean held-out deviance decides); the chosen one's
# other repeats are then fitted: trying every choice on all repeats cost twice the time for the same choice.
SHRINKAGE_TRIAL_REPEATS = 8

# Fewest patients (sum of weights) in any leaf of any step: fewer let single outliers earn a step of their own
# in cohorts of a few hundred; more blurred sharp thresholds of the demo's true shapes at 2,000.
MIN_LEAF_PATIENTS = 10.0

# Early stopping: a repeat stops after this many rounds without a better held-out deviance. With the low
# learning rates below, 40 rounds is about one unit of log-odds movement on a well-supported bin; shorter
# patience stopped small cohorts before their slower shapes had grown (lower AUC), longer changed nothing.
PATIENCE = 40

# A round counts as better when it lowers the held-out deviance by at least this share: small enough that
# the slow steps of a low learning rate still count, large enough to stop on a plateau of rounding noise.
MIN_IMPROVEMENT = 1e-5

# Scale of every step. The study's Pima folds gave 0.02 no measurable gain over 0.05 (AUC -0.0021 vs -0.0027
# against LR, well within the folds' noise) for 1.5 times the rounds, so 0.05 at every size.
LEARNING_RATE = 0.05

# Most rounds over all features per repeat: a backstop; in the study the best round stayed well below it.
MAX_ROUNDS = 5_000

# Bins per continuous feature (plus one for "not measured"): 128 quantile bins put at least 8 patients in a
# bin from 1,000 patients on and lost no AUC against finer bins at 200,000 in the study.
BINS = 128

# Bins per feature on a pair grid: 16 x 16 cells keep about 40 patients per cell at 10,000 patients, the
# smallest cohort where the demo's true pair is reliably found.
PAIR_BINS = 16

# A pair is kept by `pairs="auto"` only when it passes the held-out interaction test AND its held-out
# log-likelihood gain is at least this many nats per patient. The test alone keeps, at 1,000,000 patients,
# pairs whose effect is far below a point on a sheet. Measured (docs/fitting.md, "Pairs at large n"): the
# demo's true pair gains 0.00059 to 0.00066 at 40,000 patients and 0.00077 at 1,000,000; the best false pair
# 0.0001 at 40,000 (noise: the largest of 78 chi-square draws) and 0.00005 at 1,000,000 (real, tiny, passing
# the test), so 0.0002 separates them with room on both sides.
PAIR_MIN_GAIN = 0.0002

# Family-wise significance level of the held-out pair test (Bonferroni over all pairs ranked).
PAIR_SIGNIFICANCE = 0.01

# Most pairs `pairs="auto"` keeps: a sheet with more two-way tables is hard to use at the bedside.
MAX_PAIRS = 3

# Categorical levels seen fewer times share one pooled bin.
MIN_LEVEL_COUNT = 10

# Cohort size where the size-dependent defaults change.
LARGE_COHORT = 20_000


def repeats_for(rows: int) -> int:
    """Repeat fits (each on its own held-out split; terms are their mean). 16 under 20,000 patients: on
    Pima (532 patients, same 5 folds) 32 repeats scored no higher (AUC -0.0027 vs -0.0019 against LR) for
    twice the time; from 20,000 on, 12 (each repeat is costly and the shapes are already pinned down)."""
    return 16 if rows < LARGE_COHORT else 12


def held_out_share_for(rows: int) -> float:
    """Share of rows each repeat holds out for early stopping. 0.3 under 20,000 patients (a few hundred
    held-out patients give a noisy stopping round), 0.2 above (enough held out; more rows left to fit)."""
    return 0.3 if rows < LARGE_COHORT else 0.2


def repeat_share_for(rows: int) -> float:
    """Share of the non-held-out rows each repeat fits on: all of them up to 20,000 rows, half above, where
    half the rows already pin the shapes down and the fit is twice as fast."""
    return 1.0 if rows <= LARGE_COHORT else 0.5


def auto_rule(rule) -> str:
    """A size-dependent default in words, read off the rule itself (so help texts cannot drift from it):
    e.g. '16 under 20,000 patients, else 12'."""
    below, above = rule(LARGE_COHORT - 1), rule(LARGE_COHORT + 1)
    return f"{above:g}" if below == above else f"{below:g} under {LARGE_COHORT:,} patients, else {above:g}"
