"""Warnings and errors that skfunc raises, in one public place.

As in :mod:`sklearn.exceptions`, import them from here to filter a warning
(``warnings.simplefilter("ignore", AlphaAtEdgeWarning)``) or to catch an error.
"""

from ._alpha import AlphaAtEdgeWarning
from ._bases import IllConditionedFitWarning
from ._fit import UndefinedUncertaintyWarning
from ._function_response import UndeterminedCoefficientsWarning
from ._penalized import NotIdentifiableError
from .persistence import ModelFileError

__all__ = [
    "AlphaAtEdgeWarning",
    "IllConditionedFitWarning",
    "ModelFileError",
    "NotIdentifiableError",
    "UndefinedUncertaintyWarning",
    "UndeterminedCoefficientsWarning",
]
