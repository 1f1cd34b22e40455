"""A small valid model document (invented numbers) that the model tests mutate."""

import copy

import pytest

VALID_MODEL = {
    "format_version": 1,
    "document": "scorecard-model",
    "name": "test model",
    "version": "1",
    "outcome": {"event": "delirium", "horizon": "5 days", "population": "adults 60+ after hip-fracture surgery"},
    "link": "logit",
    "intercept": -1.5,
    "features": [
        {"name": "age", "label": "Age", "kind": "continuous", "unit": "years", "decimals": 0,
         "training_range": {"min": 60, "max": 100}, "missing": "error"},
        {"name": "sodium", "label": "Sodium", "kind": "continuous", "unit": "mmol/L",
         "training_range": {"min": 120, "max": 155}, "missing": "score"},
        {"name": "residence", "label": "Residence", "kind": "categorical",
         "levels": ["own_home", "with_family", "care_home"], "missing": "average"},
        {"name": "prior_delirium", "label": "Delirium before", "kind": "flag", "missing": "score"},
        {"name": "cognition", "label": "Cognitive screen", "kind": "continuous", "missing": "average"},
    ],
    "terms": [
        {"kind": "continuous", "name": "age", "feature": "age", "shape": "step", "edges": [70, 80],
         "scores": [-0.4, 0.0, 0.6], "counts": [30, 40, 30]},
        {"kind": "continuous", "name": "sodium", "feature": "sodium", "shape": "linear", "edges": [125, 140, 150],
         "scores": [0.5, 0.0, 0.3], "missing_score": 0.1},
        {"kind": "categorical", "name": "residence", "feature": "residence",
         "levels": ["own_home", "with_family", "care_home"], "scores": [0.0, 0.2, 0.55], "unseen": "error"},
        {"kind": "flag", "name": "prior_delirium", "feature": "prior_delirium", "scores": [0.0, 1.1],
         "missing_score": 0.3},
        {"kind": "continuous", "name": "cognition", "feature": "cognition", "shape": "step", "edges": [5],
         "scores": [0.4, -0.1]},
        {"kind": "pair", "name": "age x cognition", "features": ["age", "cognition"],
         "axes": [{"edges": [80]}, {"edges": [5]}], "scores": [[0.0, 0.0], [0.3, -0.1]]},
    ],
    "provenance": {"source": "written by hand for tests"},
}


@pytest.fixture
def model_doc():
    """A fresh deep copy each time, so tests can mutate it."""
    return copy.deepcopy(VALID_MODEL)
