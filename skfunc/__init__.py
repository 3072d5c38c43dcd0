"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import hilbert
from .linear_model import (
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
)
from .preprocessing import BasisFeatures

#: every public estimator class; the estimator-check test runs over this list
ESTIMATORS = [
    BasisFeatures,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionalLogisticRegression,
]

__all__ = [
    "BasisFeatures",
    "ESTIMATORS",
    "FunctionalLogisticRegression",
    "FunctionalRidge",
    "FunctionalRidgeCV",
    "hilbert",
    "__version__",
]
