"""Bring models made elsewhere into the model document: one module per source.

- `import_coefficient_table`: a logistic regression written as a coefficient table (CSV);
- `import_shape_table`: bins, levels and scores written as a long-format shape table (CSV);
- `from_sklearn`: a fitted scikit-learn logistic regression or Pipeline, verified additive on data.
"""

from scorecard.model.importers.coefficients import import_coefficient_table
from scorecard.model.importers.common import centre_terms
from scorecard.model.importers.shape_table import import_shape_table

__all__ = ["centre_terms", "from_sklearn", "import_coefficient_table", "import_shape_table"]


def __getattr__(name: str):
    # scikit-learn is imported only when its importer is used, so the CSV importers start fast
    if name == "from_sklearn":
        from scorecard.model.importers.sklearn_estimator import from_sklearn

        return from_sklearn
    raise AttributeError(name)
