"""Shared fixtures: the demo's true model, a small demo cohort, and a model whose care-process flag looks protective.

All data here are the project's invented demo (older adults after hip-fracture surgery, delirium within 5 days).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.cli import main
from scorecard.demo import generate_cohort, true_model
from scorecard.model import save_model

COHORT_ROWS = 1500


@pytest.fixture(scope="session")
def cohort_frame() -> pd.DataFrame:
    return generate_cohort(COHORT_ROWS, seed=11)


@pytest.fixture(scope="session")
def review_dir(tmp_path_factory):
    return tmp_path_factory.mktemp("review")


@pytest.fixture(scope="session")
def cohort_csv(review_dir, cohort_frame) -> str:
    path = review_dir / "cohort.csv"
    cohort_frame.to_csv(path, index=False)
    return str(path)


def crude_log_odds_ratio(outcome: np.ndarray, exposed: np.ndarray) -> float:
    """log(odds of the outcome when exposed / odds when not): the 2x2-table log odds ratio (common practice)."""
    p1 = outcome[exposed == 1].mean()
    p0 = outcome[exposed == 0].mean()
    return float(np.log(p1 / (1 - p1)) - np.log(p0 / (1 - p0)))


@pytest.fixture(scope="session")
def care_model(cohort_frame):
    """The demo's true model, with two changes made here so the reviewer's trap is present:

    - the geriatric_review term's scores are set to the crude log odds ratio of delirium for reviewed vs not
      reviewed patients observed in the demo cohort (the true effect is 0; the cohort shows it protective
      because of how care was given), centred on the term's counts as every term is;
    - the feature's role is reset to "measurement", so the methodologist has to mark it.
    """
    model = true_model(interaction=True)
    effect = crude_log_odds_ratio(cohort_frame["delirium"].to_numpy(float), cohort_frame["geriatric_review"].to_numpy(float))
    term = model.term("geriatric_review")
    counts = np.asarray(term.counts, dtype=float)
    scores = np.array([0.0, effect])
    term.scores = (scores - (counts * scores).sum() / counts.sum()).tolist()
    model.feature("geriatric_review").role = "measurement"
    return model


@pytest.fixture(scope="session")
def care_model_path(review_dir, care_model) -> str:
    path = review_dir / "care.model.json"
    save_model(care_model, path)
    return str(path)


def _run_cli(*args):
    """Run `scorecard ARGS` in-process; stdout and stderr separate."""
    return CliRunner().invoke(main, list(map(str, args)), catch_exceptions=False)


@pytest.fixture(scope="session")
def run_cli():
    return _run_cli
