"""Grids and quadrature: where the curves are sampled and how to integrate there.

A curve is a row of ``X``: its values at grid points ``t_0 < ... < t_{m-1}``.
Integrals over the domain are weighted sums ``sum_j w_j f(t_j)`` with the
quadrature weights computed here, correct on uneven grids.
"""

import numbers

import numpy as np

QUADRATURES = ("trapezoid", "simpson")


def check_grid(grid, n_points=None, *, name="grid", data_name="X"):
    """Validate a grid and return it as a new 1-D float64 array.

    Parameters
    ----------
    grid : array-like of shape (m,)
        Sampling points; must be finite and strictly increasing.
    n_points : int, default=None
        Required length (the number of columns of ``X``); not checked if None.
    name : str, default="grid"
        Name of the parameter, used in error messages.
    data_name : str, default="X"
        Name of the sampled data whose columns the grid describes.

    Returns
    -------
    grid : ndarray of shape (m,)
    """
    if _is_complex(grid):  # np.array(..., float64) would drop the imaginary part
        raise TypeError(f"{name} must hold real numbers; got complex values.")
    try:
        arr = np.array(grid, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise TypeError(
            f"{name} must be a 1-D array of numbers; got {type(grid).__name__}."
        ) from exc
    if arr.ndim != 1:
        raise ValueError(
            f"{name} must be 1-D (one point per column of X); "
            f"got an array of shape {arr.shape}."
        )
    if n_points is not None and arr.shape[0] != n_points:
        raise ValueError(
            f"{name} has {arr.shape[0]} points but {data_name} has {n_points} columns; "
            f"a grid needs one point per column."
        )
    if arr.shape[0] < 2:
        raise ValueError(
            f"{name} has {arr.shape[0]} point(s); a curve needs at least 2 grid "
            "points (columns of X)."
        )
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must contain only finite values; got NaN or inf.")
    steps = np.diff(arr)
    if np.any(steps <= 0):
        j = int(np.flatnonzero(steps <= 0)[0])
        raise ValueError(
            f"{name} must be strictly increasing with no repeated points; "
            f"{name}[{j}]={arr[j]!r} is followed by {name}[{j + 1}]={arr[j + 1]!r}."
        )
    return arr


def _as_number(label):
    """Return ``label`` as a float, or None when it is not a number."""
    if isinstance(label, bool):
        return None
    if isinstance(label, numbers.Real):
        return float(label)
    if isinstance(label, str):
        try:
            return float(label)
        except ValueError:
            return None
    return None


def grid_from_labels(labels):
    """Infer a grid from column labels.

    Returns the labels as floats when all of them are numbers (or strings
    that parse as numbers) and None when none of them is; a mixture is an
    error.
    """
    values = [_as_number(label) for label in labels]
    numeric = [v is not None for v in values]
    if all(numeric):
        return check_grid(values, name="grid inferred from the column labels")
    if not any(numeric):
        return None
    bad = [repr(lab) for lab, ok in zip(labels, numeric) if not ok][:3]
    raise ValueError(
        "The column labels of X mix numbers and words (for example "
        f"{', '.join(bad)}), so no grid can be inferred from them. Use numeric "
        "labels for all columns (the sampling points), or none, or pass grid=."
    )


def resolve_grid(grid, X, n_points, *, name="grid", data_name="X"):
    """The grid for ``X``: ``grid`` if given, else numeric DataFrame column
    labels, else evenly spaced points on [0, 1]. ``name`` and ``data_name``
    are the parameter and the data named in error messages."""
    if grid is not None:
        return check_grid(grid, n_points, name=name, data_name=data_name)
    columns = getattr(X, "columns", None)
    if columns is not None:
        inferred = grid_from_labels(list(columns))
        if inferred is not None:
            return check_grid(inferred, n_points)
    if n_points < 2:
        check_grid(np.zeros(n_points), n_points)  # raises the "at least 2" error
    return np.linspace(0.0, 1.0, n_points)


def _is_complex(values):
    try:
        return np.iscomplexobj(values)
    except (TypeError, ValueError):  # ragged or odd input: check_grid explains it
        return False


def grid_weights(grid, n_points, quadrature="trapezoid", data_name="X"):
    """Quadrature weights for data with ``n_points`` columns on ``grid``
    (None: evenly spaced on [0, 1]), for integrals of arbitrary curves.

    The weights are never negative: a composite Simpson rule on a very uneven
    grid can give negative weights (then the "squared norm" of a curve can be
    negative), and such a grid is refused with a ``ValueError`` that advises
    the trapezoid rule, rather than silently changing the rule. A complex
    grid is a ``TypeError`` (from :func:`check_grid`).
    """
    if grid is None:
        grid = np.linspace(0.0, 1.0, n_points)
    w = quadrature_weights(check_grid(grid, n_points, data_name=data_name), quadrature)
    if np.any(w < 0):
        j = int(np.argmin(w))
        raise ValueError(
            f"quadrature={quadrature!r} gives a negative weight ({w[j]:.3g} at grid "
            f"point {j}) on this uneven grid, so integrals of squares could come out "
            "negative. Use quadrature='trapezoid' (weights always positive) or a "
            "more even grid."
        )
    return w


def check_quadrature(quadrature):
    if quadrature not in QUADRATURES:
        raise ValueError(
            f"quadrature must be one of {QUADRATURES}; got {quadrature!r}."
        )
    return quadrature


def quadrature_weights(grid, quadrature="trapezoid"):
    """Weights ``w`` with ``sum(w * f(grid))`` approximating the integral of f.

    Parameters
    ----------
    grid : array-like of shape (m,)
        Strictly increasing points, possibly uneven.
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Composite trapezoid rule, or composite Simpson rule for uneven
        spacing; with an odd number of intervals the last one is handled by
        the three-point correction that ``scipy.integrate.simpson`` uses
        (Cartwright, 2017).

    Returns
    -------
    w : ndarray of shape (m,)

    References
    ----------
    Davis, P. J. and Rabinowitz, P. (1984). *Methods of Numerical
    Integration*, 2nd ed. Academic Press.
    """
    t = check_grid(grid)
    check_quadrature(quadrature)
    h = np.diff(t)
    w = np.zeros_like(t)
    if quadrature == "trapezoid" or t.size == 2:
        w[:-1] += h / 2
        w[1:] += h / 2
        return w
    n_int = h.size
    n_even = n_int - (n_int % 2)
    h0, h1 = h[0:n_even:2], h[1:n_even:2]
    s = h0 + h1
    np.add.at(w, np.arange(0, n_even, 2), s / 6 * (2 - h1 / h0))
    np.add.at(w, np.arange(1, n_even, 2), s**3 / (6 * h0 * h1))
    np.add.at(w, np.arange(2, n_even + 1, 2), s / 6 * (2 - h0 / h1))
    if n_int % 2:
        h0, h1 = h[-2], h[-1]
        w[-1] += (2 * h1**2 + 3 * h0 * h1) / (6 * (h0 + h1))
        w[-2] += (h1**2 + 3 * h0 * h1) / (6 * h0)
        w[-3] -= h1**3 / (6 * h0 * (h0 + h1))
    return w
