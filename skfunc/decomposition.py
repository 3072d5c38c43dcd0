"""Functional principal component analysis: curves in, component scores out."""

from ._functional_pca import FunctionalPCA
from ._sparse_fpca import SparseFunctionalPCA

__all__ = ["FunctionalPCA", "SparseFunctionalPCA"]
