"""Grids and quadrature: where the curves are sampled and how to integrate there.

A curve is a row of ``X``: its values at grid points ``t_0 < ... < t_{m-1}``.
Integrals over the domain are weighted sums ``sum_j w_j f(t_j)`` with the
quadrature weights computed here, correct on uneven grids.
"""

import datetime
import numbers

import numpy as np

#: unit of grids inferred from date/time column labels: days (86400 s)
SECONDS_PER_DAY = 86400.0

QUADRATURES = ("trapezoid", "simpson")


def check_curve_points(n_columns, n_covariates=0, data_name="X"):
    """Raise unless X's ``n_columns`` leave at least 2 grid points, one per
    column, before its ``n_covariates`` trailing scalar columns: a single
    point cannot carry a curve (the one rule for numpy and Dask input, and
    for curves passed under another name, ``data_name``)."""
    n_points = n_columns - n_covariates
    if n_covariates and n_points < 2:
        raise ValueError(
            f"X has {n_columns} column(s), of which the last n_covariates="
            f"{n_covariates} are scalar covariates, leaving {n_points} grid "
            "point(s); a curve needs at least 2 grid points (columns of X) "
            "before the covariates."
        )
    if n_columns < 2:
        raise ValueError(
            f"{data_name} has {n_columns} feature(s) (grid points); a curve needs at "
            f"least 2 grid points, one per column of {data_name}, to be represented."
        )


def check_two_dimensional(shape, kind="array", what=" (one curve per row)"):
    """Raise unless ``shape`` is 2-D: X holds one curve per row (the one
    rule for numpy, Dask and memory-mapped input read in batches)."""
    if len(shape) != 2:
        raise ValueError(f"Expected a 2-D {kind}{what}, got {len(shape)}-D with "
                         f"shape {tuple(shape)}.")


def empty_curve_error(row):
    """The error for a row of X with no observed value (all NaN)."""
    return ValueError(
        f"Row {int(row)} of X is entirely NaN: a curve needs observed values to "
        "be represented."
    )


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


def _time_kind(label):
    """"datetime", "timedelta" or None for one column label."""
    if isinstance(label, (datetime.datetime, datetime.date, np.datetime64)):
        return "datetime"
    if isinstance(label, (datetime.timedelta, np.timedelta64)):
        return "timedelta"
    return None


def _days(label, origin):
    """``label - origin`` in days, for datetimes, dates, timedeltas and numpy's."""
    if isinstance(label, (np.datetime64, np.timedelta64)):
        unit = np.timedelta64(1, "ns")
        if origin is not None:
            label = np.datetime64(label, "ns") - np.datetime64(origin, "ns")
        return float(np.timedelta64(label, "ns") / unit) / (SECONDS_PER_DAY * 1e9)
    delta = label if origin is None else label - origin
    if isinstance(delta, datetime.timedelta):
        return delta.total_seconds() / SECONDS_PER_DAY
    raise TypeError


def time_grid(labels):
    """Numeric grid, in days, from date/time column labels.

    Datetime labels (``datetime.date``/``datetime``, pandas ``Timestamp``,
    ``numpy.datetime64``) become days since the first label; Timedelta labels
    (``datetime.timedelta``, pandas ``Timedelta``, ``numpy.timedelta64``)
    become their length in days. Days keep calendar data readable (a month
    is about 30.4) and, since alpha is unit-free, the choice of unit changes
    no fit, only the unit of derivatives and coefficient functions.
    Returns None when the labels are not all of one time kind.
    """
    kinds = {_time_kind(label) for label in labels}
    if len(kinds) != 1 or None in kinds:
        return None
    origin = labels[0] if kinds == {"datetime"} else None
    try:
        values = [_days(label, origin) for label in labels]
    except (TypeError, ValueError) as exc:
        raise ValueError(
            "The column labels of X are dates or times that cannot be compared "
            "(for example dates mixed with timezone-aware datetimes); use labels "
            "of one kind, or pass grid=."
        ) from exc
    return check_grid(values, name="grid inferred from the date/time column labels")


def grid_from_labels(labels):
    """Infer a grid from column labels.

    Returns the labels as floats when all of them are numbers (or strings
    that parse as numbers), days from date/time labels (:func:`time_grid`),
    and None when none of them is a number; a mixture is an error. Other
    labels (words such as month names) give None: the caller then uses
    evenly spaced points.
    """
    labels = list(labels)
    timed = time_grid(labels)
    if timed is not None:
        return timed
    if any(_time_kind(label) for label in labels):
        raise ValueError(
            "The column labels of X mix dates or times with other labels, so no "
            "grid can be inferred from them. Use labels of one kind, or pass grid=."
        )
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


def same_grid(grid, other):
    """Whether two grids are the same points, up to rounding (relative 1e-9):
    the one tolerance for a grid met again (column labels, later batches)."""
    grid, other = np.asarray(grid, dtype=np.float64), np.asarray(other, dtype=np.float64)
    return grid.shape == other.shape and np.allclose(grid, other, rtol=1e-9, atol=0)


def resolve_grid(grid, X, n_points, *, name="grid", data_name="X"):
    """The grid for ``X``: ``grid`` if given, else numeric DataFrame column
    labels, else days from date/time labels (:func:`time_grid`), else evenly
    spaced points on [0, 1] (words such as month names carry no spacing).
    ``name`` and ``data_name`` are the parameter and the data named in error
    messages."""
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


#: data terms of a smoother: mean squared error over the observed points
#: (measurement noise, the default) or the quadrature-weighted L2 distance
DATA_TERMS = ("mean", "integral")


def data_weights(grid, data_term="mean", observed=None):
    """Weights of a smoother's data term ``sum_j w_j (x_j - f(t_j))^2``.

    ``"mean"``: ``w_j = 1 / n_obs`` on the observed points, the mean squared
    error -- noise of the same variance at every observation, the usual
    measurement model, and what generalized cross-validation assumes
    (Craven and Wahba 1979). ``"integral"``: trapezoid weights, so the data
    term approximates ``int (x - f)^2`` for curves known as functions (noise
    variance then effectively grows where points are dense). ``observed`` is
    a boolean mask of the observed points (None: all).
    """
    if data_term not in DATA_TERMS:
        raise ValueError(f"data_term must be one of {DATA_TERMS}; got {data_term!r}.")
    grid = check_grid(grid)
    mask = np.ones(grid.size, bool) if observed is None else np.asarray(observed, bool)
    if data_term == "integral":
        return quadrature_weights(grid) * mask
    count = mask.sum()
    return mask / count if count else mask.astype(np.float64)
