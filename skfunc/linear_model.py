"""Functional regression and classification.

Scalar outcomes from curves: :class:`FunctionalRidge`,
:class:`FunctionalRidgeCV` and :class:`FunctionalLogisticRegression`, all
linear models on the integrated design ``int x(t) phi_k(t) dt`` with a
roughness penalty on the coefficient function.
"""

from ._functional_logistic import FunctionalLogisticRegression
from ._functional_ridge import FunctionalRidge, FunctionalRidgeCV

__all__ = ["FunctionalLogisticRegression", "FunctionalRidge", "FunctionalRidgeCV"]
