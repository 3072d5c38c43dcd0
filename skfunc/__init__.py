"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import alignment, hilbert, metrics
from .alignment import ElasticAligner, LandmarkAligner, ShiftAligner
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
    ShiftAligner,
    LandmarkAligner,
    ElasticAligner,
]

__all__ = [
    "BasisFeatures",
    "ElasticAligner",
    "LandmarkAligner",
    "ShiftAligner",
    "alignment",
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
