"""Functional principal component analysis: curves in, component scores out."""

from ._functional_pca import FunctionalPCA

__all__ = ["FunctionalPCA"]
