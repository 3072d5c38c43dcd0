"""Functional regression: curve-valued responses from scalars or curves."""

from ._function_on_function import FunctionOnFunctionRidge
from ._function_on_scalar import FunctionOnScalarRidge

__all__ = ["FunctionOnFunctionRidge", "FunctionOnScalarRidge"]
