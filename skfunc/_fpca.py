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
``||phi||^2 + alpha ||D^q phi||^2 = 1`` (Ramsay and Silverman, 2005, sec.
9.4). Alpha is unit-free: both norms are taken on the domain mapped to
[0, 1] (the engine weight of alpha = 1 is ``penalty_scale`` of the Gram
matrix, the domain's length), and the penalty is split into its exact null
space and complement by one data-free :class:`~skfunc._penalized.SplitPath`
of the Gram matrix ``G`` and the roughness ``R``: with its
``U' (G + lam R) U = diag(d)``, the map ``B = G^{1/2} U diag(d)^{-1/2}``
turns the generalized eigenproblem into the ordinary one of ``B' C B`` for
the coordinates' covariance ``C``, and the null space is never penalized
(its entries of ``d`` are exactly 1 for every alpha). The solutions are
orthonormal in the penalized inner product; they are re-orthonormalised in
L2 in order (Gram-Schmidt), so scores are ordinary L2 inner products and
their variances add up to at most the total variance.

Several channels (multivariate components, Happ and Greven, 2018): the
basis is block diagonal (:class:`~skfunc._channels.ChannelBasis`) and the
penalty one block per channel, each relative to its own Gram matrix
(:func:`~skfunc._channels.channel_penalty`: channel ``c``'s roughness on
its domain mapped to [0, 1] times its domain's length), so the penalized
norm is ``sum_c (||phi_c||^2 + alpha ||D^q phi_c||^2)`` with both norms of
each channel on its unit domain. Channel weights ``v_c`` enter only
through the coordinates (:class:`~skfunc._channels.ScaledCoordinates`,
``z_c`` times ``sqrt(v_c)``): in them the weighted norm and the weighted
penalty are the unweighted ones, so the same data-free path serves every
choice of weights, and the components are orthonormal in ``sum_c v_c <f_c,
g_c>``.

``alpha="auto"`` chooses alpha by cross-validation over curves of the
reconstruction error (Rice and Silverman, 1991, sec. 3; Ramsay and
Silverman, 2005, sec. 9.3.3): rows are dealt to :data:`CV_FOLDS` folds by
their position (row ``i`` to fold ``i mod 10``, counted over all
``partial_fit`` batches), and for each fold and candidate the components
computed without the fold reconstruct the fold's curves; the score is the
summed squared L2 error. Everything it needs is the count, mean and scatter
of the coordinates per fold (:func:`fold_moments`), so it runs from the same
additive statistics as the fit, in memory, over batches or on Dask blocks.
"""


import numpy as np
import scipy.linalg
from sklearn.utils.extmath import randomized_svd
from sklearn.utils.validation import check_is_fitted

from ._alpha import CV_FOLDS, best_index, candidates_for
from ._bases import gram_sqrt
from ._basis_features import orthonormal_operators
from ._blocks import (
    BandedProduct,
    chunked_matmul,
    output_dtype,
    single_thread_blas,
    single_thread_blas_up_to,
)
from ._channels import channel_penalty
from ._dask import check_rows
from ._moments import merge_moments, moments, scale_moments
from ._penalized import SplitPath


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

    Attributes
    ----------
    path : SplitPath or None
        The data-free decomposition of the Gram matrix and the roughness
        penalty on [0, 1] (see the module doc); None without a penalty.
    """

    def __init__(self, weights, basis=None, grid=None, penalty_order=None):
        self.weights = weights
        self.root_w = np.sqrt(weights)
        self.features = basis is not None
        self.path = None
        if self.features:
            self.projection_, self.reconstruction_ = orthonormal_operators(
                basis, grid, weights
            )
            gram = basis.gram()
            self.root, self.inv_root = gram_sqrt(gram)
            # projection_ is root A^-1 (W Phi)' with A = (W Phi)' Phi: for a
            # basis of local support, the product with W Phi (banded) and
            # then the K x K rest cost a fraction of the dense product
            phi = basis.evaluate(grid)
            self._integrate = BandedProduct(phi * weights[:, None])
            self._rest = (self.root @ np.linalg.inv(self._integrate.operator.T @ phi)).T
            if penalty_order is not None:
                # (several channels: a block per channel, each relative to
                # its own Gram matrix, so the same alpha on every channel)
                self.path = SplitPath(gram, channel_penalty(basis, penalty_order, gram))

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
        return moments(self.coordinates(X))

    def fold_statistics(self, X, index):
        """:meth:`statistics` per fold of rows, row ``index[i]`` in fold
        ``index[i] mod CV_FOLDS`` (keys ``n`` (F,), ``mean`` (F, K),
        ``scatter`` (F, K, K); merged by :func:`merge_fold_moments`)."""
        return fold_moments(self.coordinates(X), np.asarray(index) % CV_FOLDS)

    def coordinates(self, X):
        """The coordinates (n, K) of X's rows, a new float64 array."""
        if not self.features:
            return np.asarray(X, dtype=np.float64) * self.root_w
        if self._integrate.segments is None:  # (projection_ has W Phi's zero rows)
            return self._integrate(X, self.projection_.T)
        return self._integrate(X) @ self._rest

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


def covariance_directions(covariance, n_wanted=None, coords=None, alpha=0.0):
    """Principal directions of a covariance matrix in orthonormal coordinates.

    Parameters
    ----------
    covariance : ndarray of shape (K, K)
    n_wanted : int or None
        Number of leading directions; None for all K.
    coords : CurveCoordinates or None
        Its ``path`` and ``root`` define the roughness penalty; used when
        ``alpha > 0``.
    alpha : float
        Unit-free roughness penalty of Silverman's smoothed components.

    Returns
    -------
    variances : ndarray of shape (k,)
        ``y_k' C y_k``, the variance along each direction.
    directions : ndarray of shape (K, k)
        Orthonormal columns.
    """
    K = covariance.shape[0]
    k = K if n_wanted is None else min(n_wanted, K)
    if alpha > 0:
        variances, directions = smoothed_directions(covariance, coords, [alpha], k)
        return variances[0], directions[0]
    subset = None if k == K else [K - k, K - 1]
    with single_thread_blas_up_to(K):
        variances, directions = scipy.linalg.eigh(covariance, subset_by_index=subset)
    variances, directions = variances[::-1], directions[:, ::-1]
    return np.clip(variances, 0.0, None), directions


def smoothed_directions(covariance, coords, alphas, k):
    """Silverman's smoothed components for several alphas at once.

    For each alpha, the leading ``k`` solutions of ``C y = mu (I + lam P) y``
    in orthonormal coordinates, computed as the eigenvectors of ``B' C B``
    with ``B = G^{1/2} U diag(d)^{-1/2}`` (module doc; ``lam`` and ``d`` on
    the path's unit-free scale), then orthonormalised in L2 in order.

    Returns ``variances`` (L, k) and ``directions`` (L, K, k).
    """
    path = coords.path
    d = path.denominators(np.asarray(alphas, dtype=np.float64))  # (L, K)
    B = (coords.root @ path.eigvecs)[None] / np.sqrt(d)[:, None, :]
    M = np.swapaxes(B, 1, 2) @ covariance @ B
    with single_thread_blas_up_to(covariance.shape[0]):
        _, u = np.linalg.eigh((M + np.swapaxes(M, 1, 2)) / 2)
    y = B @ u[:, :, ::-1][:, :, :k]
    q, r = np.linalg.qr(y)  # Gram-Schmidt in L2, in order
    diag = np.diagonal(r, axis1=1, axis2=2)
    directions = q * np.where(diag < 0, -1.0, 1.0)[:, None, :]
    variances = np.einsum("lka,kj,lja->la", directions, covariance, directions)
    return np.clip(variances, 0.0, None), directions


def fold_moments(Z, folds):
    """Count, mean and centered scatter of the rows of ``Z`` in each of the
    :data:`CV_FOLDS` folds (``folds[i]`` the fold of row ``i``); empty folds
    have count 0 and zero moments."""
    K = Z.shape[1]
    out = {"n": np.zeros(CV_FOLDS), "mean": np.zeros((CV_FOLDS, K)),
           "scatter": np.zeros((CV_FOLDS, K, K))}
    # ten small products per block: latency-bound, one BLAS thread (see
    # single_thread_blas_up_to; measured 3x faster on a busy two-core machine), through
    # a controller made once (threadpool_limits inspects the loaded
    # libraries on every call: milliseconds per block)
    with single_thread_blas():
        parts = _fold_rows(folds)
        if len(folds) >= CV_FOLDS and isinstance(parts[0][1], slice):
            return _turn_moments(Z, int(folds[0]), out)
        for f, rows in parts:
            part = moments(Z[rows])
            out["n"][f], out["mean"][f], out["scatter"][f] = (
                part["n"], part["mean"], part["scatter"])
    return out


def _turn_moments(Z, first, out):
    """:func:`fold_moments` where the folds run in turn from fold ``first``:
    the rows as a (q, CV_FOLDS, K) array, every fold's mean and centered rows
    in one pass (strided views of every tenth row would be read row by
    row), and the last ``len(Z) mod CV_FOLDS`` rows merged one by one."""
    q = Z.shape[0] // CV_FOLDS
    turns = Z[: q * CV_FOLDS].reshape(q, CV_FOLDS, Z.shape[1])
    mean = turns.mean(axis=0)
    centered = turns - mean
    folds = (first + np.arange(CV_FOLDS)) % CV_FOLDS
    out["n"][folds], out["mean"][folds] = q, mean
    for i, f in enumerate(folds):
        out["scatter"][f] = centered[:, i].T @ centered[:, i]
    for i, row in enumerate(Z[q * CV_FOLDS:]):
        f = folds[i]
        part = merge_moments(
            {"n": q, "mean": out["mean"][f], "scatter": out["scatter"][f]},
            {"n": 1, "mean": row, "scatter": np.zeros_like(out["scatter"][f])})
        out["n"][f], out["mean"][f], out["scatter"][f] = (
            part["n"], part["mean"], part["scatter"])
    return out


def _fold_rows(folds):
    """``(fold, rows)`` for each fold present: every CV_FOLDS-th row (a
    view) where the folds run in turn, as for consecutive positions; else a
    mask."""
    n = len(folds)
    if n and np.array_equal(folds, (folds[0] + np.arange(n)) % CV_FOLDS):
        return [((int(folds[0]) + i) % CV_FOLDS, slice(i, None, CV_FOLDS))
                for i in range(min(n, CV_FOLDS))]
    return [(f, folds == f) for f in np.unique(folds)]


def merge_fold_moments(*stats):
    """:func:`skfunc._moments.merge_moments` fold by fold (Chan et al., 1979),
    empty folds included; plain moments (a scalar count) merge as there."""
    if np.ndim(stats[0]["n"]) == 0:
        return merge_moments(*stats)
    out = dict(stats[0])
    for other in stats[1:]:
        n = out["n"] + other["n"]
        delta = other["mean"] - out["mean"]
        share = np.divide(other["n"], n, out=np.zeros_like(n), where=n > 0)
        out = {
            "n": n,
            "mean": out["mean"] + share[:, None] * delta,
            "scatter": out["scatter"] + other["scatter"]
            + delta[:, :, None] * delta[:, None, :] * (out["n"] * share)[:, None, None],
        }
    return out


def pooled_moments(folds):
    """The moments of all rows from the moments per fold."""
    parts = [{"n": int(n), "mean": m, "scatter": s}
             for n, m, s in zip(folds["n"], folds["mean"], folds["scatter"]) if n > 0]
    return merge_moments(*parts)


def _held_out_moments(folds):
    """Per fold ``f``: the other folds' count ``n_t`` (F,) and scatter
    (F, K, K), and the fold's scatter about the other folds' mean
    ``S_f + n_f e_t e_t'`` (F, K, K), ``e_t = m_f - m_t``; from the pooled
    moments minus the fold's (the merge of Chan et al., 1979, solved for
    one part): with ``e = m_f - m``, ``e_t = (n / n_t) e`` and ``S_t = S -
    S_f - (n_f n / n_t) e e'``."""
    total = pooled_moments(folds)
    n, n_f = total["n"], folds["n"]
    n_t = n - n_f
    ratio = np.divide(n, n_t, out=np.zeros_like(n_f), where=n_t > 0)
    e = folds["mean"] - total["mean"]  # (F, K)
    outer = e[:, :, None] * e[:, None, :]
    train = total["scatter"] - folds["scatter"] - (n_f * ratio)[:, None, None] * outer
    held = folds["scatter"] + (n_f * ratio**2)[:, None, None] * outer
    return n_t, train, held


def cross_validation_scores(folds, coords, alphas, n_components):
    """Summed reconstruction errors (L,) of :func:`cross_validate_alpha` and
    the number of folds that count (a row or more, two rows elsewhere).

    All folds and candidates at once: with ``W = G^{1/2} U`` (the path's
    Demmler-Reinsch basis) one product ``A_f = W' C_f W`` per fold, and each
    candidate's ``B' C_f B`` of :func:`smoothed_directions` is ``A_f``
    scaled by ``d^{-1/2}`` on both sides; one stacked eigensolve for all.
    """
    n_f = folds["n"]
    used = np.flatnonzero((n_f > 0) & (n_f.sum() - n_f >= 2))
    if used.size == 0:
        return np.zeros(alphas.size), 0
    n_t, train, held = (v[used] for v in _held_out_moments(folds))
    K = train.shape[1]
    # components per fold: n_components, or all the training covariance has
    k = np.minimum(K, n_t - 1 if n_components is None else np.full(n_t.size, n_components))
    k = np.maximum(k, 1).astype(int)
    k_max = int(k.max())
    W = coords.root @ coords.path.eigvecs
    scale = 1.0 / np.sqrt(coords.path.denominators(alphas))  # (L, K)
    A = W.T @ (train / (n_t - 1)[:, None, None]) @ W  # (F, K, K)
    M = A[:, None] * (scale[:, :, None] * scale[:, None, :])  # (F, L, K, K)
    u = leading_eigenvectors((M + np.swapaxes(M, 2, 3)) / 2, k_max)
    y = (W * scale[:, None, :]) @ u  # (F, L, K, k)
    q, _ = np.linalg.qr(y)  # Gram-Schmidt in L2, in order (signs do not matter)
    captured = np.sum(q * (held[:, None] @ q), axis=2)  # (F, L, k): y' S~ y
    errors = np.trace(held, axis1=1, axis2=2)[:, None, None] - np.cumsum(captured, axis=2)
    if n_components is not None:
        per_fold = errors[np.arange(k.size), :, k - 1]
    else:
        counted = np.arange(k_max) < k[:, None]  # (F, k)
        per_fold = np.einsum("fla,fa->fl", errors, counted)
    return per_fold.sum(axis=0), used.size


#: :func:`leading_eigenvectors` asks LAPACK for only the leading ``k`` of
#: ``K`` eigenvectors when ``k * SUBSET_RATIO <= K``: the stacked solver of
#: all of them costs less below that (single-thread CPU time of 250
#: matrices, ms: K = 39, k = 3: 29 stacked, 20 subset; K = 20, k = 5: 7.5
#: against 12.3; K = 39, k = 10: 30 against 49)
SUBSET_RATIO = 8


def leading_eigenvectors(M, k):
    """Eigenvectors (..., K, k) of the ``k`` largest eigenvalues, largest
    first, of each symmetric matrix of the stack ``M`` (..., K, K)."""
    K = M.shape[-1]
    if k * SUBSET_RATIO > K:
        return np.linalg.eigh(M)[1][..., ::-1][..., :k]
    # LAPACK's relatively robust representations (dsyevr) for an index
    # range, one matrix at a time (numpy's stacked solver has no range)
    stack = M.reshape(-1, K, K)
    out = np.empty((stack.shape[0], K, k))
    lwork, liwork = scipy.linalg.lapack.dsyevr_lwork(K)[:2]
    for i, matrix in enumerate(stack):
        _, vectors, _, _, info = scipy.linalg.lapack.dsyevr(
            matrix, compute_v=1, range="I", il=K - k + 1, iu=K,
            lwork=lwork, liwork=liwork)
        if info:
            raise np.linalg.LinAlgError(f"Eigenvalues did not converge (dsyevr info {info})")
        out[i] = vectors[:, ::-1]
    return out.reshape(M.shape[:-2] + (K, k))


def cross_validate_alpha(folds, coords, n_components, alpha="auto"):
    """Alpha of smoothed components by cross-validation over curves.

    For each fold ``f`` with at least one row, and at least two rows
    elsewhere, the components at every candidate alpha are computed from the
    other folds' covariance; the fold's curves, centred at the other folds'
    mean, are reconstructed from the first ``k`` of them. The score is the
    squared L2 reconstruction error summed over folds (Rice and Silverman,
    1991; Ramsay and Silverman, 2005, sec. 9.3.3), from the fold moments
    alone: with ``S~ = S_f + n_f d d'`` the fold's scatter about the other
    folds' mean, the error with ``k`` orthonormal components ``y_j`` is
    ``tr S~ - sum_{j <= k} y_j' S~ y_j``. With ``n_components`` an int,
    ``k = n_components``; with None (all components, or a fraction of
    variance, whose number depends on alpha) the errors for ``k = 1, 2,
    ...`` up to the rank are summed, so every number of components counts.

    Candidates come from :func:`skfunc._alpha.candidate_alphas` on the
    data-free path (from nearly no smoothing to nearly the null space), the
    choice from :func:`skfunc._alpha.best_index`. Returns ``(alpha, alphas,
    scores)``.
    """
    alphas = candidates_for(alpha, coords.path)
    # small batched eigensolves: BLAS threads only add synchronisation
    # (see single_thread_blas_up_to), measured 17x slower on a busy two-core machine
    with single_thread_blas():
        scores, used = cross_validation_scores(folds, coords, alphas, n_components)
    if used == 0:
        raise ValueError(
            "alpha='auto' (or candidate alphas) chooses the smoothing of the "
            "components by cross-validation over curves, which needs at least 3 "
            "curves; pass a fixed alpha (0 for unsmoothed components)."
        )
    index = best_index(scores, alphas, criterion="cross-validation over curves")
    return float(alphas[index]), alphas, scores


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
