"""The fit skeleton of every estimator whose fit is additive statistics.

What such a fit needs from the data (counts, sums, cross products, moments)
is additive over rows, so one path serves an in-memory ``fit``,
``partial_fit`` over batches and a fit over a Dask array:

    fit          = forget the running statistics, then partial_fit
    partial_fit  = validate the parameters (first batch only)
                   -> validate the batch            (_validate_batch)
                   -> statistics of each row block  (_statistics, on the
                      workers for Dask input)
                   -> merge with the blocks and the earlier batches
                      (_merge_statistics)
                   -> solve from the merged statistics (_solve)

with ``n_samples_seen_`` and the running statistics kept here only. An
estimator using it defines:

* ``_validate_batch(X, y, sample_weight, first)`` returning the row-aligned
  arrays its statistics read, X first (None entries pass through);
* ``_statistics(X_block, *other_blocks)``: a dict of sums over those rows
  (its key set written next to the merge that combines it); override
  ``_statistics_function()`` to return a picklable callable instead when the
  statistics need something computed once per batch;
* ``_merge_statistics``: the merge of its statistics (default
  :func:`skfunc._penalized.merge`, sums key by key);
* ``_solve(stats)``: set the fitted attributes from merged statistics;
* optionally ``_first_batch(stats, arrays)``: the first batch's statistics,
  possibly recomputed after fixing a size chosen from that batch.

Set ``_accepts_dask = True`` once all of that runs on
:func:`skfunc._blocks.compute_statistics`.
"""

import contextlib
import warnings

import numpy as np

from ._blocks import compute_statistics, is_dask_array
from ._docstrings import fill_doc
from ._estimator import PreservesFloat32Mixin, ShortReprMixin
from ._penalized import merge as merge_sums
from ._validation import check_batch_grid

#: fitted attributes that describe uncertainty: non-finite values there (no
#: residual degrees of freedom left) are a warning, not an error
_UNCERTAINTY = ("noise_variance_", "coef_covariance_")

#: private fitted attributes checked in the name of a public one that is
#: formed on first use: the variances on its diagonal (a covariance is
#: finite where they are)
_CHECKED_FOR = {"_coef_variance": "coef_covariance_"}


class UndefinedUncertaintyWarning(UserWarning):
    """The fit leaves no residual degrees of freedom: the noise variance and
    the confidence bands are undefined (NaN), while the fit itself stands.

    A statistical property of the data, not a numerical failure, in the way
    of scikit-learn's ``UndefinedMetricWarning``; numerical trouble stays a
    ``RuntimeWarning`` or an error."""


def check_finite_fit(estimator):
    """Never hand back NaN or inf silently: after a fit, non-finite values in
    a fitted attribute are a ``ValueError`` (the fit failed, usually because
    sums of squares overflowed or underflowed), or an
    :class:`UndefinedUncertaintyWarning` where only the uncertainty is
    undefined. A selection criterion may be inf (GCV
    where a fit interpolates); what to choose then is the alpha choice's
    policy, not checked here. Returns the estimator.
    """
    name = type(estimator).__name__
    uncertain, overflow = [], []
    for key, value in vars(estimator).items():
        key = _CHECKED_FOR.get(key, key)
        if not key.endswith("_") or key.startswith("_"):
            continue
        arr = np.asarray(value) if isinstance(value, (float, np.ndarray)) else None
        if arr is None or arr.dtype.kind != "f" or np.isfinite(arr).all():
            continue
        if key in ("criterion_path_", "best_score_"):  # inf where a candidate
            continue  # interpolates: the alpha choice has its own policy for that
        if key in _UNCERTAINTY:
            (overflow if np.isinf(arr).any() else uncertain).append(key)
            continue
        raise ValueError(
            f"{name}: the fitted {key} is not finite. This usually means the values "
            "of X or y are too large or too small for their sums of squares in "
            "float64 (beyond about 1e150 or below 1e-150); rescale X and y, for "
            "example to units near 1."
        )
    if overflow:
        warnings.warn(
            f"{name}: {' and '.join(overflow)} overflow float64 in the data's "
            "units (variances are squares: of y beyond about 1e154, or of "
            "coefficients y / X beyond that); the fit itself is exact, but "
            "confidence bands are undefined. Rescale X and y, for example to "
            "units near 1, for bands.", RuntimeWarning, stacklevel=3,
        )
    if uncertain:
        warnings.warn(
            f"{name}: {' and '.join(uncertain)} not finite: the fit leaves no "
            "residual degrees of freedom (too few observations, or weights summing "
            "to less than the effective number of parameters), so confidence bands "
            "are undefined.", UndefinedUncertaintyWarning, stacklevel=3,
        )
    return estimator


def _all_finite(stats):
    """Whether every float value of a statistics dict is finite."""
    return all(np.isfinite(value).all() for value in stats.values()
               if np.asarray(value).dtype.kind == "f")


class AdditiveFitMixin(ShortReprMixin):
    """``fit`` and ``partial_fit`` from additive statistics (see module doc)."""

    #: combines the statistics of disjoint sets of rows
    _merge_statistics = staticmethod(merge_sums)

    #: (parameter, fitted attribute) of each grid that later batches share
    _batch_grids = (("grid", "grid_"),)

    #: whether the function of ``_statistics_function`` may run on several
    #: row blocks at once (it reads the estimator, never writes it):
    #: :func:`skfunc.utils.partial_fit_batches` then spreads a batch's blocks
    #: over threads (:func:`skfunc._blocks.block_threads`)
    _statistics_thread_safe = False

    #: whether a NaN or inf anywhere in X always makes the statistics
    #: non-finite (every value enters them, as through
    #: :class:`skfunc._blocks.BandedProduct`): then a batch of X is not
    #: scanned for them first (a pass over the batch); only non-finite
    #: statistics send it through the full validation, which names the
    #: first. ``_validate_batch`` then takes ``check_finite``.
    _finite_from_statistics = False

    def _forget(self):
        """Drop the running statistics: the next batch starts afresh."""
        vars(self).pop("n_samples_seen_", None)
        vars(self).pop("_partial_statistics", None)

    def _statistics_function(self):
        return self._statistics

    def _fit_statistics(self, X, y=None, sample_weight=None):
        self._forget()
        return self._partial_fit_statistics(X, y, sample_weight)

    def _partial_fit_statistics(self, X, y=None, sample_weight=None, *, solve=True):
        """Add a batch's statistics; then solve, unless ``solve`` is False
        (:func:`skfunc.utils.partial_fit_batches` solves once, after its last
        batch, with :meth:`_solve_statistics`)."""
        first = not hasattr(self, "n_samples_seen_")
        if first:
            self._validate_params()
        else:
            for grid_param, grid_attr in self._batch_grids:
                check_batch_grid(self, grid_param, grid_attr)
        defer = self._finite_from_statistics and not is_dask_array(X)
        arrays = self._validate_batch(X, y, sample_weight, first=first,
                                      **({"check_finite": False} if defer else {}))
        # (an inf of X unscanned meets zeros: inf * 0 is a quiet NaN here)
        with np.errstate(invalid="ignore") if defer else contextlib.nullcontext():
            stats = compute_statistics(
                self._statistics_function(), *arrays, merge=self._merge_statistics
            )
        if defer and not _all_finite(stats):
            # raises, naming the first NaN or inf of X; finite values whose
            # sums overflowed go on to the solve, which says so
            self._validate_batch(X, y, sample_weight, first=first)
        if first:
            stats = self._first_batch(stats, arrays)
        n_rows = arrays[0].shape[0]
        if not first:
            stats = self._merge_statistics(self._partial_statistics, stats)
            n_rows += self.n_samples_seen_
        self._keep_statistics(stats, n_rows)
        if solve:
            self._solve_statistics()
        return self

    def _keep_statistics(self, stats, n_rows):
        """Keep ``stats`` of ``n_rows`` rows as the running statistics: the
        next ``partial_fit`` merges its batch into them. Also for a ``fit``
        that reaches them by another route (all rows at once)."""
        self._partial_statistics = stats
        self.n_samples_seen_ = int(n_rows)

    def _first_batch(self, stats, arrays):
        """The first batch's statistics, before later batches merge into them:
        where an estimator may fix a size chosen from the data (it must be
        fixed before statistics are summed); ``arrays`` are the validated
        batch's. The default keeps them."""
        return stats

    def _solve_statistics(self):
        """Set the fitted attributes from the statistics of all batches so far."""
        self._solve(self._partial_statistics)
        check_finite_fit(self)
        return self


class AdditiveTransformerMixin(PreservesFloat32Mixin, AdditiveFitMixin):
    """The skeleton for transformers: ``fit(X, y=None)``, ``partial_fit(X, y=None)``."""

    @fill_doc
    def fit(self, X, y=None):
        """Fit on the curves in X (forgetting earlier batches).

        %(transformer_fit)s
        """
        return self._fit_statistics(X)

    @fill_doc
    def partial_fit(self, X, y=None):
        """Add a batch of curves and refit from the statistics of all batches.

        %(partial_fit_additive)s

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            A batch of curves on the grid of the first batch.
        %(partial_fit_y_returns)s
        """
        return self._partial_fit_statistics(X)


class AdditiveRegressorMixin(AdditiveFitMixin):
    """The skeleton for supervised estimators: ``fit(X, y, sample_weight=None)``."""

    @fill_doc
    def fit(self, X, y, sample_weight=None):
        """Fit on (X, y) (forgetting earlier batches).

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Inputs, one observation per row.
        y : array-like or dask array of shape (n_samples,) or (n_samples, n_targets)
            Targets (outcomes, or response curves on the response grid).
        %(fit_weights_returns)s
        """
        return self._fit_statistics(X, y, sample_weight)

    @fill_doc
    def partial_fit(self, X, y, sample_weight=None):
        """Add a batch of observations and refit from the statistics of all
        batches.

        %(partial_fit_additive)s

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Inputs of the batch, shaped like the first batch's.
        y : array-like or dask array of shape (n_samples,) or (n_samples, n_targets)
            Targets of the batch, with the targets of the first.
        sample_weight : array-like of shape (n_samples,), default=None
            Frequency weights of the batch's observations (weight 2 = the
            row twice).

        Returns
        -------
        self : object
            The estimator, fitted on all batches so far.
        """
        return self._partial_fit_statistics(X, y, sample_weight)
