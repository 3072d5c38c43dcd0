"""Geometry of L2: inner products, norms, distances and moments of curves.

All functions take curves as rows sampled on a common ``grid`` (default:
evenly spaced on [0, 1]) and integrate with quadrature weights, so results
are integrals, correct on uneven grids, and do not depend on how densely the
curves were sampled beyond the quadrature's own error.

Notation: ``<f, g> = int_T f g dt`` and ``||f|| = <f, f>^(1/2)`` over the
domain ``T = [t_0, t_{m-1}]`` of length ``|T|``.

Numerical care, so that no result is silently wrong:

* curves are divided by their largest absolute value (each curve, or one
  common scale for :func:`l2_distance`) before anything is squared, and the
  scale is multiplied back at the end, so norms and inner products of curves
  near 1e155 do not overflow and curves near 1e-200 do not underflow to zero;
* distances integrate the squared *difference* of two curves, never
  ``||x||^2 + ||y||^2 - 2 <x, y>``, which cancels for close curves far from 0;
* a curve is constant (so :func:`correlation` and the slope of
  :func:`simple_regression` are undefined) when its deviation from its mean
  value is within rounding of its own size: ``max |x - xbar| <= (m + 2) eps
  max |x|`` for m grid points, the forward error bound of the m-term sum
  that gives ``xbar`` (Higham 2002, sec. 3.1) with a factor 2 to spare;
* quadrature weights are never negative: ``quadrature="simpson"`` on a grid
  so uneven that the Simpson weights turn negative is refused (use the
  trapezoid rule there), since a norm could then come out negative;
* complex input is refused, never silently cut to its real part.

References
----------
Higham, N. J. (2002). *Accuracy and Stability of Numerical Algorithms*,
2nd ed. SIAM.
"""

import numpy as np
from scipy.spatial.distance import cdist
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
    try:
        complex_input = np.iscomplexobj(X)
    except (TypeError, ValueError):  # ragged input: check_array explains it
        complex_input = False
    if complex_input:
        raise TypeError(
            f"{name} must hold real curve values; got complex numbers (skfunc "
            "does not drop imaginary parts)."
        )
    try:
        X = check_array(X, ensure_2d=False, allow_nd=True, dtype=np.float64,
                        input_name=name)
    except (TypeError, ValueError) as exc:
        if name in str(exc):  # scikit-learn's message names the argument
            raise
        raise TypeError(
            f"{name} must be an array of real numbers (one curve per row); got "
            f"values that cannot be read as numbers ({type(exc).__name__})."
        ) from exc
    if X.ndim not in (1, 2):
        raise ValueError(
            f"{name} must be one curve (1-D) or curves as rows (2-D); got {X.ndim}-D."
        )
    return X


def _pair(x, y, names=("x", "y")):
    """Check that two sets of curves share a grid and pair row by row."""
    a, b = names
    if x.shape[-1] != y.shape[-1]:
        raise ValueError(
            f"{a} and {b} must be sampled on the same grid; got {x.shape[-1]} and "
            f"{y.shape[-1]} points."
        )
    if x.ndim == y.ndim == 2 and x.shape[0] != y.shape[0] and 1 not in (
        x.shape[0], y.shape[0]
    ):
        raise ValueError(
            f"{a} has {x.shape[0]} curves and {b} has {y.shape[0]}; they are paired "
            f"row by row, so give the same number of rows, or a single curve (1-D) "
            "to pair with every row."
        )


def _unit(x):
    """``(u, s)`` with ``x = s * u``, ``s = max |x|`` along the last axis
    (kept as an axis of length 1) and ``max |u| = 1`` (u = 0 where s = 0)."""
    s = np.max(np.abs(x), axis=-1, keepdims=True)
    return x / np.where(s > 0, s, 1.0), s


def _centred(x, w, name, what):
    """Scaled centring of curves, refusing constant ones.

    Returns ``(u, c, mean, s)`` with ``x = s * (mean + c * u)``, ``max |u| = 1``;
    ``mean`` is the average value of ``x / s``.
    """
    xs, s = _unit(x)
    mean = (xs @ w)[..., None] / w.sum()
    u, c = _unit(xs - mean)
    # max |xs| = 1, so the bound (m + 2) eps max |x| reads (m + 2) eps here
    flat = c[..., 0] <= (x.shape[-1] + 2) * np.finfo(np.float64).eps
    if np.any(flat):
        where = f" (row {int(np.flatnonzero(flat)[0])})" if x.ndim == 2 else ""
        raise ValueError(
            f"{what} is undefined for a constant {name} curve{where}: it does not "
            "vary beyond rounding of its own values."
        )
    return u, c, mean, s


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
    _pair(x, y)
    w = grid_weights(grid, x.shape[-1], quadrature)
    (u, sx), (v, sy) = _unit(x), _unit(y)
    return sx[..., 0] * (((u * v) @ w) * sy[..., 0])


def norm(x, *, grid=None, quadrature="trapezoid"):
    """L2 norms ``||x_i||`` of curves (see :func:`inner_product`).

    Computed as ``s ||x / s||`` with ``s = max |x|``, so it neither overflows
    nor underflows unless the norm itself does.
    """
    x = _curves(x, "x")
    w = grid_weights(grid, x.shape[-1], quadrature)
    u, s = _unit(x)
    return s[..., 0] * np.sqrt((u * u) @ w)


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
    # scipy's cdist sums squared *differences* (no cancellation for close curves
    # far from zero); one common scale keeps the squares finite
    s = max(np.max(np.abs(X)), np.max(np.abs(Y)))
    s = s if s > 0 else 1.0
    root_w = np.sqrt(w) / s
    return s * cdist(X * root_w, Y * root_w)


def mean_value(x, *, grid=None, quadrature="trapezoid"):
    """Average value ``int x / |T|`` of each curve.

    It is the constant c minimising ``||x - c||``: the best constant
    approximation of the curve in L2.
    """
    x = _curves(x, "x")
    w = grid_weights(grid, x.shape[-1], quadrature)
    u, s = _unit(x)
    return s[..., 0] * ((u @ w) / w.sum())


def mean_function(X):
    """Pointwise mean of the curves: the function ``mean_i X_i(t)``."""
    u, s = _unit(np.atleast_2d(_curves(X)).T)
    return s[:, 0] * np.mean(u, axis=1)


def _deviations(X, ddof, what):
    """Centred curves as ``(u, s)`` with deviations ``u * s`` per grid point
    (scaled per column before squaring), refusing too few curves."""
    X = np.atleast_2d(_curves(X))
    if X.shape[0] <= ddof:
        raise ValueError(
            f"{what} needs more than ddof={ddof} curves; got {X.shape[0]}."
        )
    xs, s = _unit(X.T)  # one row per grid point, scaled before summing
    u, c = _unit(xs - xs.mean(axis=1, keepdims=True))
    return u, (s * c)[:, 0], X.shape[0] - ddof


def variance_function(X, *, ddof=1):
    """Pointwise variance ``Var_i X_i(t)`` of the curves.

    Needs more than ``ddof`` curves, like :func:`covariance_function`.
    """
    u, s, dof = _deviations(X, ddof, "variance_function")
    return s * (s * (np.einsum("ji,ji->j", u, u) / dof))


def covariance_function(X, *, ddof=1):
    """Covariance surface ``Cov(X(s), X(t))`` on the grid, shape (m, m)."""
    u, s, dof = _deviations(X, ddof, "covariance_function")
    return s[:, None] * ((u @ u.T / dof) * s[None, :])


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

    Raises
    ------
    ValueError
        When x or y is constant (does not vary beyond rounding of its own
        values): the correlation is undefined.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.hilbert import correlation
    >>> t = np.linspace(0, 1, 201)
    >>> round(float(correlation(t, 3 * t + 1, grid=t)), 6)
    1.0
    """
    x, y = _curves(x, "x"), _curves(y, "y")
    _pair(x, y)
    w = grid_weights(grid, x.shape[-1], quadrature)
    u = _centred(x, w, "x", "correlation")[0]
    v = _centred(y, w, "y", "correlation")[0]
    r = ((u * v) @ w) / np.sqrt(((u * u) @ w) * ((v * v) @ w))
    # |r| <= 1 holds exactly (Cauchy-Schwarz, positive weights); clip rounding
    return np.clip(r, -1.0, 1.0)


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

    Raises
    ------
    ValueError
        When x is constant (does not vary beyond rounding of its own values):
        the slope is undefined. A constant y is fine (slope 0).

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.hilbert import simple_regression
    >>> t = np.linspace(0, 1, 51)
    >>> b0, b1 = simple_regression(np.sin(t), 2 + 3 * np.sin(t), grid=t)
    >>> round(float(b0), 6), round(float(b1), 6)
    (2.0, 3.0)
    """
    x, y = _curves(x, "x"), _curves(y, "y")
    _pair(x, y)
    w = grid_weights(grid, x.shape[-1], quadrature)
    # x = sx (mx + cx u) with max|u| = 1, and likewise for y (constant y allowed)
    u, cx, mx, sx = _centred(x, w, "x", "the slope of simple_regression")
    ys, sy = _unit(y)
    my = (ys @ w)[..., None] / w.sum()
    v, cy = _unit(ys - my)
    b1 = (sy / sx)[..., 0] * (cy / cx)[..., 0] * (((u * v) @ w) / ((u * u) @ w))
    return (sy * my)[..., 0] - b1 * (sx * mx)[..., 0], b1
