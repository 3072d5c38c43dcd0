"""BasisFeatures: curves to L2-orthonormal basis coordinates."""

from numbers import Real

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.utils._param_validation import Interval
from sklearn.utils.validation import (
    _check_feature_names_in,
    check_is_fitted,
)

from ._bases import gram_sqrt
from ._blocks import chunked_matmul
from ._dask import check_rows
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveTransformerMixin
from ._grid import quadrature_weights
from ._penalized import PenalizedPath
from ._validation import BASIS_CONSTRAINTS, basis_for, validate_curves


def orthonormal_operators(basis, grid, weights, alpha=0.0, penalty_order=2):
    """Operators between curves on ``grid`` and L2-orthonormal coordinates.

    Returns ``(projection, reconstruction)``: ``projection`` (K, m) maps a
    curve's values to the coordinates ``G^{1/2} c`` of its penalized
    weighted least-squares fit, ``reconstruction`` (m, K) maps coordinates
    back to values on the grid.
    """
    phi = basis.evaluate(grid)
    phi_w = phi * weights[:, None]
    penalty = basis.penalty(penalty_order) if alpha > 0 else None
    path = PenalizedPath(phi_w.T @ phi, penalty)
    root, inv_root = gram_sqrt(basis.gram())
    return root @ path.operator(alpha) @ phi_w.T, phi @ inv_root


@fill_doc
class BasisFeatures(AdditiveTransformerMixin, TransformerMixin, BaseEstimator):
    """Project sampled curves onto a basis, in L2-orthonormal coordinates.

    Each row of ``X`` is a curve sampled on a grid. It is fitted by
    quadrature-weighted least squares in a basis (B-splines, Fourier or
    Legendre polynomials), optionally with a roughness penalty, and the
    fitted function is returned as its coordinates in an L2-orthonormal
    version of that basis (obtained with the exact Gram matrix). Euclidean
    distances and inner products between output rows therefore equal L2
    distances and inner products between the fitted functions, so any
    scikit-learn model downstream works in the geometry of the curves, and
    the output does not depend on how densely or evenly the curves were
    sampled.

    Parameters
    ----------
    basis : {"bspline", "fourier", "legendre"}, default="bspline"
        Basis system. Fourier is periodic on the grid's domain; Legendre
        polynomials are shifted to it.
    n_basis : int, default=None
        Number of basis functions. None means the basis' default (20
        B-splines, 21 Fourier functions, 12 Legendre polynomials) capped by
        the number of grid points. With ``alpha=0`` it may not exceed the
        number of grid points.
    degree : int, default=3
        Degree of the B-splines (3: cubic). Ignored by the other bases.
    interior_knots : array-like of shape (n_knots,), default=None
        Interior knots of the B-splines, strictly inside the domain; None
        means evenly spaced. When given, ``n_basis`` follows from it.
    alpha : float, default=0.0
        Roughness penalty ``alpha * int (D^q f)^2`` added to the weighted
        least-squares criterion; 0 for plain projection.
    penalty_order : int, default=2
        Derivative order ``q`` of the roughness penalty.
    grid : array-like of shape (n_features,), default=None
        Sampling points of the columns of ``X``. None means the numeric column
        labels of a DataFrame, else evenly spaced points on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule for the weights of the least-squares fit.

    Attributes
    ----------
    grid_ : ndarray of shape (n_features,)
        The grid used at fit.
    quadrature_weights_ : ndarray of shape (n_features,)
        Quadrature weights on ``grid_``.
    n_basis_ : int
        Number of basis functions (output features).
    gram_ : ndarray of shape (n_basis_, n_basis_)
        Exact Gram matrix ``int phi_i phi_j`` of the basis on the domain.
    projection_ : ndarray of shape (n_basis_, n_features)
        The linear operator applied by :meth:`transform` (``X @ projection_.T``).
    reconstruction_ : ndarray of shape (n_features, n_basis_)
        Values on ``grid_`` of the orthonormalised basis functions, used by
        :meth:`inverse_transform`.
    %(n_samples_seen)s
    %(curve_input_attributes)s

    See Also
    --------
    skfunc.preprocessing.CurveSmoother : Smoothed curve values instead of
        coordinates, with the penalty chosen by GCV.
    sklearn.preprocessing.SplineTransformer : B-splines of each feature
        separately, not of the curve across features.

    Notes
    -----
    The fit minimises ``sum_j w_j (x_j - f(t_j))^2 + alpha int (D^q f)^2``
    over ``f = sum_k c_k phi_k``, with quadrature weights ``w``, and returns
    ``G^{1/2} c`` for the exact Gram matrix ``G``. The operator depends on
    the grid, not on the curves, so :meth:`partial_fit` only validates
    further batches against the first one's grid.

    Dask arrays are accepted: ``fit`` validates them block by block on the
    workers, and ``transform`` returns a lazy dask array computed block by
    block (rows must not be split across blocks; see ``skfunc._dask``).

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 4-5. Springer.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.preprocessing import BasisFeatures
    >>> t = np.linspace(0, 1, 101)
    >>> X = np.array([np.sin(2 * np.pi * t), np.cos(2 * np.pi * t)])
    >>> features = BasisFeatures(basis="fourier", n_basis=3).fit(X)
    >>> Z = features.transform(X)
    >>> Z.shape
    (2, 3)
    >>> np.round(np.linalg.norm(Z, axis=1), 3)  # L2 norms of the curves
    array([0.707, 0.707])
    """

    #: fit runs on skfunc._dask.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    _parameter_constraints = {
        **BASIS_CONSTRAINTS,
        "alpha": [Interval(Real, 0, None, closed="left")],
    }

    def __init__(self, basis="bspline", n_basis=None, *, degree=3, interior_knots=None,
                 alpha=0.0, penalty_order=2, grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def _validate_batch(self, X, y, sample_weight, first):
        return (validate_curves(self, X, reset=first),)

    def _statistics(self, X):
        """The row count: the operator depends on the grid only."""
        return {"n_samples": X.shape[0]}

    def _solve(self, stats):
        """The projection and reconstruction operators on ``grid_``."""
        basis = basis_for(self, self.grid_, cap=self.alpha == 0)
        w = quadrature_weights(self.grid_, self.quadrature)
        self.quadrature_weights_ = w
        self.n_basis_ = basis.n_basis
        self.gram_ = basis.gram()
        self.projection_, self.reconstruction_ = orthonormal_operators(
            basis, self.grid_, w, self.alpha, self.penalty_order
        )

    def transform(self, X):
        """Coordinates of each curve's fitted function in the orthonormal basis.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves on the fitted grid.

        Returns
        -------
        Z : ndarray of shape (n_samples, n_basis_)
            A lazy dask array when X is one.
        """
        check_is_fitted(self)
        X = validate_curves(self, X, reset=False)
        return chunked_matmul(X, self.projection_.T)

    def inverse_transform(self, X):
        """Values on ``grid_`` of the functions with coordinates ``X``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_basis_)
            Coordinates, as returned by :meth:`transform`.

        Returns
        -------
        curves : ndarray of shape (n_samples, n_features_in_)
        """
        check_is_fitted(self)
        X = check_rows(X, self.n_basis_, "coordinates per row (n_basis_)")
        return chunked_matmul(X, self.reconstruction_.T)

    def get_feature_names_out(self, input_features=None):
        """Names of the output coordinates, one per basis function.

        Parameters
        ----------
        input_features : array-like of str or None, default=None
            Ignored beyond validation against ``feature_names_in_``.

        Returns
        -------
        feature_names_out : ndarray of str objects
        """
        check_is_fitted(self)
        _check_feature_names_in(self, input_features, generate_names=False)
        names = basis_for(self, self.grid_, cap=False).feature_names()
        return np.asarray(names, dtype=object)
