"""What the aligners share: validation, output choice, warps as features,
putting aligned curves back on their own clocks."""

from functools import partial

import numpy as np
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.utils._param_validation import StrOptions
from sklearn.utils.validation import _check_feature_names_in, check_array, check_is_fitted

from ._blocks import (
    apply_rows,
    cache_rows,
    compute_statistics,
    is_dask_array,
    output_dtype,
    row_blocks,
)
from ._docstrings import fill_doc
from ._estimator import PreservesFloat32Mixin, ShortReprMixin
from ._validation import validate_curves
from ._warping import compose, warp_coordinates

#: what ``transform`` returns
OUTPUTS = ("curves", "warps", "warp_coordinates")


def _row_sum(X, *per_row, func):
    """The sum over the rows of ``func(X_rows, *per_row_rows)`` and their
    number, in pieces whose temporaries stay in the cache: a row block's
    share of a mean."""
    X = np.asarray(X, dtype=np.float64)
    total = 0.0
    for rows in row_blocks(*X.shape, rows=cache_rows(X.shape[1])):
        total = total + func(X[rows], *(a[rows] for a in per_row)).sum(axis=0)
    return {"sum": total, "n": X.shape[0]}


def _concatenate(*parts):
    """Per-curve results of row blocks, in order."""
    return np.concatenate(parts)


class AlignerBase(ShortReprMixin, PreservesFloat32Mixin, TransformerMixin, BaseEstimator):
    """Base of the aligners.

    Subclasses implement ``_fit(X)`` for validated curves (setting
    ``template_``), or ``fit`` itself when it takes more arguments, and
    ``_align(X, curves=True, warps=True, **kwargs)`` returning ``(aligned,
    warps)`` for validated curves, each None when not asked for:
    ``warps[i]`` is curve i's clock, ``X[i] ~ template o warps[i]``, and
    ``aligned[i] = X[i] o warps[i]^{-1}``. Subclasses whose ``_align`` takes
    keyword arguments override :meth:`transform` and
    :meth:`transform_warps` to expose them.
    """

    _output_constraint = {"output": [StrOptions(set(OUTPUTS))], "grid": ["array-like", None]}

    # -- validation -----------------------------------------------------------

    def _validate(self, X, reset):
        """Curves as float64 (a dask array stays lazy: an aligner that
        accepts one, ``_accepts_dask``, reads it block by block); on
        ``reset`` (fit) the parameters too."""
        if reset:
            self._validate_params()
        X = validate_curves(self, X, reset=reset)
        return X.astype(np.float64) if is_dask_array(X) else np.asarray(X, dtype=np.float64)

    def _check_template(self, template):
        """A user template as a curve on the fitted grid."""
        m = self.grid_.size
        values = check_array(template, ensure_2d=False, dtype=np.float64,
                             input_name="template")
        values = values.reshape(-1) if values.ndim == 2 and 1 in values.shape else values
        if values.ndim != 1 or values.size != m:
            raise ValueError(
                f"template has shape {np.shape(template)} but X has {m} columns; "
                "give the template's values on the curves' grid, one per column "
                "of X (resample it first if it was sampled elsewhere)."
            )
        return values

    # -- public methods -------------------------------------------------------

    @fill_doc
    def fit(self, X, y=None):
        """Estimate the template (unless one is given) from the curves.

        %(curves_fit)s
        """
        self._fit(self._validate(X, reset=True))
        return self

    def _row_blocks(self, n):
        """Blocks of rows whose temporaries stay in cache."""
        return row_blocks(n, self.grid_.size, rows=cache_rows(self.grid_.size))

    def _by_blocks(self, func, n):
        """``func(rows)`` (rows of curves on the grid) for every block of
        :meth:`_row_blocks`, in one (n, n_features) array."""
        out = np.empty((n, self.grid_.size))
        for rows in self._row_blocks(n):
            out[rows] = func(rows)
        return out

    def _mean_of_rows(self, func, X, *per_row):
        """The mean over the curves X of ``func(X_rows, *per_row_rows)`` (an
        array of rows of the grid's length; ``per_row``: arrays with a row
        per curve). For a dask X, per-block sums on the workers (``func``
        picklable); else :meth:`_mean_by_blocks`."""
        if is_dask_array(X):
            import dask.array as da

            per_row = [da.from_array(a, chunks=(X.chunks[0],) + np.shape(a)[1:])
                       for a in per_row]
            sums = compute_statistics(partial(_row_sum, func=func), X, *per_row)
            return sums["sum"] / sums["n"]
        return self._mean_by_blocks(
            lambda rows: func(X[rows], *(a[rows] for a in per_row)), X.shape[0])

    @staticmethod
    def _per_row(func, X):
        """``func(X)`` (a result per curve, along the first axis); for a
        dask X computed block by block and gathered: one small row per
        curve comes back."""
        if is_dask_array(X):
            return compute_statistics(func, X, merge=_concatenate)
        return func(X)

    def _mean_by_blocks(self, func, n):
        """Mean of the rows of ``func(rows)`` over the blocks of
        :meth:`_row_blocks`, without holding them all: the rows are added one
        after the other, as ``np.mean(..., axis=0)`` adds the rows of one
        array, so the result is the same bit for bit."""
        total = None
        for rows in self._row_blocks(n):
            block = func(rows)
            if total is not None:
                block = np.concatenate([total[None, :], block])
            total = block.sum(axis=0)
        return total / n

    @fill_doc
    def transform(self, X):
        """Align curves to the fitted template.

        %(fitted_curves)s

        %(aligned_returns)s
        """
        return self._transform(X)

    @fill_doc
    def transform_warps(self, X):
        """Each curve's warp ``gamma_i`` (its clock) on the fitted grid.

        %(fitted_curves)s

        %(warps_returns)s
        """
        return self._warps(X)

    def _transform(self, X, **kwargs):
        check_is_fitted(self)
        X = validate_curves(self, X, reset=False)
        # a dask X block by block, lazily
        return apply_rows(self._transform_rows, X, self.grid_.size, dtype=output_dtype(X),
                          **kwargs)

    def _transform_rows(self, X, **kwargs):
        """:meth:`_transform` of validated numpy curves."""
        dtype = output_dtype(X)  # aligned in float64, returned in X's precision
        X = np.asarray(X, dtype=np.float64)
        if self.output == "curves":
            return self._align(X, warps=False, **kwargs)[0].astype(dtype, copy=False)
        warps = self._align(X, curves=False, **kwargs)[1]
        if self.output == "warps":
            return warps.astype(dtype, copy=False)
        return warp_coordinates(self.grid_, warps).astype(dtype, copy=False)

    def _warps(self, X, **kwargs):
        check_is_fitted(self)
        X = self._validate(X, reset=False)
        return apply_rows(self._warps_rows, X, self.grid_.size, **kwargs)

    def _warps_rows(self, X, **kwargs):
        """:meth:`_warps` of validated float64 numpy curves."""
        return self._align(X, curves=False, **kwargs)[1]

    def inverse_transform(self, X, warps=None):
        """Put aligned curves back on their own clocks: ``X[i] o warps[i]``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Aligned curves on the fitted grid (the output of :meth:`transform`
            with ``output="curves"``).
        warps : array-like of shape (n_samples, n_features)
            Each curve's warp on the fitted grid, as returned by
            :meth:`transform_warps` for the original curves.

        Returns
        -------
        X_original : ndarray of shape (n_samples, n_features)
        """
        check_is_fitted(self)
        if self.output != "curves":
            raise ValueError(
                f"inverse_transform needs aligned curves; this aligner has "
                f"output={self.output!r}, whose values cannot be put back on a "
                "clock. Use output='curves'."
            )
        if warps is None:
            raise ValueError(
                "inverse_transform needs warps=: each curve's warp on the fitted "
                "grid, as returned by transform_warps(X) for the original curves."
            )
        X = self._validate(X, reset=False)
        warps = np.asarray(warps, dtype=np.float64)
        if warps.shape != X.shape:
            raise ValueError(
                f"warps has shape {warps.shape} but X has shape {X.shape}; give "
                "one warp per row of X on the fitted grid."
            )
        if not np.all(np.isfinite(warps)):
            raise ValueError("warps must contain only finite values; got NaN or inf.")
        return compose(self.grid_, X, warps)

    @fill_doc
    def get_feature_names_out(self, input_features=None):
        """Names of the output columns.

        For ``output="curves"``: the input feature names when X had string
        column names, else the grid points written as numbers. For warps and
        their coordinates: the class name, ``warp`` and the column index.

        Parameters
        ----------
        %(feature_names_in)s

        Returns
        -------
        feature_names_out : ndarray of str objects
        """
        check_is_fitted(self)
        names = _check_feature_names_in(self, input_features, generate_names=False)
        if self.output == "curves":
            if names is not None:
                return np.asarray(names, dtype=object)
            return np.asarray([repr(float(t)) for t in self.grid_], dtype=object)
        prefix = type(self).__name__.lower()
        kind = "warp" if self.output == "warps" else "warp_coordinate"
        return np.asarray(
            [f"{prefix}_{kind}{j}" for j in range(self.grid_.size)], dtype=object
        )

