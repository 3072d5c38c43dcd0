"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import alignment, hilbert, metrics, outliers, utils
from .alignment import ElasticAligner, LandmarkAligner, ShiftAligner
from .decomposition import FunctionalPCA
from .linear_model import (
    ConcurrentFunctionRidge,
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)
from .outliers import CurveOutlierDetector
from .preprocessing import BasisFeatures, CurveSmoother

__all__ = [
    "BasisFeatures",
    "ConcurrentFunctionRidge",
    "CurveOutlierDetector",
    "CurveSmoother",
    "ElasticAligner",
    "FunctionalLogisticRegression",
    "FunctionalPCA",
    "FunctionalRidge",
    "FunctionalRidgeCV",
    "FunctionOnFunctionRidge",
    "FunctionOnScalarRidge",
    "LandmarkAligner",
    "ShiftAligner",
    "alignment",
    "hilbert",
    "metrics",
    "outliers",
    "utils",
    "__version__",
]
