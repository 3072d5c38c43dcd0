"""Fitting on data larger than memory: ``partial_fit`` over batches of rows.

:func:`partial_fit_batches` feeds an estimator's ``partial_fit`` with batches
of rows, read one at a time from an array (typically a memory-mapped
``.npy`` file) or taken from any iterable of batches, and can report its
progress. Re-exported by :mod:`skfunc.utils`.
"""

import mmap
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from numbers import Integral

import numpy as np
from sklearn.utils._param_validation import Interval, validate_params

from ._blocks import CHUNK_VALUES, blas_thread_count, block_threads
from ._grid import check_two_dimensional

#: values per batch read from an array when ``batch_size`` is None (128 MiB
#: of float64): large enough that per-call costs vanish against reading,
#: small against memory
BATCH_VALUES = 4 * CHUNK_VALUES


@validate_params(
    {
        "batch_size": [Interval(Integral, 1, None, closed="left"), None],
        "n_threads": [Interval(Integral, 1, None, closed="left"), None],
        "verbose": ["verbose"],
    },
    prefer_skip_nested_validation=True,
)
def partial_fit_batches(estimator, X, y=None, *, sample_weight=None, batch_size=None,
                        n_threads=None, verbose=0):
    """Fit an estimator one batch of rows at a time, for data larger than memory.

    Calls ``estimator.partial_fit`` on successive batches of rows, so only
    one batch needs to be in memory. For skfunc's estimators whose fit is
    additive statistics (those with ``partial_fit``) the statistics of the
    batches are merged and the small problem is solved once, after the last
    batch; the result equals :meth:`fit` on all rows up to rounding. Any other
    estimator with ``partial_fit`` (scikit-learn's ``IncrementalPCA``,
    ``SGDRegressor``, ...) gets ``partial_fit`` on every batch.

    Like ``partial_fit``, this continues from the estimator's current state:
    pass a fresh (or cloned) estimator to start afresh.

    Parameters
    ----------
    estimator : estimator with a ``partial_fit`` method
        The estimator to fit; it is modified in place.
    X : array-like of shape (n_samples, n_features), or iterable of batches
        Either rows: an object with ``shape`` (a numpy array, a
        memory-mapped array from ``numpy.load(path, mmap_mode="r")``, a
        DataFrame), read ``batch_size`` rows at a time; the file pages of a
        memory-mapped array are released after each batch (and the next
        batch's are requested ahead), so resident memory stays near one
        batch. Or an iterable (a generator, a list) of batches, each an
        array of rows or a tuple ``(X_batch, y_batch)`` or
        ``(X_batch, y_batch, sample_weight_batch)``.
    y : array-like of shape (n_samples,) or (n_samples, n_targets), default=None
        Targets, row-aligned with an array ``X`` (with an iterable, pass them
        in the batches).
    sample_weight : array-like of shape (n_samples,), default=None
        Sample weights, row-aligned with an array ``X`` (with an iterable,
        pass them in the batches).
    batch_size : int, default=None
        Rows per batch of an array ``X``. None means batches of about
        ``4 * 2**22`` values (128 MiB of float64).
    n_threads : int, default=None
        Threads computing the statistics of a batch, for skfunc's
        estimators that allow it (``FunctionalPCA``, ``FunctionalRidge``,
        ``FunctionalRidgeCV``): each thread takes a share of the batch's rows
        with BLAS at one thread, so every step of the pass (the matrix
        product, the reductions, reading the pages of a memory-mapped file)
        runs on every core; the small solve after the last batch then runs
        with BLAS at one thread too. None means as many threads as BLAS would use
        (so an outer ``threadpoolctl`` limit holds); 1 computes in the
        calling thread, BLAS with its own threads. The result does not
        depend on it.
    verbose : int, default=0
        Above 0, print a line per batch: rows and bytes so far, the speed,
        and an estimate of the time left (when the number of rows or of
        batches is known).

    Returns
    -------
    estimator : object
        The estimator, fitted on all batches.

    See Also
    --------
    skfunc.decomposition.FunctionalPCA.partial_fit : one batch at a time.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.decomposition import FunctionalPCA
    >>> from skfunc.utils import partial_fit_batches
    >>> X = np.random.default_rng(0).standard_normal((1000, 50)).cumsum(axis=1)
    >>> batched = partial_fit_batches(FunctionalPCA(3), X, batch_size=300)
    >>> batched.n_samples_seen_
    1000
    >>> whole = FunctionalPCA(3).fit(X)
    >>> bool(np.allclose(batched.explained_variance_, whole.explained_variance_))
    True
    >>> # any iterable of batches, for example read from several files
    >>> batches = (X[start:start + 250] for start in range(0, 1000, 250))
    >>> partial_fit_batches(FunctionalPCA(3), batches).n_samples_seen_
    1000
    """
    if not callable(getattr(estimator, "partial_fit", None)):
        raise TypeError(
            f"estimator must have a partial_fit method; {type(estimator).__name__} "
            "has none. Fit it in one call with fit, or on a Dask array."
        )
    if hasattr(X, "shape"):
        batches, n_rows, n_batches = _array_batches(X, y, sample_weight, batch_size)
    else:
        if y is not None or sample_weight is not None:
            raise ValueError(
                "y and sample_weight are taken from the batches when X is an "
                "iterable of batches; pass tuples (X_batch, y_batch[, "
                "sample_weight_batch]) instead."
            )
        if batch_size is not None:
            raise ValueError("batch_size applies to an array X only; an iterable "
                             "of batches brings its own batches.")
        if isinstance(X, (str, bytes)) or not hasattr(X, "__iter__"):
            raise TypeError(
                "X must be an array of rows (for example np.load(path, "
                "mmap_mode='r')) or an iterable of batches; got "
                f"{type(X).__name__}."
            )
        batches = (_as_tuple(batch) for batch in X)
        n_rows, n_batches = None, (len(X) if hasattr(X, "__len__") else None)
    additive = _is_additive(estimator)
    threads = 1
    if additive and getattr(estimator, "_statistics_thread_safe", False):
        threads = blas_thread_count() if n_threads is None else int(n_threads)
    progress = _Progress(n_rows, n_batches) if verbose else None
    seen = False
    with block_threads(threads):
        for batch in batches:
            if additive:
                estimator._partial_fit_statistics(*batch, solve=False)
            else:
                estimator.partial_fit(*batch)
            seen = True
            if progress is not None:
                progress.update(batch[0])
        if not seen:
            raise ValueError("X holds no batch of rows: nothing to fit.")
        if additive:
            # (a small problem: with BLAS threads idling beside it, its
            # solve took 5-8 times the processor time of one thread)
            estimator._solve_statistics()
    if progress is not None:
        progress.done()
    return estimator


def _is_additive(estimator):
    from ._fit import AdditiveFitMixin

    return isinstance(estimator, AdditiveFitMixin)


def _as_tuple(batch):
    if isinstance(batch, tuple):
        if not 1 <= len(batch) <= 3:
            raise ValueError(
                "A batch must be X_batch or a tuple (X_batch, y_batch) or "
                f"(X_batch, y_batch, sample_weight_batch); got a tuple of {len(batch)}."
            )
        return batch
    return (batch,)


def _array_batches(X, y, sample_weight, batch_size):
    """Batches of rows of an array X (and the matching rows of y and weights),
    with the number of rows and of batches."""
    check_two_dimensional(X.shape, "array")
    n_rows, n_features = int(X.shape[0]), int(X.shape[1])
    if batch_size is None:
        batch_size = max(1, BATCH_VALUES // max(n_features, 1))
    others = []
    for name, other in (("y", y), ("sample_weight", sample_weight)):
        if other is not None and len(other) != n_rows:
            raise ValueError(f"{name} has {len(other)} rows; X has {n_rows}.")
        others.append(other)
    if others[1] is None:
        others.pop()
        if others[0] is None:
            others.pop()
    starts = range(0, n_rows, int(batch_size))
    pages = _MappedPages(X)

    def generate():
        # the finished batch's pages are released on another thread while the
        # next batch is computed (madvise lets go of the interpreter's lock;
        # releasing 128 MiB took 3-40 ms here, a good part of a batch's pass)
        with ThreadPoolExecutor(1, thread_name_prefix="skfunc-pages") as advice:
            for start in starts:
                rows = slice(start, min(start + int(batch_size), n_rows))
                pages.prefetch(slice(rows.stop, min(rows.stop + int(batch_size), n_rows)))
                yield (_take(X, rows), *(None if o is None else _take(o, rows) for o in others))
                if pages.map is not None:
                    advice.submit(pages.release, rows)

    return generate(), n_rows, len(starts)


def _take(A, rows):
    return A.iloc[rows] if hasattr(A, "iloc") else A[rows]


class _MappedPages:
    """Page advice for the rows of a C-ordered memory-mapped numpy array:
    ask for the next batch's pages ahead (``MADV_WILLNEED``, so the disk
    reads while the current batch is computed) and drop the finished batch's
    pages from this process (``MADV_DONTNEED``: they stay in the page cache,
    but no longer count as this process's resident memory). A no-op for
    anything else, or where the platform lacks ``madvise``."""

    def __init__(self, X):
        self.map = None
        owner = X
        while isinstance(getattr(owner, "base", None), np.ndarray):
            owner = owner.base  # the array made on the mapping itself
        if (isinstance(X, np.memmap) and isinstance(owner, np.memmap)
                and isinstance(owner.base, mmap.mmap)
                and X.flags.c_contiguous and hasattr(mmap.mmap, "madvise")
                and hasattr(mmap, "MADV_DONTNEED")):
            self.map = owner.base
            # byte position of X[0] in the mapping, and bytes per row
            self.start = (X.__array_interface__["data"][0]
                          - owner.__array_interface__["data"][0]
                          + owner.offset % mmap.ALLOCATIONGRANULARITY)
            self.row_bytes = X.strides[0]

    def _advise(self, option, rows):
        if self.map is None or rows.stop <= rows.start:
            return
        begin = self.start + rows.start * self.row_bytes
        end = self.start + rows.stop * self.row_bytes
        page = mmap.PAGESIZE
        if option == mmap.MADV_DONTNEED:
            first, last = -(-begin // page) * page, end // page * page  # whole pages only
        else:
            first, last = begin // page * page, end
        if last > first:
            try:
                self.map.madvise(option, first, min(last, len(self.map)) - first)
            except (OSError, ValueError):  # advice only: never fail a fit on it
                self.map = None

    def prefetch(self, rows):
        self._advise(getattr(mmap, "MADV_WILLNEED", None) or 0, rows)

    def release(self, rows):
        self._advise(mmap.MADV_DONTNEED, rows)


class _Progress:
    """One line per batch: rows, bytes, speed and an estimate of the time left."""

    def __init__(self, n_rows, n_batches, stream=None):
        self.n_rows, self.n_batches = n_rows, n_batches
        self.rows = self.bytes = self.batches = 0
        self.stream = stream or sys.stdout
        self.start = time.perf_counter()

    def update(self, X):
        self.batches += 1
        self.rows += int(X.shape[0])
        self.bytes += int(getattr(X, "nbytes", 0) or 0)
        elapsed = time.perf_counter() - self.start
        if self.n_rows:
            done, of = self.rows / self.n_rows, f"{self.rows:,}/{self.n_rows:,} rows"
        else:
            done = self.batches / self.n_batches if self.n_batches else None
            of = f"{self.rows:,} rows"
        count = f"batch {self.batches}" + (f"/{self.n_batches}" if self.n_batches else "")
        speed = f"{self.bytes / 1e6 / elapsed:,.0f} MB/s" if elapsed > 0 else ""
        left = ""
        if done:
            left = f", about {_duration(elapsed * (1 - done) / done)} left"
        print(f"[partial_fit_batches] {count}: {of}, {_size(self.bytes)} in "
              f"{_duration(elapsed)} ({speed}){left}", file=self.stream, flush=True)

    def done(self):
        elapsed = time.perf_counter() - self.start
        print(f"[partial_fit_batches] fitted on {self.rows:,} rows in {_duration(elapsed)}",
              file=self.stream, flush=True)


def _size(n_bytes):
    return f"{n_bytes / 1e9:.2f} GB" if n_bytes >= 1e9 else f"{n_bytes / 1e6:.1f} MB"


def _duration(seconds):
    if seconds < 60:
        return f"{seconds:.1f} s"
    minutes, seconds = divmod(int(round(seconds)), 60)
    if minutes < 60:
        return f"{minutes} min {seconds:02d} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes:02d} min"
