"""Shared small fits for the fit tests (module-scoped so each is fitted once)."""

from __future__ import annotations

import pytest

from scorecard.demo import FEATURES, OUTCOME, generate_cohort
from fit_settings import QUICK
from scorecard.fit import AdditiveRiskClassifier


@pytest.fixture(scope="session")
def pair_cohort():
    """40,000 invented patients with the demo's age x cognition interaction. The held-out pair test splits
    the rows in halves, so it needs more rows than a likelihood-ratio test on the true shapes (about 10,000
    in docs/demo-cohort.md); at 40,000 the pair passes it by a wide margin."""
    return generate_cohort(40_000, seed=11, interaction=True)


@pytest.fixture(scope="session")
def pair_fit(pair_cohort):
    est = AdditiveRiskClassifier(random_state=3, **QUICK)
    return est.fit(pair_cohort[FEATURES], pair_cohort[OUTCOME])


@pytest.fixture(scope="session")
def additive_cohort():
    return generate_cohort(40_000, seed=12, interaction=False)
