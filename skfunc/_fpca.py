"""Numerical core of FunctionalPCA: orthonormal coordinates and eigensolvers.

Curves are mapped to coordinates ``z`` (K values) in which the Euclidean
inner product is the L2 inner product of the curves:

* without a basis, ``z = sqrt(w) * x`` for quadrature weights ``w`` on the
  grid (K = number of grid points): ``z'z' = sum_j w_j x_j x'_j``;
* with a basis, ``z = G^{1/2} c`` for the least-squares coefficients ``c``
  and the exact Gram matrix ``G`` (the output of ``BasisFeatures``, from
  :func:`skfunc._basis_features.orthonormal_operators`).

Principal components are then ordinary principal directions ``y`` of the
coordinates, mapped back to functions: on the grid ``y / sqrt(w)``, or
``Phi G^{-1/2} y`` with a basis. The eigenvalues are variances of integrals
``<x - mean, phi_k>``, hence independent of the sampling density.

Smoothed components (Silverman, 1996) maximise ``var <x, phi>`` subject to
``||phi||^2 + alpha ||D^q phi||^2 = 1``, the generalized eigenproblem
``C y = lambda (I + alpha P) y`` in orthonormal coordinates with the penalty
``P = G^{-1/2} R G^{-1/2}`` (Ramsay and Silverman, 2005, sec. 9.4). The
solutions are orthonormal in the penalized inner product; they are
re-orthonormalised in L2 in order (Gram-Schmidt), so scores are ordinary L2
inner products and their variances add up to at most the total variance.
"""

import contextlib

import numpy as np
import scipy.linalg
from sklearn.utils.extmath import randomized_svd
from sklearn.utils.validation import check_is_fitted
from threadpoolctl import threadpool_limits

from ._bases import gram_sqrt
from ._basis_features import orthonormal_operators
from ._blocks import chunked_matmul, output_dtype
from ._dask import check_rows
from ._moments import moments, scale_moments


class ComponentCurvesMixin:
    """``inverse_transform`` of estimators with ``mean_`` and ``components_``
    on ``grid_`` (FunctionalPCA and SparseFunctionalPCA)."""

    def inverse_transform(self, X):
        """Curves on ``grid_`` with the given scores: ``mean_ + X @ components_``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_components_)
            Scores, as returned by :meth:`transform`.

        Returns
        -------
        curves : ndarray of shape (n_samples, n_features_in_)
        """
        check_is_fitted(self)
        X = check_rows(X, self.n_components_, "scores per row (n_components_)")
        return chunked_matmul(X, self.components_, self.mean_, dtype=output_dtype(X))


class CurveCoordinates:
    """Maps between curves on a grid and L2-orthonormal coordinates.

    Parameters
    ----------
    weights : ndarray of shape (m,)
        Positive quadrature weights on the grid.
    basis : Basis or None
        The basis expansion on the grid's domain; None for coordinates
        ``sqrt(w) * x``.
    grid : ndarray of shape (m,) or None
        The grid (needs ``basis``).
    penalty_order : int or None
        Derivative order of the roughness penalty of smoothed components;
        None for none (needs ``basis``).
    """

    def __init__(self, weights, basis=None, grid=None, penalty_order=None):
        self.weights = weights
        self.root_w = np.sqrt(weights)
        self.features = basis is not None
        self.penalty = None
        if self.features:
            self.projection_, self.reconstruction_ = orthonormal_operators(
                basis, grid, weights
            )
            self.inv_root = gram_sqrt(basis.gram())[1]
            if penalty_order is not None:
                penalty = basis.penalty(penalty_order)
                self.penalty = self.inv_root @ penalty @ self.inv_root

    @property
    def n_coordinates(self):
        if not self.features:
            return self.root_w.size
        return self.projection_.shape[0]

    def statistics(self, X):
        """Count, mean and centered scatter of the coordinates of X's rows
        (keys ``n``, ``mean``, ``scatter``; merged by
        :func:`skfunc._moments.merge_moments`)."""
        if not self.features:
            # scale the K x K result rather than copying the data
            return scale_moments(moments(X), self.root_w)
        return moments(X, self.projection_.T)

    def centered(self, X):
        """Coordinates of X's rows about their mean (a new float64 array),
        and that mean."""
        if not self.features:
            Z = np.asarray(X, dtype=np.float64) * self.root_w
        else:
            Z = chunked_matmul(X, self.projection_.T)
        mean = Z.mean(axis=0)
        Z -= mean
        return Z, mean

    def values(self, Y):
        """Grid values (k, m) of the functions with coordinates ``Y`` (K, k)."""
        if not self.features:
            return Y.T / self.root_w
        return Y.T @ self.reconstruction_.T

    def coefficients(self, Y):
        """Basis coefficients (k, K) of the functions with coordinates ``Y``;
        without a basis, their grid values."""
        if not self.features:
            return self.values(Y)
        return (self.inv_root @ Y).T

    def projection(self, Y):
        """Operator (k, m) giving the coordinates ``Y' z`` of curves on the grid."""
        if not self.features:
            return Y.T * self.root_w
        return Y.T @ self.projection_


def covariance_directions(covariance, n_wanted=None, penalty=None, alpha=0.0):
    """Principal directions of a covariance matrix in orthonormal coordinates.

    Parameters
    ----------
    covariance : ndarray of shape (K, K)
    n_wanted : int or None
        Number of leading directions; None for all K.
    penalty : ndarray of shape (K, K) or None
        Roughness matrix in the same coordinates; used when ``alpha > 0``.
    alpha : float
        Roughness penalty of Silverman's smoothed components.

    Returns
    -------
    variances : ndarray of shape (k,)
        ``y_k' C y_k``, the variance along each direction.
    directions : ndarray of shape (K, k)
        Orthonormal columns.
    """
    K = covariance.shape[0]
    k = K if n_wanted is None else min(n_wanted, K)
    subset = None if k == K else [K - k, K - 1]
    with _single_thread(K):
        if alpha > 0:
            _, vecs = scipy.linalg.eigh(
                covariance, np.eye(K) + alpha * penalty, subset_by_index=subset
            )
            q, r = np.linalg.qr(vecs[:, ::-1])  # Gram-Schmidt in L2, in order
            directions = q * np.sign(np.diag(r))
            variances = np.einsum("ik,ij,jk->k", directions, covariance, directions)
        else:
            variances, directions = scipy.linalg.eigh(
                covariance, subset_by_index=subset
            )
            variances, directions = variances[::-1], directions[:, ::-1]
    return np.clip(variances, 0.0, None), directions


def _single_thread(K):
    """One BLAS thread for a K x K eigensolve of moderate size.

    Up to K of a few thousand the symmetric eigensolver is bound by latency,
    not arithmetic; extra BLAS threads only add synchronisation, which costs
    several times the solve itself on a busy machine (partial_fit solves once
    per chunk). Tiny problems skip the (millisecond) thread-pool switch.
    """
    if 64 <= K <= 2000:
        return threadpool_limits(limits=1, user_api="blas")
    return contextlib.nullcontext()


def svd_directions(Z, n_wanted, solver, random_state=None, n_oversamples=10,
                   iterated_power="auto"):
    """Principal directions from the SVD of centered coordinates ``Z`` (n, K).

    Returns ``(squared singular values, directions (K, k))``: ``n_wanted``
    of them for the randomized solver, all ``min(n, K)`` for the exact one.
    """
    if solver == "randomized":
        _, s, vt = randomized_svd(
            Z,
            n_wanted,
            n_oversamples=n_oversamples,
            n_iter=iterated_power,
            flip_sign=False,
            random_state=random_state,
        )
    else:
        _, s, vt = scipy.linalg.svd(Z, full_matrices=False, overwrite_a=True)
    return s**2, vt.T


def sign_convention(values):
    """Signs (k,) making the largest-magnitude value of each row positive."""
    peak = np.argmax(np.abs(values), axis=1)
    signs = np.sign(values[np.arange(values.shape[0]), peak])
    signs[signs == 0] = 1.0
    return signs
