"""Geometry of L2: inner products, norms, distances and moments of curves.

All functions take curves as rows sampled on a common ``grid`` (default:
evenly spaced on [0, 1]) and integrate with quadrature weights, so results
are integrals, correct on uneven grids, and do not depend on how densely the
curves were sampled beyond the quadrature's own error.

Notation: ``<f, g> = int_T f g dt`` and ``||f|| = <f, f>^(1/2)`` over the
domain ``T = [t_0, t_{m-1}]`` of length ``|T|``.
"""

import numpy as np
from sklearn.utils.validation import check_array

from ._grid import grid_weights

__all__ = [
    "inner_product",
    "norm",
    "l2_distance",
    "mean_value",
    "mean_function",
    "variance_function",
    "covariance_function",
    "correlation",
    "simple_regression",
]


def _curves(X, name="X"):
    X = check_array(X, ensure_2d=False, dtype=np.float64, input_name=name)
    if X.ndim not in (1, 2):
        raise ValueError(
            f"{name} must be one curve (1-D) or curves as rows (2-D); got {X.ndim}-D."
        )
    return X


def inner_product(x, y, *, grid=None, quadrature="trapezoid"):
    """L2 inner products ``<x_i, y_i>`` of corresponding curves.

    Parameters
    ----------
    x, y : array-like of shape (n_points,) or (n_curves, n_points)
        Curves sampled on ``grid``; 2-D inputs pair row i with row i, and a
        single curve broadcasts against many.
    grid : array-like of shape (n_points,), default=None
        Sampling points; None means evenly spaced on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule.

    Returns
    -------
    float or ndarray of shape (n_curves,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.hilbert import inner_product
    >>> t = np.linspace(0, 1, 1001)
    >>> round(float(inner_product(t, t, grid=t)), 4)  # int_0^1 t^2 dt = 1/3
    0.3333
    """
    x, y = _curves(x, "x"), _curves(y, "y")
    if x.shape[-1] != y.shape[-1]:
        raise ValueError(
            f"x and y must be sampled on the same grid; got {x.shape[-1]} and "
            f"{y.shape[-1]} points."
        )
    w = grid_weights(grid, x.shape[-1], quadrature)
    return (x * y) @ w


def norm(x, *, grid=None, quadrature="trapezoid"):
    """L2 norms ``||x_i||`` of curves (see :func:`inner_product`)."""
    return np.sqrt(np.maximum(inner_product(x, x, grid=grid, quadrature=quadrature), 0))


def l2_distance(X, Y=None, *, grid=None, quadrature="trapezoid"):
    """Pairwise L2 distances ``||X_i - Y_j||`` between curves.

    Shaped like :func:`sklearn.metrics.pairwise_distances`: (n_X, n_Y).

    Parameters
    ----------
    X : array-like of shape (n_X, n_points)
    Y : array-like of shape (n_Y, n_points), default=None
        None means ``Y = X``.
    grid, quadrature : see :func:`inner_product`.

    Returns
    -------
    distances : ndarray of shape (n_X, n_Y)
    """
    X = np.atleast_2d(_curves(X, "X"))
    Y = X if Y is None else np.atleast_2d(_curves(Y, "Y"))
    if X.shape[1] != Y.shape[1]:
        raise ValueError(
            f"X and Y must be sampled on the same grid; got {X.shape[1]} and "
            f"{Y.shape[1]} points."
        )
    w = grid_weights(grid, X.shape[1], quadrature)
    sq = (X**2) @ w
    sq_y = (Y**2) @ w
    d2 = sq[:, None] + sq_y[None, :] - 2 * (X * w) @ Y.T
    return np.sqrt(np.maximum(d2, 0))


def mean_value(x, *, grid=None, quadrature="trapezoid"):
    """Average value ``int x / |T|`` of each curve.

    It is the constant c minimising ``||x - c||``: the best constant
    approximation of the curve in L2.
    """
    x = _curves(x, "x")
    w = grid_weights(grid, x.shape[-1], quadrature)
    return (x @ w) / w.sum()


def mean_function(X):
    """Pointwise mean of the curves: the function ``mean_i X_i(t)``."""
    return np.mean(np.atleast_2d(_curves(X)), axis=0)


def variance_function(X, *, ddof=1):
    """Pointwise variance ``Var_i X_i(t)`` of the curves."""
    X = np.atleast_2d(_curves(X))
    return np.var(X, axis=0, ddof=ddof)


def covariance_function(X, *, ddof=1):
    """Covariance surface ``Cov(X(s), X(t))`` on the grid, shape (m, m)."""
    X = np.atleast_2d(_curves(X))
    if X.shape[0] <= ddof:
        raise ValueError(
            f"covariance_function needs more than ddof={ddof} curves; got {X.shape[0]}."
        )
    centered = X - X.mean(axis=0)
    return centered.T @ centered / (X.shape[0] - ddof)


def correlation(x, y, *, grid=None, quadrature="trapezoid"):
    """Hilbert-space correlation of two curves.

    ``<x - xbar, y - ybar> / (||x - xbar|| ||y - ybar||)``, with ``xbar`` the
    average value of x over the domain (:func:`mean_value`). It lies in
    [-1, 1] and is the cosine of the angle between the centred curves.

    Parameters
    ----------
    x, y : array-like of shape (n_points,) or (n_curves, n_points)
    grid, quadrature : see :func:`inner_product`.

    Returns
    -------
    float or ndarray of shape (n_curves,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.hilbert import correlation
    >>> t = np.linspace(0, 1, 201)
    >>> round(float(correlation(t, 3 * t + 1, grid=t)), 6)
    1.0
    """
    kw = {"grid": grid, "quadrature": quadrature}
    x, y = _curves(x, "x"), _curves(y, "y")
    xc = x - np.asarray(mean_value(x, **kw))[..., None]
    yc = y - np.asarray(mean_value(y, **kw))[..., None]
    denom = norm(xc, **kw) * norm(yc, **kw)
    if np.any(denom == 0):
        raise ValueError("correlation is undefined for a constant curve (zero centred norm).")
    return inner_product(xc, yc, **kw) / denom


def simple_regression(x, y, *, grid=None, quadrature="trapezoid"):
    """Least-squares fit ``y(t) ~ b0 + b1 x(t)`` in L2, with scalar b0, b1.

    Minimises ``||y - b0 - b1 x||`` over the domain: ``b1 = <y~, x~> / <x~, x~>``
    for the centred curves ``x~ = x - xbar`` and ``b0 = ybar - b1 xbar``.

    Parameters
    ----------
    x, y : array-like of shape (n_points,) or (n_curves, n_points)
    grid, quadrature : see :func:`inner_product`.

    Returns
    -------
    b0, b1 : float or ndarray of shape (n_curves,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.hilbert import simple_regression
    >>> t = np.linspace(0, 1, 51)
    >>> b0, b1 = simple_regression(np.sin(t), 2 + 3 * np.sin(t), grid=t)
    >>> round(float(b0), 6), round(float(b1), 6)
    (2.0, 3.0)
    """
    kw = {"grid": grid, "quadrature": quadrature}
    x, y = _curves(x, "x"), _curves(y, "y")
    x_bar, y_bar = mean_value(x, **kw), mean_value(y, **kw)
    xc = x - np.asarray(x_bar)[..., None]
    yc = y - np.asarray(y_bar)[..., None]
    sxx = inner_product(xc, xc, **kw)
    if np.any(sxx == 0):
        raise ValueError("simple_regression needs a non-constant x curve.")
    b1 = inner_product(yc, xc, **kw) / sxx
    return y_bar - b1 * x_bar, b1
