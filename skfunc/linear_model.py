"""Functional regression and classification.

Scalar outcomes from curves: :class:`FunctionalRidge`,
:class:`FunctionalRidgeCV` and :class:`FunctionalLogisticRegression`, linear
models on the integrated design ``int x(t) phi_k(t) dt`` with a roughness
penalty on the coefficient function. Curve-valued responses from scalars or
curves: :class:`FunctionOnScalarRidge` and :class:`FunctionOnFunctionRidge`.
"""

from ._function_on_function import FunctionOnFunctionRidge
from ._function_on_scalar import FunctionOnScalarRidge
from ._functional_logistic import FunctionalLogisticRegression
from ._functional_ridge import FunctionalRidge, FunctionalRidgeCV

__all__ = [
    "FunctionOnFunctionRidge",
    "FunctionOnScalarRidge",
    "FunctionalLogisticRegression",
    "FunctionalRidge",
    "FunctionalRidgeCV",
]
