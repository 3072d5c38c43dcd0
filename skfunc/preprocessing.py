"""Transformers from sampled curves to features or smoothed curves."""

from ._basis_features import BasisFeatures
from ._smoother import CurveSmoother

__all__ = ["BasisFeatures", "CurveSmoother"]
