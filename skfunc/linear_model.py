"""Functional regression and classification.

Scalar outcomes from curves: :class:`FunctionalRidge`,
:class:`FunctionalRidgeCV` and :class:`FunctionalLogisticRegression`, linear
models on the integrated design ``int x(t) phi_k(t) dt`` with a roughness
penalty on the coefficient function. Curve-valued responses from scalars or
curves: :class:`FunctionOnScalarRidge`, :class:`FunctionOnFunctionRidge`
(through a coefficient surface) and :class:`ConcurrentFunctionRidge` (at the
same points).
"""

from ._concurrent_function_ridge import ConcurrentFunctionRidge
from ._function_on_function import FunctionOnFunctionRidge
from ._function_on_scalar import FunctionOnScalarRidge
from ._functional_logistic import FunctionalLogisticRegression
from ._functional_ridge import FunctionalRidge
from ._functional_ridge_cv import FunctionalRidgeCV

__all__ = [
    "ConcurrentFunctionRidge",
    "FunctionOnFunctionRidge",
    "FunctionOnScalarRidge",
    "FunctionalLogisticRegression",
    "FunctionalRidge",
    "FunctionalRidgeCV",
]
