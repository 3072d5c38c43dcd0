"""Depth and outlyingness of curves with respect to a reference sample.

Every function takes curves ``X`` (rows) and a reference sample (rows, on the
same grid; by default ``X`` itself) and returns one number per curve of ``X``.
Integrals over time use the grid's trapezoid weights divided by the length of
the domain, so the results do not depend on how finely or how evenly the
curves are sampled (up to the quadrature's error).

* :func:`band_depth` -- band depth with bands of two curves (Lopez-Pintado &
  Romo, 2009): the fraction of pairs of reference curves whose band holds the
  whole curve.
* :func:`modified_band_depth` -- the time a curve spends inside each band,
  averaged over pairs (Lopez-Pintado & Romo, 2009), by the exact rank formula
  of Sun, Genton & Nychka (2012): O(n log n) per grid point, no pairs.
* :func:`integrated_depth` -- the univariate depth ``1 - |1/2 - F_t(x(t))|``
  integrated over time (Fraiman & Muniz, 2001).
* :func:`magnitude_shape_outlyingness` -- mean and variation of the
  directional outlyingness ``(x(t) - median_t) / MAD_t`` (Dai & Genton, 2018).
"""

import numpy as np
from sklearn.utils.validation import check_array

from ._docstrings import fill_doc
from ._grid import check_curve_points, grid_weights, resolve_grid

#: 1 / Phi^{-1}(3/4): makes the MAD a consistent scale for normal data
#: (common practice; Hampel, 1974)
MAD_TO_SD = 1.482602218505602
#: sqrt(pi / 2): the same for the mean absolute deviation (common practice)
MEAN_AD_TO_SD = 1.2533141373155001
#: curves per block of the outlyingness: 512 curves of a few hundred points
#: keep the temporaries within a processor cache (measured 1.5-2x faster
#: than whole arrays of 2,500-20,000 curves x 200 points)
OUTLYINGNESS_ROWS = 512
#: grid points per block of the pointwise median and MAD: a contiguous
#: copy of 16 columns is medianed faster, and in time linear in the number
#: of curves (measured 8.4-9.2 us per curve of 200 points from 2,500 to
#: 40,000 curves, against 10-13 us for whole columns of the array)
MEDIAN_COLUMNS = 16
#: ... or more columns for few curves, up to about this many values per
#: block (256 KiB of float64): each block costs two np.median calls, about
#: 70 us each at 100 curves, whatever its size
MEDIAN_VALUES = 1 << 15


def check_curves(X, name="X", *, min_curves=1, what="this depth"):
    """``X`` as a finite float64 array of curves (rows) with >= 2 grid points."""
    values = check_array(X, dtype=np.float64, ensure_all_finite=True,
                         ensure_min_samples=1, input_name=name)
    check_curve_points(values.shape[1], data_name=name)
    if values.shape[0] < min_curves:
        raise ValueError(
            f"{name} has {values.shape[0]} curve(s); {what} needs at least "
            f"{min_curves} reference curves."
        )
    return values


def time_weights(grid, n_points):
    """Trapezoid weights of the grid divided by the length of the domain.

    They sum to 1, so a weighted sum is the average over time
    ``1/|T| int f(t) dt``.
    """
    w = grid_weights(grid, n_points)
    return w / w.sum()


def _prepare(X, reference, grid, min_reference, what):
    values = check_curves(X, what=what)
    ref = values if reference is None else check_curves(
        reference, "reference", what=what)
    if ref.shape[1] != values.shape[1]:
        raise ValueError(
            f"X has {values.shape[1]} grid points but reference has "
            f"{ref.shape[1]}; both must be sampled on the same grid."
        )
    if ref.shape[0] < min_reference:
        raise ValueError(
            f"reference has {ref.shape[0]} curve(s); {what} needs at least "
            f"{min_reference} curves (a band is made of 2)."
        )
    grid = resolve_grid(grid, X, values.shape[1])
    return values, ref, time_weights(grid, values.shape[1])


def _order_counts(ref_column, x_column):
    """Numbers of reference values strictly below and strictly above each x."""
    column = np.sort(ref_column)
    below = np.searchsorted(column, x_column, side="left")
    above = column.size - np.searchsorted(column, x_column, side="right")
    return below.astype(np.float64), above.astype(np.float64)


def _pairs(k):
    return k * (k - 1) / 2


def mbd_values(X, reference, weights):
    """Modified band depth of validated curves (no checks).

    A pair of reference values brackets ``x(t)`` unless both lie strictly
    below or both strictly above it, so with ``L`` values below and ``G``
    above, ``C(n, 2) - C(L, 2) - C(G, 2)`` pairs hold ``x(t)``. For a curve of
    the reference sample with rank ``r`` (no ties) this is Sun, Genton &
    Nychka's ``(r - 1)(n - r) + n - 1``; the form with ``L`` and ``G`` also
    serves ties and new curves.
    """
    n = reference.shape[0]
    depth = np.zeros(X.shape[0])
    for j, w in enumerate(weights):
        below, above = _order_counts(reference[:, j], X[:, j])
        depth += w * (_pairs(n) - _pairs(below) - _pairs(above))
    return depth / _pairs(n)


def integrated_values(X, reference, weights):
    """Fraiman-Muniz integrated depth of validated curves (no checks)."""
    n = reference.shape[0]
    depth = np.zeros(X.shape[0])
    for j, w in enumerate(weights):
        _, above = _order_counts(reference[:, j], X[:, j])
        cdf = (n - above) / n  # F_t(x) = #{x_i(t) <= x(t)} / n
        depth += w * (1.0 - np.abs(0.5 - cdf))
    return depth


def _void_rows(bits):
    packed = np.ascontiguousarray(np.packbits(bits, axis=1))
    return packed.view(np.dtype((np.void, packed.shape[1]))).ravel()


def _bands_holding(x, reference):
    """Number of pairs of reference curves whose band holds ``x`` everywhere.

    With ``s_i(t) = sign(x_i(t) - x(t))``, the band of ``(i, j)`` holds x
    exactly when ``s_i(t) s_j(t) <= 0`` at every t. For two curves that
    never touch x this means ``s_j = -s_i``: such pairs are counted by
    matching each sign pattern with its complement (sorting, O(n log n)).
    Curves touching x somewhere (ties; x itself when it belongs to the
    reference) are compared with every curve directly.
    """
    signs = np.sign(reference - x)
    touching = np.any(signs == 0, axis=1)
    clear = signs[~touching] > 0
    count = 0
    if clear.shape[0]:
        keys = _void_rows(clear)
        unique, counts = np.unique(keys, return_counts=True)
        complement = _void_rows(~clear)
        where = np.minimum(np.searchsorted(unique, complement), unique.size - 1)
        found = unique[where] == complement
        count += int(np.sum(counts[where][found])) // 2  # each pair seen twice
    touching_rows = np.flatnonzero(touching)
    for a, i in enumerate(touching_rows):
        s = signs[i]
        live = s != 0
        clash = np.any(signs[:, live] == s[live], axis=1)
        compatible = ~clash
        compatible[i] = False
        compatible[touching_rows[: a + 1]] = False  # touching pairs once
        count += int(np.sum(compatible))
    return count


def band_values(X, reference):
    """Band depth (bands of 2 curves) of validated curves (no checks)."""
    n = reference.shape[0]
    return np.array([_bands_holding(x, reference) for x in X]) / _pairs(n)


def robust_location_scale(reference):
    """Pointwise median and scale: the MAD (x 1.4826), where it is zero the
    mean absolute deviation (x 1.2533), else 0 (the curves do not vary).
    A block of MEDIAN_COLUMNS grid points (more for few curves,
    MEDIAN_VALUES) at a time, copied contiguous."""
    n, m = reference.shape
    median, scale = np.empty(m), np.empty(m)
    width = max(MEDIAN_COLUMNS, MEDIAN_VALUES // max(n, 1))
    for start in range(0, m, width):
        columns = slice(start, start + width)
        block = np.array(reference[:, columns].T, dtype=np.float64, order="C")
        median[columns] = np.median(block, axis=1)
        block -= median[columns, None]
        np.abs(block, out=block)  # the absolute deviations
        scale[columns] = MAD_TO_SD * np.median(block, axis=1)
        flat = scale[columns] == 0
        if np.any(flat):
            scale[columns][flat] = MEAN_AD_TO_SD * np.mean(block[flat], axis=1)
    return median, scale


def outlyingness_values(X, median, scale):
    """Pointwise directional outlyingness ``(x - median) / scale``; 0 where the
    reference curves do not vary (zero scale)."""
    safe = np.where(scale > 0, scale, 1.0)
    return np.where(scale > 0, (X - median) / safe, 0.0)


def magnitude_shape_values(X, median, scale, weights):
    """Mean and variation of directional outlyingness (no checks), a block of
    OUTLYINGNESS_ROWS curves at a time (the temporaries stay in cache)."""
    mean, variation = np.empty(X.shape[0]), np.empty(X.shape[0])
    for start in range(0, X.shape[0], OUTLYINGNESS_ROWS):
        rows = slice(start, start + OUTLYINGNESS_ROWS)
        out = outlyingness_values(X[rows], median, scale)
        mean[rows] = out @ weights
        out -= mean[rows, None]
        out *= out
        variation[rows] = out @ weights
    return mean, variation


@fill_doc
def band_depth(X, reference=None, *, grid=None):
    """Band depth of curves, with bands formed by two reference curves.

    The band of two curves is the region between them; the depth of ``x``
    is the fraction of pairs of reference curves whose band holds ``x`` at
    every grid point (Lopez-Pintado & Romo, 2009, with J = 2). A curve that
    belongs to the reference sample lies in every band it forms itself, as
    in the sample version of the definition.

    Parameters
    ----------
    %(band_depth_X)s
    grid : array-like of shape (n_points,), default=None
        Sampling points. Band depth does not depend on them; accepted for a
        uniform signature (and validated).

    %(band_depth_returns)s

    See Also
    --------
    modified_band_depth : The time spent inside the bands, which separates
        curves that cross many others; O(n log n) per grid point.

    Notes
    -----
    Pairs are not enumerated. With ``s_i(t)`` the sign of ``x_i(t) - x(t)``,
    the band of ``(i, j)`` holds ``x`` exactly when ``s_i(t) s_j(t) <= 0``
    at every grid point; for curves that never touch ``x`` this means the
    sign pattern of ``j`` is the complement of that of ``i``, so pairs are
    counted by sorting the patterns. The cost is O(n m) per curve plus
    O(n m) for each reference curve that touches ``x`` (ties), so scoring
    the reference sample against itself costs O(n^2 m).

    References
    ----------
    Lopez-Pintado, S. and Romo, J. (2009). On the concept of depth for
    functional data. *Journal of the American Statistical Association*
    104(486), 718-734.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.outliers import band_depth
    >>> t = np.linspace(0, 1, 20)
    >>> curves = np.array([0.0, 1.0, 2.0, 3.0, 4.0])[:, None] + np.sin(2 * np.pi * t)
    >>> band_depth(curves)  # the middle curve lies in 6 of the 10 bands
    array([0.4, 0.7, 0.8, 0.7, 0.4])
    """
    values, ref, _ = _prepare(X, reference, grid, 2, "band depth")
    return band_values(values, ref)


@fill_doc
def modified_band_depth(X, reference=None, *, grid=None):
    """Modified band depth of curves with respect to a reference sample.

    For each pair of reference curves, the proportion of time the curve
    spends inside their band, averaged over all pairs (Lopez-Pintado & Romo,
    2009, J = 2). Time is measured with the grid's trapezoid weights, so the
    depth does not depend on the sampling.

    Parameters
    ----------
    %(band_depth_X)s
    %(depth_grid)s

    %(band_depth_returns)s

    See Also
    --------
    band_depth, integrated_depth
    CurveOutlierDetector : Outlier detection built on these depths.

    Notes
    -----
    At time ``t`` a pair of reference values fails to bracket ``x(t)`` only
    when both lie strictly below or both strictly above it. With ``L`` values
    below and ``G`` above, ``C(n, 2) - C(L, 2) - C(G, 2)`` pairs bracket
    ``x(t)``; for a curve of the sample with rank ``r`` and no ties this is
    the formula ``(r - 1)(n - r) + n - 1`` of Sun, Genton & Nychka (2012).
    ``L`` and ``G`` come from a sorted copy of each column, so the cost is
    O((n + n_curves) log n) per grid point.

    References
    ----------
    Lopez-Pintado, S. and Romo, J. (2009). On the concept of depth for
    functional data. *Journal of the American Statistical Association*
    104(486), 718-734.

    Sun, Y., Genton, M. G. and Nychka, D. W. (2012). Exact fast computation
    of band depth for large functional datasets: how quickly can one million
    curves be ranked? *Stat* 1(1), 68-74.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.outliers import modified_band_depth
    >>> t = np.linspace(0, 1, 50)
    >>> curves = np.arange(5.0)[:, None] + np.sin(2 * np.pi * t)
    >>> modified_band_depth(curves)  # (r - 1)(n - r) + n - 1 over C(5, 2)
    array([0.4, 0.7, 0.8, 0.7, 0.4])
    >>> modified_band_depth(curves[[2]] + 0.5, reference=curves)
    array([0.6])
    """
    values, ref, weights = _prepare(X, reference, grid, 2, "band depth")
    return mbd_values(values, ref, weights)


@fill_doc
def integrated_depth(X, reference=None, *, grid=None):
    """Integrated depth of curves (Fraiman & Muniz, 2001).

    At each time the univariate depth ``1 - |1/2 - F_t(x(t))|``, with
    ``F_t`` the empirical distribution function of the reference values at
    ``t``, averaged over time with the grid's trapezoid weights.

    Parameters
    ----------
    %(depth_X)s
    reference : array-like of shape (n_reference, n_points), default=None
        The sample the depth refers to, on the same grid; None means ``X``.
    %(depth_grid)s

    Returns
    -------
    depth : ndarray of shape (n_curves,)
        Values in [1/2, 1]; larger is more central.

    References
    ----------
    Fraiman, R. and Muniz, G. (2001). Trimmed means for functional data.
    *Test* 10(2), 419-440.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.outliers import integrated_depth
    >>> curves = np.arange(4.0)[:, None] + np.zeros((4, 10))
    >>> integrated_depth(curves)  # F = 1/4, 2/4, 3/4, 1
    array([0.75, 1.  , 0.75, 0.5 ])
    """
    values, ref, weights = _prepare(X, reference, grid, 1, "integrated depth")
    return integrated_values(values, ref, weights)


@fill_doc
def magnitude_shape_outlyingness(X, reference=None, *, grid=None):
    """Magnitude and shape parts of the directional outlyingness of curves.

    The directional outlyingness of ``x`` at time ``t`` is
    ``O(t) = (x(t) - median_t) / MAD_t`` with the pointwise median and MAD
    (scaled to a normal SD) of the reference curves: the univariate
    Stahel-Donoho outlyingness with the direction of the departure (Dai &
    Genton, 2018). Its time average ``MO`` measures how far, and on which
    side, the curve lies (magnitude); its variation
    ``VO = 1/|T| int (O(t) - MO)^2 dt`` measures how differently it moves
    (shape).

    Parameters
    ----------
    %(depth_X)s
    reference : array-like of shape (n_reference, n_points), default=None
        The sample the outlyingness refers to; None means ``X``.
    %(depth_grid)s

    Returns
    -------
    magnitude : ndarray of shape (n_curves,)
        Mean directional outlyingness ``MO`` (signed, in robust SD units).
    shape : ndarray of shape (n_curves,)
        Variation of directional outlyingness ``VO`` (>= 0).

    Notes
    -----
    Where the MAD is zero the mean absolute deviation (scaled by
    ``sqrt(pi / 2)``) is used; grid points where the reference curves do not
    vary at all carry no outlyingness.

    References
    ----------
    Dai, W. and Genton, M. G. (2018). Multivariate functional data
    visualization and outlier detection. *Journal of Computational and
    Graphical Statistics* 27(4), 923-934.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.outliers import magnitude_shape_outlyingness
    >>> t = np.linspace(0, 1, 101)
    >>> rng = np.random.default_rng(0)
    >>> curves = rng.normal(size=(50, 1)) + np.sin(2 * np.pi * t)
    >>> shifted = curves[:1] + 5                  # a magnitude outlier
    >>> wiggly = curves[:1] + np.sin(12 * np.pi * t)  # a shape outlier
    >>> mo, vo = magnitude_shape_outlyingness(
    ...     np.vstack([shifted, wiggly]), reference=curves)
    >>> bool(mo[0] > 3), bool(vo[1] > 10 * vo[0])
    (True, True)
    """
    values, ref, weights = _prepare(X, reference, grid, 1, "outlyingness")
    median, scale = robust_location_scale(ref)
    return magnitude_shape_values(values, median, scale, weights)


def central_region(X, depth, proportion=0.5):
    """Median curve (deepest) and the envelope of the deepest ``proportion``
    of the curves (at least one), as in Sun & Genton (2011)."""
    order = np.argsort(-depth, kind="stable")
    k = max(1, int(np.ceil(proportion * X.shape[0])))
    inner = X[order[:k]]
    return order[0], inner.min(axis=0), inner.max(axis=0)


def fence_exceedance(X, lower, upper):
    """How far each curve leaves the central region, in units of its range.

    ``max_t max(x(t) - upper(t), lower(t) - x(t)) / (upper(t) - lower(t))``:
    negative inside the region, above ``f`` when the curve crosses the fence
    ``f`` x range beyond it somewhere. Where the region has zero width, a
    curve outside it scores +inf and a curve on it 0.
    """
    width = upper - lower
    gap = np.maximum(X - upper, lower - X)
    safe = np.where(width > 0, width, 1.0)
    ratio = np.where(width > 0, gap / safe,
                     np.where(gap > 0, np.inf, 0.0))
    return ratio.max(axis=1)

