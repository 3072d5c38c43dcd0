"""Sample weights: one rule and one meaning for every part of skfunc.

Meaning (scikit-learn's): a sample weight is a **frequency**. A row with
weight 2 counts exactly as two copies of that row, a weight of 0 leaves the
row out, and weights of 0.5 on every row are the same data as weights of 1
for anything that does not count rows (means, R^2) but half the data for
anything that does (degrees of freedom, noise variance).

Rule: weights are real, finite, non-negative numbers, one per row, and at
least one of them is positive. Anything else is a ``ValueError`` (or a
``TypeError`` for non-numbers) that names ``sample_weight`` and the row at
fault.
"""

import numbers

import numpy as np
from sklearn.utils.validation import _num_samples

__all__ = ["check_sample_weight"]


def check_sample_weight(sample_weight, X, *, name="sample_weight", data_name="X"):
    """Validate frequency weights for the rows of ``X``.

    Parameters
    ----------
    sample_weight : None, number or array-like of shape (n_samples,)
        None means every row has weight 1; a number gives every row that
        weight.
    X : array-like with n_samples rows
        The data the weights belong to (only its number of rows is read).
    name : str, default="sample_weight"
        Name of the parameter in error messages.
    data_name : str, default="X"
        Name of the data in error messages.

    Returns
    -------
    sample_weight : ndarray of shape (n_samples,), float64
        A new array.

    Raises
    ------
    TypeError
        Weights that are not real numbers (strings, complex numbers, objects).
    ValueError
        Wrong shape or length, NaN or infinite values, a negative weight, or
        weights that are all zero.
    """
    n = _num_samples(X)
    if sample_weight is None:
        return np.ones(n)
    if isinstance(sample_weight, numbers.Number) and not isinstance(sample_weight, bool):
        sample_weight = np.full(n, sample_weight)
    arr = np.asarray(sample_weight)
    if arr.dtype.kind not in "iuf":
        raise TypeError(
            f"{name} must hold real numbers (one frequency weight per row of "
            f"{data_name}); got dtype {arr.dtype}."
        )
    arr = arr.astype(np.float64)  # a copy: never modify the caller's array
    if arr.ndim != 1:
        raise ValueError(
            f"{name} must be 1-D (one weight per row of {data_name}); got shape {arr.shape}."
        )
    if arr.shape[0] != n:
        raise ValueError(
            f"{name} has {arr.shape[0]} values but {data_name} has {n} rows; "
            "give one weight per row."
        )
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(f"{name} must be finite; got {float(arr[i])!r} for row {i}.")
    if (arr < 0).any():
        i = int(np.flatnonzero(arr < 0)[0])
        raise ValueError(
            f"{name} must be non-negative (a weight counts its row that many "
            f"times; 0 leaves it out); got {float(arr[i])!r} for row {i}."
        )
    if not arr.any():
        raise ValueError(
            f"{name} is zero for every row of {data_name}; at least one row needs "
            "a positive weight."
        )
    return arr
