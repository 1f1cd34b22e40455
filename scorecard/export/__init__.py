"""A sheet document in an open format for the hospital's other systems: PMML 4.4 Scorecard (`pmml`)."""

from scorecard.export.pmml import sheet_pmml

FORMATS = {"pmml": sheet_pmml}

__all__ = ["FORMATS", "sheet_pmml"]
