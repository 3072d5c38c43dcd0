"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import hilbert, metrics
from .decomposition import FunctionalPCA
from .linear_model import (
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)
from .preprocessing import BasisFeatures, CurveSmoother

#: every public estimator class; the estimator-check test runs over this list
ESTIMATORS = [
    BasisFeatures,
    CurveSmoother,
    FunctionalPCA,
    FunctionOnScalarRidge,
    FunctionOnFunctionRidge,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionalLogisticRegression,
]

__all__ = [
    "BasisFeatures",
    "CurveSmoother",
    "ESTIMATORS",
    "FunctionalLogisticRegression",
    "FunctionalPCA",
    "FunctionalRidge",
    "FunctionalRidgeCV",
    "FunctionOnFunctionRidge",
    "FunctionOnScalarRidge",
    "hilbert",
    "metrics",
    "__version__",
]
