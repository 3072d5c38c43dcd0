"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import hilbert, metrics, utils
from .decomposition import FunctionalPCA
from .linear_model import (
    ConcurrentFunctionRidge,
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)
from .preprocessing import BasisFeatures, CurveSmoother

__all__ = [
    "BasisFeatures",
    "ConcurrentFunctionRidge",
    "CurveSmoother",
    "FunctionalLogisticRegression",
    "FunctionalPCA",
    "FunctionalRidge",
    "FunctionalRidgeCV",
    "FunctionOnFunctionRidge",
    "FunctionOnScalarRidge",
    "hilbert",
    "metrics",
    "utils",
    "__version__",
]
