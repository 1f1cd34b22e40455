"""Learning an additive risk model from a table (cyclic gradient boosting, bagging, FAST pairs, purification).

Public entry: `AdditiveRiskClassifier` (scikit-learn estimator) and its `to_model(...)` document export.
"""

from scorecard.fit.estimator import AdditiveRiskClassifier

__all__ = ["AdditiveRiskClassifier"]
