"""scorecard: additive risk models on paper, with proof that the paper agrees with the software."""

__version__ = "0.1.0"
