"""Fits as sums over row blocks, in this process or on Dask workers.

Every skfunc fit is ``solve(merge(statistics of each block of rows))``: what a
fit needs from the data (counts, sums, cross products) is additive over rows.
This module runs that one path on whatever holds the rows:

* :func:`row_blocks` cuts rows into blocks of about :data:`CHUNK_VALUES`
  values, the one memory bound of every in-memory loop over rows;
* :func:`compute_statistics` applies a per-block statistics function to row
  blocks of numpy arrays, or, for Dask arrays, to every block on the workers,
  and reduces the results in a tree, so only statistic-sized results (K x K,
  not n x m) travel;
* :func:`chunked_matmul` applies a fitted linear operator block by block;
* :func:`map_row_blocks` / :func:`apply_rows` apply a row-wise function (a
  transform, a predict) block by block, lazily for a Dask array.

Dask is optional: :func:`is_dask_array` never imports it, and nothing here
imports it unless a Dask array was passed in. Validation of Dask input lives
in :mod:`skfunc._dask`.
"""

import sys

import numpy as np

from ._penalized import merge as merge_sums

#: rows per in-memory block are chosen so that one block of input holds about
#: this many values (32 MiB of float64)
CHUNK_VALUES = 1 << 22

#: how many partial results one task of the tree reduction merges
SPLIT_EVERY = 8


def is_dask_array(X):
    """Whether ``X`` is a Dask array, without importing Dask."""
    module = sys.modules.get("dask.array")
    return module is not None and isinstance(X, module.Array)


def row_blocks(n_rows, n_features, rows=None):
    """``slice`` objects covering ``range(n_rows)`` in blocks of about
    :data:`CHUNK_VALUES` values (or of ``rows`` rows)."""
    rows = rows or max(1, CHUNK_VALUES // max(int(n_features), 1))
    return [slice(start, min(start + rows, n_rows)) for start in range(0, n_rows, rows)]


def compute_statistics(statistics, X, *others, merge=merge_sums):
    """Merged statistics of all rows of ``X`` (and the matching rows of ``others``).

    Parameters
    ----------
    statistics : callable
        ``statistics(X_block, *other_blocks)`` returning additive statistics
        (for example a dict of arrays) of those rows. For Dask input it runs on
        the workers, so it must be picklable (a module-level function, or a
        bound method of a small fitted object).
    X : ndarray or dask array of shape (n_samples, n_features)
    *others : ndarray, dask array or None
        Row-aligned arrays (targets, sample weights); None is passed through.
    merge : callable, default=skfunc._penalized.merge
        ``merge(*stats)`` combining statistics of disjoint blocks.

    Returns
    -------
    stats : the merged statistics, in this process.
    """
    if is_dask_array(X):
        return _reduce_blocks(statistics, X, *others, merge=merge)
    width = sum(int(np.prod(a.shape[1:])) for a in (X, *others) if a is not None)
    parts = [
        statistics(X[rows], *(None if o is None else o[rows] for o in others))
        for rows in row_blocks(X.shape[0], width)
    ]
    return merge(*parts)


def count_rows(X, *others):
    """Statistics of estimators whose fit needs only the number of rows."""
    return {"n_samples": X.shape[0]}


def _reduce_blocks(statistics, X, *others, merge):
    """Per-block statistics on the workers, merged in a tree."""
    import dask

    blocks = [X.to_delayed().ravel()]
    for other in others:
        if other is None:
            blocks.append([None] * len(blocks[0]))
        else:
            blocks.append(_along_rows_of(X, other).to_delayed().ravel())
    func = dask.delayed(statistics, pure=True)
    parts = [func(*block) for block in zip(*blocks, strict=True)]
    merge_task = dask.delayed(merge, pure=True)
    while len(parts) > 1:
        parts = [
            merge_task(*parts[i : i + SPLIT_EVERY])
            for i in range(0, len(parts), SPLIT_EVERY)
        ]
    with _single_threaded_blas_under_threads(parts[0]):
        (stats,) = dask.compute(parts[0])
    return stats


def _single_threaded_blas_under_threads(collection):
    """Limit BLAS to one thread while Dask's local thread pool runs blocks.

    That scheduler runs one block per core, so BLAS threads on top would
    oversubscribe the cores. Distributed workers already start with one BLAS
    thread per worker thread, and other schedulers need no limit.
    """
    import contextlib

    import dask.threaded
    from dask.base import get_scheduler
    from threadpoolctl import threadpool_limits

    if get_scheduler(collections=[collection]) is dask.threaded.get:
        return threadpool_limits(limits=1, user_api="blas")
    return contextlib.nullcontext()


def _along_rows_of(X, other):
    """``other`` (numpy or dask) as a dask array with X's row chunks."""
    import dask.array as da

    if not is_dask_array(other):
        other = np.asarray(other)
        return da.from_array(other, chunks=(X.chunks[0],) + other.shape[1:])
    if other.chunks[0] != X.chunks[0]:
        raise ValueError(
            "The row chunks of X and y (or sample_weight) do not line up: X "
            f"has row chunks {X.chunks[0]}, y has {other.chunks[0]}. Rechunk "
            "one to the other, for example y = y.rechunk({0: X.chunks[0]})."
        )
    return other.rechunk({i: -1 for i in range(1, other.ndim)})


def apply_rows(func, X, n_out=None, **kwargs):
    """``func(X, **kwargs)``; for a dask X, on each row block, lazily.

    ``func`` must act on rows independently and return (rows, n_out), or
    (rows,) when ``n_out`` is None.
    """
    if is_dask_array(X):
        return map_row_blocks(func, X, n_out, **kwargs)
    return func(X, **kwargs)


def map_row_blocks(func, X, n_out=None, **kwargs):
    """``func(block, **kwargs)`` on each row block of ``X``, lazily.

    ``func`` maps a block of rows to an array of shape (rows, n_out), or
    (rows,) when ``n_out`` is None. Returns a float64 dask array.
    """
    if n_out is None:
        return X.map_blocks(
            func, drop_axis=1, chunks=(X.chunks[0],), meta=np.empty(0), **kwargs
        )
    return X.map_blocks(
        func, chunks=(X.chunks[0], (int(n_out),)), meta=np.empty((0, 0)), **kwargs
    )


def matmul_block(block, operator_T):
    """``block @ operator_T`` in float64 (the block function of transforms)."""
    return np.asarray(block, dtype=np.float64) @ operator_T


def affine_block(block, coef, intercept):
    """``block @ coef + intercept`` in float64 (the block function of predicts)."""
    return np.asarray(block, dtype=np.float64) @ coef + intercept


def chunked_matmul(X, operator_T):
    """``X @ operator_T`` in row blocks, converting each block to float64.

    Peak memory stays near input + output whatever X's dtype or layout. For a
    dask array X the product runs block by block and a lazy dask array is
    returned.
    """
    if is_dask_array(X):
        return map_row_blocks(matmul_block, X, operator_T.shape[1],
                              operator_T=operator_T)
    out = np.empty((X.shape[0], operator_T.shape[1]), dtype=np.float64)
    for rows in row_blocks(*X.shape):
        np.matmul(np.asarray(X[rows], dtype=np.float64), operator_T, out=out[rows])
    return out
