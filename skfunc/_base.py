"""Machinery shared by the estimators: reading curves, building bases,
chunked products.

Estimator classes stay thin: they validate with :func:`validate_curves`, build
their basis with :func:`basis_for`, and apply fitted linear operators with
:func:`chunked_matmul`.
"""

import numpy as np
from sklearn.utils.validation import validate_data

from ._bases import BASES, make_basis
from ._grid import check_grid, grid_from_labels, resolve_grid

#: rows per chunk are chosen so that one chunk of input holds about this many
#: float64 values (32 MiB)
CHUNK_VALUES = 1 << 22


def validate_curves(estimator, X, y="no_validation", *, reset, allow_nan=False,
                    n_covariates=0, **check_params):
    """Validate curves (rows of X) and their grid.

    On ``reset`` the grid is resolved from ``estimator.grid``, numeric
    DataFrame column labels, or evenly spaced points on [0, 1], and stored as
    ``estimator.grid_``. Otherwise X must have as many columns as at fit, and
    numeric DataFrame labels must match the fitted grid.

    ``n_covariates`` trailing columns of X are scalar covariates, not curve
    values: the grid (and its column labels) covers the other columns only.
    """
    X_in = X
    labels = getattr(X_in, "columns", None)
    if labels is not None and n_covariates:
        n_curve = len(labels) - n_covariates
        # too few curve columns: left to the clear error below
        labels = list(labels)[:n_curve] if n_curve >= 2 else None
    # read the labels first: a mix of numbers and words gets our message
    inferred = grid_from_labels(list(labels)) if labels is not None else None
    out = validate_data(
        estimator,
        X,
        y,
        reset=reset,
        dtype=[np.float64, np.float32],
        ensure_all_finite="allow-nan" if allow_nan else True,
        **check_params,
    )
    X = out[0] if isinstance(out, tuple) else out
    n_points = X.shape[1] - n_covariates
    if n_covariates and n_points < 2:
        raise ValueError(
            f"X has {X.shape[1]} column(s), of which the last n_covariates="
            f"{n_covariates} are scalar covariates, leaving {n_points} grid "
            "point(s); a curve needs at least 2 grid points (columns of X) "
            "before the covariates."
        )
    if X.shape[1] < 2:
        raise ValueError(
            f"X has {X.shape[1]} feature(s) (grid points); a curve needs at least "
            f"2 grid points, one per column of X, to be represented."
        )
    if allow_nan:
        # an all-NaN row starts with NaN: scan only those rows, not all of X
        suspect = np.flatnonzero(np.isnan(X[:, 0]))
        empty = suspect[np.all(np.isnan(X[suspect, :n_points]), axis=1)]
        if empty.size:
            raise ValueError(
                f"Row {int(empty[0])} of X is entirely NaN: a curve needs observed "
                "values to be represented."
            )
    if reset:
        grid = getattr(estimator, "grid", None)
        estimator.grid_ = resolve_grid(grid if grid is not None else inferred, X, n_points)
    else:
        if inferred is not None and not np.allclose(
            inferred, estimator.grid_, rtol=1e-9, atol=0
        ):
            raise ValueError(
                "The column labels of X give a grid that differs from the grid "
                f"{type(estimator).__name__} was fitted on; resample the curves to "
                "the fitted grid (for example with CurveSmoother(output_grid=...))."
            )
    return out


def resolve_n_basis(basis, n_basis, n_points, degree=3, knots=None, cap=True):
    """The number of basis functions to use.

    ``n_basis=None`` means the basis' default, capped by the number of grid
    points (and, for B-splines, at least ``degree + 1``). An explicit value
    above ``n_points`` is an error when ``cap`` is true (an unpenalized
    least-squares fit cannot determine more functions than points).
    """
    if basis not in BASES:
        raise ValueError(f"basis must be one of {tuple(BASES)}; got {basis!r}.")
    if knots is not None:
        resolved = len(knots) + degree + 1
    elif n_basis is None:
        resolved = min(BASES[basis].default_n_basis, n_points)
    else:
        resolved = n_basis
    if cap and resolved > n_points:
        raise ValueError(
            f"n_basis={resolved} exceeds the {n_points} grid points of X: a "
            f"least-squares fit cannot determine more basis functions than "
            f"points. Use n_basis <= {n_points}, or a roughness penalty alpha > 0."
        )
    return resolved


def basis_for(estimator, grid, cap=True):
    """Build the basis named by ``estimator``'s parameters on the grid's domain.

    Reads ``basis``, ``n_basis``, ``degree`` and ``knots`` from the estimator.
    With ``n_basis=None`` on a grid of fewer than ``degree + 1`` points, the
    B-spline degree is lowered to ``n_points - 1`` (the polynomial through the
    points): the adaptive default serves tiny grids, while an explicit
    ``n_basis`` the degree cannot support stays an error.
    """
    grid = check_grid(grid)
    name = estimator.basis
    degree = getattr(estimator, "degree", 3)
    knots = getattr(estimator, "knots", None)
    n_basis = resolve_n_basis(name, estimator.n_basis, grid.size, degree, knots, cap)
    if name == "bspline" and estimator.n_basis is None and knots is None:
        degree = min(degree, n_basis - 1)
    return make_basis(name, (grid[0], grid[-1]), n_basis, degree=degree, knots=knots)


def chunked_matmul(X, operator_T, chunk_size=None):
    """``X @ operator_T`` in row chunks, converting each chunk to float64.

    Peak memory stays near input + output whatever X's dtype or layout.
    """
    n, m = X.shape
    out = np.empty((n, operator_T.shape[1]), dtype=np.float64)
    rows = chunk_size or max(1, CHUNK_VALUES // max(m, 1))
    for start in range(0, n, rows):
        stop = min(start + rows, n)
        chunk = np.asarray(X[start:stop], dtype=np.float64)
        np.matmul(chunk, operator_T, out=out[start:stop])
    return out
