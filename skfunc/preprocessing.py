"""Transformers from sampled curves to features or smoothed curves."""

from ._basis_features import BasisFeatures

__all__ = ["BasisFeatures"]
