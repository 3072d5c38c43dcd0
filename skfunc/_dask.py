"""Validation of Dask input, without gathering it.

:func:`validate_dask` validates Dask input like sklearn's ``validate_data``
does numpy input: shapes, dtype and the grid are checked at once, finiteness
per block when the blocks are computed. Running fits and transforms over row
blocks (in memory or on the workers) is :mod:`skfunc._blocks`.

Layout rules for Dask input
---------------------------
* Blocks must hold whole rows. An array chunked along its second (grid) axis
  is rechunked lazily to one chunk along that axis, keeping its row chunks;
  each block then holds ``row chunk x n_features`` values, so choose row
  chunks with that in mind.
* ``X`` and ``y`` must have the same row chunks (the statistics of a block
  need the rows of both); otherwise a ``ValueError`` says how to rechunk. A
  numpy ``y`` is split along ``X``'s row chunks.
* Chunk sizes must be known (``X.compute_chunk_sizes()`` fixes arrays made
  from data frames).
* Non-finite values raise ``ValueError`` when the block holding them is
  computed: during ``fit`` (which computes), or when the lazy result of
  ``transform``/``predict`` is computed.
"""

import warnings

import numpy as np
from sklearn.exceptions import DataConversionWarning
from sklearn.utils import get_tags
from sklearn.utils.validation import (
    _check_feature_names,
    _check_n_features,
    check_array,
)

from ._blocks import _along_rows_of, is_dask_array, output_dtype
from ._grid import check_curve_points, check_two_dimensional, empty_curve_error


def _is_dask_collection(X):
    return type(X).__module__.split(".")[0] in ("dask", "dask_expr")


def _check_block(block, name, allow_nan, n_points=None, block_info=None):
    """Raise ValueError if a block holds values sklearn would reject."""
    offset = 0
    if block_info is not None and 0 in block_info:
        offset = block_info[0]["array-location"][0][0]
    if block.dtype.kind == "f" and not np.isfinite(np.sum(block)):
        values = block.reshape(block.shape[0], -1)
        bad = np.isinf(values) if allow_nan else ~np.isfinite(values)
        if bad.any():
            row = offset + int(np.flatnonzero(bad.any(axis=1))[0])
            what = "infinity" if allow_nan else "NaN or infinity"
            raise ValueError(
                f"Input {name} contains {what} (first in row {row}); "
                f"{'only NaN (missing values) is' if allow_nan else 'no NaN or inf is'}"
                " accepted."
            )
        if allow_nan and name == "X":
            empty = np.flatnonzero(np.all(np.isnan(values[:, :n_points]), axis=1))
            if empty.size:
                raise empty_curve_error(offset + empty[0])
    return block


def _float_dtype(array, name):
    """The dtype numbers are validated to (:func:`skfunc._blocks.output_dtype`:
    float32 kept, float64 otherwise); an error for anything but numbers."""
    kind = array.dtype.kind
    if kind == "c":
        raise ValueError(f"Complex data not supported: {name} has dtype {array.dtype}.")
    if kind not in "biuf":
        raise TypeError(
            f"{name} must hold numbers (float64, float32, integers or booleans); "
            f"got a dask array of dtype {array.dtype}."
        )
    return output_dtype(array)


def _whole_rows(array, name):
    """Check chunk sizes are known and rechunk to whole rows if needed."""
    if any(np.isnan(size) for sizes in array.chunks for size in sizes):
        raise ValueError(
            f"{name} has unknown chunk sizes; call {name}.compute_chunk_sizes() "
            "(or to_dask_array(lengths=True) on a data frame) first."
        )
    if array.ndim == 2 and len(array.chunks[1]) > 1:
        array = array.rechunk({1: -1})
    return array


def _float_rows(X, what=""):
    """A 2-D dask X in whole rows of float64 (float32 kept), lazily."""
    check_two_dimensional(X.shape, "dask array", what)
    X = _whole_rows(X, "X")
    dtype = _float_dtype(X, "X")
    return X.astype(dtype) if X.dtype != dtype else X


def _checked_blocks(X, allow_nan=False, n_points=None):
    """X with each block checked for values sklearn would reject when it
    is computed (:func:`_check_block`)."""
    return X.map_blocks(_check_block, "X", allow_nan, n_points,
                        meta=np.empty((0, 0), dtype=X.dtype))


def _validate_dask_X(estimator, X, reset, allow_nan, ensure_min_samples, curves,
                     n_covariates):
    X = _float_rows(X, " (one curve per row)")
    n, m = X.shape
    if n < ensure_min_samples:
        raise ValueError(
            f"Found array with {n} sample(s) (shape={X.shape}) while a minimum of "
            f"{ensure_min_samples} is required by {type(estimator).__name__}."
        )
    if curves:
        check_curve_points(m, n_covariates)
    if m < 1:
        raise ValueError(
            f"Found array with 0 feature(s) (shape={X.shape}) while a minimum of "
            f"1 is required by {type(estimator).__name__}."
        )
    _check_feature_names(estimator, X, reset=reset)
    _check_n_features(estimator, X, reset=reset)
    return _checked_blocks(X, allow_nan, m - n_covariates)


def check_rows(X, n_columns=None, what="values"):
    """``check_array(X, dtype=[float64, float32])``; for a dask X the lazy
    equivalent (2-D, numbers, whole rows, finiteness checked per block).

    With ``n_columns``, X must have that many columns (``what`` names them in
    the error, e.g. "coordinates per row (n_basis_)").
    """
    if not is_dask_array(X):
        X = check_array(X, dtype=[np.float64, np.float32])
    else:
        X = _checked_blocks(_float_rows(X))
    if n_columns is not None and X.shape[1] != n_columns:
        raise ValueError(f"Expected {n_columns} {what}; got {X.shape[1]}.")
    return X


def _validate_dask_y(estimator, y, X, multi_output, y_numeric):
    if not is_dask_array(y):
        y = np.asarray(y)
    if y.ndim not in (1, 2):
        raise ValueError(f"y must be 1-D or 2-D; got shape {y.shape}.")
    if y.shape[0] != X.shape[0]:
        raise ValueError(
            f"Found input variables with inconsistent numbers of samples: "
            f"X has {X.shape[0]} rows, y has {y.shape[0]}."
        )
    y = _along_rows_of(X, y)
    if not multi_output and y.ndim == 2:
        if y.shape[1] != 1:
            raise ValueError(
                f"y should be a 1d array, got an array of shape {y.shape} instead."
            )
        warnings.warn(
            "A column-vector y was passed when a 1d array was expected. Please "
            "change the shape of y to (n_samples, ), for example using ravel().",
            DataConversionWarning,
            stacklevel=3,
        )
        y = y[:, 0]
    if y.dtype.kind == "c":
        raise ValueError(f"Complex data not supported: y has dtype {y.dtype}.")
    if y_numeric and y.dtype.kind == "O":
        y = y.astype(np.float64)
    return y.map_blocks(
        _check_block, "y", False, meta=np.empty((0,) * y.ndim, dtype=y.dtype)
    )


def check_accepts_dask(estimator):
    """TypeError unless ``estimator`` opted in with ``_accepts_dask = True``."""
    if not getattr(estimator, "_accepts_dask", False):
        raise TypeError(
            f"{type(estimator).__name__} does not accept dask arrays yet (its fit "
            "would gather the rows into one process); pass numpy arrays, for "
            "example X.compute() when X fits in memory."
        )


def validate_dask(estimator, X, y="no_validation", *, reset, allow_nan=False,
                  multi_output=False, y_numeric=False, ensure_min_samples=1,
                  curves=True, n_covariates=0):
    """``validate_data`` for Dask input (X, y or both), without gathering it.

    Estimators opt in with a class attribute ``_accepts_dask = True`` once
    their fit runs on :func:`compute_statistics`; others get a TypeError.

    ``curves=True`` means the rows of X are curves (at least 2 columns, not
    counting ``n_covariates`` trailing scalar columns); False, scalar features.

    Checks and stores ``n_features_in_`` (and drops ``feature_names_in_``:
    dask arrays carry no column names); converts X to float64 unless it is
    float32, lazily; rechunks to whole rows; aligns y. Finiteness is checked
    per block when the blocks are computed. Returns X, or (X, y).
    """
    if _is_dask_collection(X) and not is_dask_array(X):
        raise TypeError(
            f"{type(estimator).__name__} accepts dask arrays, not other dask "
            f"collections (got {type(X).__name__}); pass "
            "X.to_dask_array(lengths=True) and the grid with grid=."
        )
    check_accepts_dask(estimator)
    no_y = y is None or (isinstance(y, str) and y == "no_validation")
    if not no_y and is_dask_array(y) and not is_dask_array(X):
        # a small in-memory X (covariates) beside dask curves y: split X the
        # same way
        X = np.asarray(X)
        if X.ndim != 2 or X.shape[0] != y.shape[0]:
            raise ValueError(
                f"X must be 2-D with one row per row of y ({y.shape[0]}); got "
                f"shape {X.shape}."
            )
        X = _along_rows_of(y, X)
    if y is None and get_tags(estimator).target_tags.required:
        raise ValueError(
            f"This {type(estimator).__name__} estimator requires y to be passed, "
            "but the target y is None."
        )
    X = _validate_dask_X(estimator, X, reset, allow_nan, ensure_min_samples, curves,
                         n_covariates)
    if no_y:
        return X
    return X, _validate_dask_y(estimator, y, X, multi_output, y_numeric)
