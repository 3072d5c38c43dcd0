"""Validation shared by the estimators: curves and their grid, partial_fit
batches, confidence levels and the basis parameters.

Estimator classes stay thin: they validate with :func:`validate_curves`, take
their basis parameters' constraints from :data:`BASIS_CONSTRAINTS` and build
their basis with :func:`basis_for`.
"""

from collections.abc import Mapping
from numbers import Integral, Real

import numpy as np
from scipy.sparse import issparse
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.validation import validate_data

from ._bases import BASES, default_n_basis, default_period, make_basis
from ._blocks import cache_rows, is_dask_array, row_blocks
from ._channels import PER_CHANNEL_BASIS, channel_basis, check_channels, set_channels
from ._dask import validate_dask
from ._grid import (
    QUADRATURES,
    check_curve_points,
    check_grid,
    empty_curve_error,
    grid_from_labels,
    resolve_grid,
    same_grid,
)

#: the parameters naming a basis and its roughness penalty, as scikit-learn
#: parameter constraints; every estimator taking ``basis=`` uses these
BASIS_CONSTRAINTS = {
    "basis": [StrOptions(set(BASES))],
    "n_basis": [Interval(Integral, 1, None, closed="left"), None],
    "degree": [Interval(Integral, 0, None, closed="left")],
    "interior_knots": ["array-like", None],
    "penalty_order": [Interval(Integral, 0, None, closed="left")],
    "period": [Interval(Real, 0, None, closed="neither"), None],
    # a mapping {channel: grid} declares several channels (skfunc._channels)
    "grid": ["array-like", Mapping, None],
    "quadrature": [StrOptions(set(QUADRATURES))],
}

#: ``n_basis`` of the estimators that accept several channels: also a
#: mapping ``{channel: n_basis}`` (``interior_knots`` likewise, already
#: array-like); see :func:`skfunc._channels.channel_basis`
CHANNEL_N_BASIS = {"n_basis": [*BASIS_CONSTRAINTS["n_basis"], Mapping]}


#: what to do about missing values, for estimators that need complete curves
NAN_ADVICE = (
    "{} needs complete curves (no NaN). Fill the gaps of densely observed "
    "curves first with skfunc.preprocessing.CurveSmoother in a pipeline; for "
    "curves observed at only a few times each, use "
    "skfunc.decomposition.SparseFunctionalPCA (see the user guide's page on "
    "irregular data for which estimators accept missing values)."
)


def check_level(level, name="level"):
    """A confidence level in (0, 1) (e.g. 0.95), as a float."""
    if (not isinstance(level, Real) or isinstance(level, bool)
            or not 0 < level < 1):
        raise ValueError(f"{name} must be in (0, 1), e.g. 0.95; got {level!r}.")
    return float(level)


def validate_curves(estimator, X, y="no_validation", *, reset, allow_nan=False,
                    n_covariates=0, check_finite=True, **check_params):
    """Validate curves (rows of X) and their grid.

    On ``reset`` the grid is resolved from ``estimator.grid``, numeric
    DataFrame column labels, or evenly spaced points on [0, 1], and stored as
    ``estimator.grid_``. Otherwise X must have as many columns as at fit, and
    numeric DataFrame labels must match the fitted grid.

    ``n_covariates`` trailing columns of X are scalar covariates, not curve
    values: the grid (and its column labels) covers the other columns only.

    ``check_finite=False`` skips the scan of X for NaN and inf (y is still
    checked), for a caller that finds them in a result every value of X
    enters and then validates again, naming the first
    (:meth:`skfunc._fit.AdditiveFitMixin._partial_fit_statistics`).

    Dask arrays are validated without gathering them (see ``skfunc._dask``)
    and returned as lazy dask arrays.
    """
    if is_dask_array(X) or is_dask_array(y) or type(X).__module__.startswith("dask"):
        out = validate_dask(estimator, X, y, reset=reset, allow_nan=allow_nan,
                            n_covariates=n_covariates, **check_params)
        if reset:
            n_points = estimator.n_features_in_ - n_covariates
            if not set_channels(estimator, None, n_points, n_covariates):
                estimator.grid_ = resolve_grid(getattr(estimator, "grid", None), None,
                                               n_points)
        return out
    X_in = X
    labels = getattr(X_in, "columns", None)
    if getattr(labels, "nlevels", 1) > 1:  # (channel, time): read by _channels
        labels = None
    if labels is not None and n_covariates:
        n_curve = len(labels) - n_covariates
        # too few curve columns: left to the clear error below
        labels = list(labels)[:n_curve] if n_curve >= 2 else None
    # read the labels first: a mix of numbers and words gets our message
    inferred = grid_from_labels(list(labels)) if labels is not None else None
    if issparse(y):  # scikit-learn accepts a sparse multi-output y; the fits do not
        raise ValueError(
            f"y is a sparse matrix; {type(estimator).__name__} needs dense targets "
            "(convert with y.toarray())."
        )
    try:
        out = validate_data(
            estimator,
            X,
            y,
            reset=reset,
            dtype=[np.float64, np.float32],
            ensure_all_finite=("allow-nan" if allow_nan else True) if check_finite else False,
            **check_params,
        )
    except ValueError as exc:
        explain_not_numbers(exc, X, y)
        if "contains NaN" not in str(exc):
            raise
        first = str(exc).split("\n")[0].split(".")[0]  # "Input X contains NaN"
        where = first_nan(y if first.startswith("Input y") else X)
        raise ValueError(
            f"{first}{where}. {NAN_ADVICE.format(type(estimator).__name__)}"
        ) from exc
    X = out[0] if isinstance(out, tuple) else out
    n_points = X.shape[1] - n_covariates
    check_curve_points(X.shape[1], n_covariates)
    if allow_nan:
        # an all-NaN row starts with NaN: scan only those rows, not all of X,
        # in cache-sized pieces (sparse curves start with NaN nearly all:
        # one copy of those rows was as large as X, and at 80 MB it cost
        # more than the rest of a sparse FPCA's validation)
        suspect = np.flatnonzero(np.isnan(X[:, 0]))
        for piece in row_blocks(suspect.size, n_points, rows=cache_rows(n_points)):
            rows = suspect[piece]
            empty = rows[np.all(np.isnan(X[rows, :n_points]), axis=1)]
            if empty.size:
                raise empty_curve_error(empty[0])
    if reset:
        if not set_channels(estimator, X_in, n_points, n_covariates):
            grid = getattr(estimator, "grid", None)
            estimator.grid_ = resolve_grid(grid if grid is not None else inferred, X,
                                           n_points)
    elif not check_channels(estimator, X_in, n_covariates):
        check_labels(estimator, inferred, estimator.grid_, "X", "grid")
    return out


def product_of_curves(validate, X, product):
    """``product(validate(X))`` with X scanned for NaN and inf only when
    the result is not finite.

    For a ``product`` every value of X enters (a matrix product with the
    curves, :func:`skfunc._blocks.chunked_matmul`): a NaN or inf of X makes
    its row of the result NaN or inf, so the scan, a pass over X as long as
    a thin product, is left out; a non-finite result sends X through the
    full validation, which names the first NaN or inf. Finite values whose
    products overflow pass it, as they would the scan. ``validate(X,
    check_finite=...)`` is the estimator's curve validation (with
    ``reset=False``); dask arrays are validated first as usual.
    """
    if is_dask_array(X):
        return product(validate(X))
    with np.errstate(invalid="ignore", over="ignore"):
        result = product(validate(X, check_finite=False))
    if not np.isfinite(result).all():
        validate(X)
    return result


def first_nan(data):
    """`` (first at row i, column j)`` for the first NaN of ``data``, or ""."""
    try:
        values = np.asarray(data, dtype=np.float64)
    except (TypeError, ValueError):
        return ""
    where = np.argwhere(np.isnan(values))
    if not where.size:
        return ""
    names = ("row", "column")[: values.ndim]
    return " (first at " + ", ".join(f"{n} {i}" for n, i in zip(names, where[0])) + ")"


def explain_not_numbers(exc, X, y):
    """Raise a ValueError naming X or y if ``exc`` is numpy's failure to read
    text as numbers; return otherwise."""
    if "could not convert" not in str(exc):
        return
    try:
        np.asarray(X, dtype=np.float64)
        name = "y"
    except (TypeError, ValueError):
        name = "X"
    value = str(exc).rpartition(": ")[2]
    raise ValueError(
        f"{name} must hold numbers; got a value that is not a number ({value}). "
        "Convert text columns to numbers first."
    ) from None


def check_labels(estimator, inferred, fitted, data_name, grid_name):
    """ValueError if numeric column labels give a grid other than the fitted one."""
    if inferred is not None and not same_grid(inferred, fitted):
        raise ValueError(
            f"The column labels of {data_name} give a {grid_name} that differs from "
            f"the one {type(estimator).__name__} was fitted on; resample the curves "
            "to the fitted grid (for example with CurveSmoother(eval_points=...))."
        )


def check_batch_grid(estimator, grid_param="grid", grid_attr="grid_"):
    """A later ``partial_fit`` batch: the grid parameter must still give the
    fitted grid."""
    grid = getattr(estimator, grid_param, None)
    if isinstance(grid, Mapping):  # channels: their grids side by side
        if [str(name) for name in grid] != getattr(estimator, "channel_names_", None):
            raise ValueError(
                f"partial_fit of {type(estimator).__name__} got channels "
                f"{list(grid)} in {grid_param}, but its earlier calls had "
                f"{getattr(estimator, 'channel_names_', 'one curve per row')}; all "
                "batches must have the same channels (call fit to start afresh)."
            )
        grid = np.concatenate([np.asarray(g, dtype=np.float64) for g in grid.values()])
    if grid is not None:
        fitted = getattr(estimator, grid_attr)
        if not same_grid(grid, fitted):
            raise ValueError(
                f"partial_fit of {type(estimator).__name__} got a {grid_param} that "
                f"differs from the one of its earlier calls ({grid_attr}); all "
                "batches must be sampled on one grid (call fit to start afresh)."
            )


#: the largest number of basis functions: every fit forms K x K Gram and
#: penalty matrices (8 K^2 bytes each) and decomposes them in O(K^3), so K is
#: capped where one such matrix reaches 1 GiB (sqrt(2^30 / 8) = 11585)
MAX_N_BASIS = 11585


def resolve_n_basis(basis, n_basis, n_points, degree=3, knots=None, cap=True):
    """The number of basis functions to use.

    ``n_basis=None`` means :func:`skfunc._bases.default_n_basis` (P-spline
    practice: generous, never near interpolation on short grids). An explicit value
    above ``n_points`` is an error when ``cap`` is true (an unpenalized
    least-squares fit cannot determine more functions than points).
    """
    if basis not in BASES:
        raise ValueError(f"basis must be one of {tuple(BASES)}; got {basis!r}.")
    if knots is not None:
        resolved = len(knots) + degree + 1
    elif n_basis is None:
        resolved = default_n_basis(basis, n_points, degree)
    else:
        resolved = n_basis
    if resolved > MAX_N_BASIS:
        raise ValueError(
            f"n_basis={resolved} is too large: the fit forms {resolved} x {resolved} "
            f"matrices ({8 * resolved**2 / 2**30:.3g} GiB each) and decomposes them. "
            f"Use n_basis <= {MAX_N_BASIS}; with a roughness penalty a few dozen "
            "functions usually suffice."
        )
    if cap and resolved > n_points:
        raise ValueError(
            f"n_basis={resolved} exceeds the {n_points} grid points of X: a "
            f"least-squares fit cannot determine more basis functions than "
            f"points. Use n_basis <= {n_points}, or a roughness penalty alpha > 0."
        )
    return resolved


def basis_for(estimator, grid, cap=True):
    """Build the basis named by ``estimator``'s parameters on the grid's domain.

    Reads ``basis``, ``n_basis``, ``degree``, ``interior_knots`` and ``period``
    (Fourier; None means :func:`skfunc._bases.default_period` of the grid)
    from the estimator. For an estimator fitted with channels and its
    ``grid_``, the block-diagonal :class:`skfunc._channels.ChannelBasis` of
    the channels' bases, each built by this rule on its own grid.
    With ``n_basis=None`` on a grid of fewer than ``degree + 1`` points, the
    B-spline degree is lowered to ``n_points - 1`` (the polynomial through the
    points): the adaptive default serves tiny grids, while an explicit
    ``n_basis`` the degree cannot support stays an error. With
    ``n_basis=None``, a size the fit chose from the data (the estimator's
    ``_grown_n_basis``, :meth:`skfunc._smoother.PenalizedFitMixin._first_batch`)
    replaces the default.
    """
    sizes = getattr(estimator, "channel_sizes_", None)
    if sizes is not None and np.shape(grid) == np.shape(estimator.grid_) \
            and np.array_equal(grid, estimator.grid_):
        return channel_basis(_single_basis_for, estimator, cap)
    return _single_basis_for(estimator, grid, cap)


def _single_basis_for(estimator, grid, cap):
    for param in PER_CHANNEL_BASIS:
        if isinstance(getattr(estimator, param, None), Mapping):
            raise ValueError(
                f"{param} is a mapping by channel, but {type(estimator).__name__} "
                "was given one curve per row; give one value, or declare the "
                "channels (grid a mapping {channel: grid}, or (channel, time) "
                "DataFrame columns)."
            )
    grid = check_grid(grid)
    name = estimator.basis
    degree = getattr(estimator, "degree", 3)
    knots = getattr(estimator, "interior_knots", None)
    # a default basis the fit has grown (PenalizedFitMixin._first_batch)
    n_basis = estimator.n_basis
    if n_basis is None:
        n_basis = getattr(estimator, "_grown_n_basis", None)
    n_basis = resolve_n_basis(name, n_basis, grid.size, degree, knots, cap)
    if name == "bspline" and estimator.n_basis is None and knots is None:
        degree = min(degree, n_basis - 1)
    period = getattr(estimator, "period", None)
    if name != "fourier":
        period = None
    elif period is None and hasattr(estimator, "period"):
        period = default_period(grid)
    # an estimator without a period parameter keeps the domain's length
    return make_basis(name, (grid[0], grid[-1]), n_basis, degree=degree, knots=knots,
                      period=period)
