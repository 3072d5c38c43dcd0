"""skfunc: functional data analysis for scikit-learn.

Curves are rows of ``X``; every estimator is penalized least squares in a
Hilbert space of functions, evaluated on the curves' grid.
"""

__version__ = "0.1.0"

from . import hilbert
from .preprocessing import BasisFeatures, CurveSmoother

#: every public estimator class; the estimator-check test runs over this list
ESTIMATORS = [BasisFeatures, CurveSmoother]

__all__ = ["BasisFeatures", "CurveSmoother", "ESTIMATORS", "hilbert", "__version__"]
