"""The additive model document: load, save, validate, predict. Importers live in `scorecard.model.importers`."""

from scorecard.model.document import (
    AdditiveModel,
    Feature,
    Term,
    load_model,
    model_from_dict,
    save_model,
    validate_model_dict,
)
from scorecard.model.predict import (
    PredictionReport,
    contributions,
    explain,
    logistic,
    predict_logodds,
    predict_risk,
)

__all__ = [
    "AdditiveModel",
    "Feature",
    "PredictionReport",
    "Term",
    "contributions",
    "explain",
    "load_model",
    "logistic",
    "model_from_dict",
    "predict_logodds",
    "predict_risk",
    "save_model",
    "validate_model_dict",
]
