"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import hilbert, metrics, outliers
from .decomposition import FunctionalPCA
from .linear_model import (
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)
from .outliers import CurveOutlierDetector
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
    CurveOutlierDetector,
]

__all__ = [
    "BasisFeatures",
    "CurveOutlierDetector",
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
    "outliers",
    "__version__",
]
