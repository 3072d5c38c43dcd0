"""Fits as sums over row blocks, in this process or on Dask workers.

Every skfunc fit is ``solve(merge(statistics of each block of rows))``: what a
fit needs from the data (counts, sums, cross products) is additive over rows.
This module runs that one path on whatever holds the rows:

* :func:`row_blocks` cuts rows into blocks of about :data:`CHUNK_VALUES`
  values, the one memory bound of every in-memory loop over rows
  (:func:`cache_rows`: blocks of :data:`CACHE_VALUES`, for row-wise work
  whose temporaries should stay in cache);
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

import contextlib
import contextvars
import functools
import os
import sys
import threading

import numpy as np

from ._penalized import merge as merge_sums

#: rows per in-memory block are chosen so that one block of input holds about
#: this many values (32 MiB of float64)
CHUNK_VALUES = 1 << 22

#: rows per block of a row-wise computation whose temporaries are as large
#: as the block (interpolation, scoring candidates) are chosen so that one
#: block holds about this many values (1 MiB of float64): its temporaries
#: stay within a core's cache, so the time per row does not grow with the
#: number of rows (also the row pieces of :func:`in_pieces`)
CACHE_VALUES = 1 << 17

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


def cache_rows(n_features):
    """Rows of ``n_features`` values that hold about :data:`CACHE_VALUES`."""
    return max(1, CACHE_VALUES // max(int(n_features), 1))


#: the reusable buffers of :func:`scratch`, one per thread
_SCRATCH = threading.local()


def scratch(shape):
    """An uninitialised float64 array of ``shape`` for a temporary of a row
    piece (:func:`in_pieces`), reused by the next call from this thread
    (so valid until then: for a temporary no caller keeps).

    A piece's largest temporary (the weighted design of a Hessian, about a
    MiB) would otherwise be allocated and freed once per piece, every pass.
    Where glibc returns freed memory to the system at once (Dask's nanny
    starts its workers with ``MALLOC_TRIM_THRESHOLD_=65536``) each such
    allocation faults its pages in again: on a distributed worker half of a
    Newton pass's time was system time, and a pass over 100,000 rows took
    16 ms instead of 9 ms; with this buffer, 10 ms. Buffers beyond 4
    :data:`CACHE_VALUES` are not kept (a fresh array is returned).
    """
    size = int(np.prod(shape))
    if size > 4 * CACHE_VALUES:
        return np.empty(shape)
    buffer = getattr(_SCRATCH, "buffer", None)
    if buffer is None or buffer.size < size:
        buffer = _SCRATCH.buffer = np.empty(max(size, CACHE_VALUES))
    return buffer[:size].reshape(shape)


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
    blocks = row_blocks(X.shape[0], width)

    def block_statistics(rows):
        return statistics(X[rows], *(None if o is None else o[rows] for o in others))

    pool = getattr(_BLOCK_THREADS, "pool", None)
    if pool is None or X.shape[0] < 2:
        return merge(*map(block_statistics, blocks))
    # the same number of blocks on every thread, each within CHUNK_VALUES
    n_blocks = -(-len(blocks) // pool.n_threads) * pool.n_threads
    rows = -(-X.shape[0] // n_blocks)
    return merge(*on_block_threads(block_statistics, row_blocks(X.shape[0], width, rows)))


def on_block_threads(func, blocks):
    """``[func(rows) for rows in blocks]``, on the threads of
    :func:`block_threads` when this thread is within one (else here), in the
    caller's context (numpy's errstate) and in order: the result of one
    thread."""
    pool = getattr(_BLOCK_THREADS, "pool", None)
    if pool is None:
        return list(map(func, blocks))
    context = contextvars.copy_context()
    return list(pool.executor.map(lambda rows: context.copy().run(func, rows), blocks))


def in_pieces(statistics, X, *others, merge=merge_sums):
    """``merge`` of ``statistics(X_piece, *other_pieces)`` over row pieces
    of about :data:`CACHE_VALUES` values of one block of numpy rows (None
    entries of ``others`` pass through): for statistics made of elementwise
    products, which then run in the cache (2 to 3 times faster than over a
    block of :data:`CHUNK_VALUES`, and no slower on bigger blocks). The
    pieces' matrix products are small (a few MFlop): they run on one BLAS
    thread, whose latency is lower than a team's (on a busy machine a team
    of two made a fit several times slower)."""
    width = sum(int(np.prod(np.shape(a)[1:])) for a in (X, *others) if a is not None)
    pieces = row_blocks(X.shape[0], width, rows=cache_rows(width))
    with single_thread_blas():
        return merge(*(statistics(X[rows], *(None if o is None else o[rows] for o in others))
                       for rows in pieces or [slice(0, 0)]))


#: the block threads of :func:`block_threads`, per calling thread
_BLOCK_THREADS = threading.local()


class _BlockPool:
    def __init__(self, executor, n_threads):
        self.executor, self.n_threads = executor, n_threads


@contextlib.contextmanager
def block_threads(n_threads):
    """Within the block, :func:`compute_statistics` called from this thread
    computes the statistics of numpy row blocks on ``n_threads`` threads (in
    equal blocks, a multiple of ``n_threads`` of them), with BLAS at one
    thread, and merges them in order: the result is that of one thread.

    For statistics functions that are safe to run at once on several blocks
    (they read the estimator, never write it). Every step of a block's
    statistics then runs on all cores (the matrix product, the reductions,
    the page faults of a memory-mapped file), where BLAS threads would share
    only the product.
    """
    if n_threads <= 1:
        yield
        return
    previous = getattr(_BLOCK_THREADS, "pool", None)
    with single_thread_blas():
        _BLOCK_THREADS.pool = _BlockPool(_executor(n_threads), n_threads)
        try:
            yield
        finally:
            _BLOCK_THREADS.pool = previous


#: the thread pools of :func:`block_threads`: (process id, threads) -> pool
_EXECUTORS = {}


def _executor(n_threads):
    """A pool of ``n_threads`` threads kept for the process: starting the
    threads at every call cost about 1 ms, a sixth of a float32 prediction
    of 100,000 curves on 500 points. The process id is part of the key, so
    a forked child (whose copy of a pool has no threads) starts its own."""
    from concurrent.futures import ThreadPoolExecutor

    key = (os.getpid(), int(n_threads))
    executor = _EXECUTORS.get(key)
    if executor is None:
        executor = _EXECUTORS[key] = ThreadPoolExecutor(
            n_threads, thread_name_prefix="skfunc-blocks")
    return executor


def blas_thread_count():
    """The threads BLAS would use now (an outer threadpoolctl limit included)."""
    return max((lib.num_threads for lib in _controller().select(user_api="blas").lib_controllers),
               default=1)


def count_rows(X, *others):
    """Statistics of estimators whose fit needs only the number of rows."""
    return {"n_samples": X.shape[0]}


def _reduce_blocks(statistics, X, *others, merge):
    """Per-block statistics on the workers, merged in a tree."""
    return reduce_delayed(statistics, delayed_row_blocks(X, *others), merge)


def delayed_row_blocks(X, *others):
    """The row blocks of a dask ``X`` with the matching blocks of ``others``
    (None passed through): one tuple of delayed objects per block."""
    blocks = [X.to_delayed().ravel()]
    for other in others:
        if other is None:
            blocks.append([None] * len(blocks[0]))
        else:
            blocks.append(_along_rows_of(X, other).to_delayed().ravel())
    return list(zip(*blocks, strict=True))


def reduce_delayed(statistics, blocks, merge=merge_sums):
    """``merge`` of ``statistics(*block)`` over delayed row blocks.

    Partial results are merged on the workers in a tree, :data:`SPLIT_EVERY`
    at a time, until at most that many are left; those are fetched and
    merged here (one task and one transfer between workers fewer than a last
    merge on a worker: a pass is bound by its rounds of messages).
    """
    import dask

    func = dask.delayed(statistics, pure=True)
    parts = [func(*block) for block in blocks]
    merge_task = dask.delayed(merge, pure=True)
    while len(parts) > SPLIT_EVERY:
        parts = [
            merge_task(*parts[i : i + SPLIT_EVERY])
            for i in range(0, len(parts), SPLIT_EVERY)
        ]
    with _single_threaded_blas_under_threads(parts[0]):
        return merge(*dask.compute(*parts))


def kept_blocks(func, X, *others):
    """``func(*block)`` of every row block of dask arrays, computed and kept
    (on the workers with a distributed scheduler): a list of persisted
    delayed results, one per block, for passes that reuse what a first pass
    formed (for example with :func:`reduce_delayed`)."""
    import dask

    func = dask.delayed(func, pure=True)
    parts = [func(*block) for block in delayed_row_blocks(X, *others)]
    with _single_threaded_blas_under_threads(parts[0]):
        return list(dask.persist(*parts))


#: a :class:`KeptRows` block of fewer values than this is merged with its
#: neighbours (4 MiB of float64): many small tasks would cost a round of
#: messages each per pass
KEPT_MIN_VALUES = CHUNK_VALUES // 8


class KeptRows:
    """Row-aligned arrays that many passes read (the steps of a Newton path).

    ``kept(statistics)`` is ``compute_statistics(statistics, *arrays)``. Dask
    arrays are persisted and cut into their delayed blocks once, so that a
    pass builds only its own tasks. Their row chunks are kept where they
    already stay (no data moves between workers) unless the blocks hold
    fewer than :data:`KEPT_MIN_VALUES` values (a narrow array in the row
    chunks of wide curves): those are merged.

    On a distributed cluster a pass is one call per worker over the blocks
    it holds (:meth:`_per_worker`): the scheduler's cost per task and a
    graph built and optimised per pass took as long as the arithmetic (a
    Newton pass over 200,000 rows in 8 blocks on two workers: 60-100 ms as a
    graph of 8 tasks, 40-57 ms as 2 submitted ones, against 35-45 ms in
    memory). The call goes to a Dask actor on the worker
    (:class:`_WorkerBlocks`), which skips the scheduler's round trip; where
    actors cannot be made, or a call fails (a lost worker), the pass is one
    submitted task per worker, for which the scheduler recomputes lost
    blocks.
    """

    def __init__(self, X, *others):
        self._blocks = None
        if is_dask_array(X):
            import dask

            width = max(int(np.prod(X.shape[1:])), 1)
            others = [None if other is None else _along_rows_of(X, other)
                      for other in others]
            if max(X.chunks[0]) * width < KEPT_MIN_VALUES:
                rows = {0: max(1, KEPT_MIN_VALUES // width)}
                X, *others = (None if a is None else a.rechunk(rows)
                              for a in (X, *others))
            X, *others = dask.persist(X, *others)
            self._blocks = delayed_row_blocks(X, *others)
        self.arrays = (X, *others)

    def __call__(self, statistics, merge=merge_sums):
        """``merge`` of ``statistics(*block)`` over the row blocks; on a
        cluster the blocks come grouped by worker, not in row order, so
        ``merge`` must not depend on their order (sums)."""
        if self._worker_groups is not None:
            return self._per_worker(statistics, merge)
        if self._blocks is None:
            return compute_statistics(statistics, *self.arrays, merge=merge)
        return reduce_delayed(statistics, self._blocks, merge)

    @functools.cached_property
    def _worker_groups(self):
        """:func:`_blocks_by_worker` of the persisted arrays (None in memory
        or without a distributed client), formed at the first pass: users
        of ``arrays`` alone need no grouping."""
        return None if self._blocks is None else _blocks_by_worker(*self.arrays)

    def _per_worker(self, statistics, merge):
        holders = self._holders
        if holders:
            try:
                calls = [holder.run(statistics, merge) for holder in holders]
                return merge(*(call.result() for call in calls))
            except Exception:
                # a lost worker (or an error of the statistics, which the
                # tasks below raise again): the tasks recompute lost blocks
                self._holders = []
        client, groups = self._worker_groups
        parts = [client.submit(_over_blocks, statistics, merge, blocks, pure=False)
                 for _, blocks in groups]
        return merge(*client.gather(parts))

    @functools.cached_property
    def _holders(self):
        """A :class:`_WorkerBlocks` actor per worker, holding that worker's
        blocks ([] where actors cannot be made)."""
        client, groups = self._worker_groups
        try:
            # (the actors bind to the current client: the blocks' one)
            with client.as_current():
                made = [client.submit(_WorkerBlocks, blocks, actor=True, workers=[worker],
                                      allow_other_workers=False, pure=False)
                        for worker, blocks in groups]
                return [future.result() for future in made]
        except Exception:
            return []


class _WorkerBlocks:
    """One worker's row blocks, held by a Dask actor on that worker, so that
    a pass is one direct call per worker: a submitted task's round trip
    through the scheduler took 10-19 ms on the development machine's
    LocalCluster, an actor's call 3-4 ms, and a Newton path makes 15 to 20
    passes."""

    def __init__(self, blocks):
        self.blocks = blocks

    def run(self, statistics, merge):
        return _over_blocks(statistics, merge, self.blocks)


def _over_blocks(statistics, merge, blocks):
    """``merge`` of ``statistics(*block)`` over blocks (one worker's)."""
    return merge(*(statistics(*block) for block in blocks))


def _blocks_by_worker(X, *others):
    """``(client, groups)``: the row blocks of persisted dask arrays, as
    tuples of distributed futures (None for a None array), grouped by the
    worker that holds the block of ``X``; None where the blocks are not all
    futures of one distributed client."""
    distributed = sys.modules.get("distributed")
    if distributed is None:
        return None
    columns = []
    for array in (X, *others):
        if array is None:
            columns.append([None] * X.numblocks[0])
            continue
        futures = {future.key: future for future in distributed.futures_of(array)}
        keys = [block.key for block in array.to_delayed().ravel()]
        if any(key not in futures for key in keys):
            return None
        columns.append([futures[key] for key in keys])
    if not columns[0]:
        return None
    client = columns[0][0].client
    if any(f is not None and f.client is not client for column in columns for f in column):
        return None
    distributed.wait(columns[0])
    holders = client.who_has(columns[0])
    groups = {}
    for block in zip(*columns, strict=True):
        workers = holders.get(block[0].key) or ("",)
        groups.setdefault(workers[0], []).append(block)
    return client, list(groups.items())


def _single_threaded_blas_under_threads(collection):
    """Limit BLAS to one thread while Dask's local thread pool runs blocks.

    That scheduler runs one block per core, so BLAS threads on top would
    oversubscribe the cores. Distributed workers already start with one BLAS
    thread per worker thread, and other schedulers need no limit.
    """
    import contextlib

    import dask.threaded
    from dask.base import get_scheduler

    if get_scheduler(collections=[collection]) is dask.threaded.get:
        return single_thread_blas()
    return contextlib.nullcontext()


_CONTROLLER = None


def _controller():
    """The process's threadpoolctl controller (inspecting the loaded
    libraries takes milliseconds: once)."""
    global _CONTROLLER
    if _CONTROLLER is None:
        from threadpoolctl import ThreadpoolController

        _CONTROLLER = ThreadpoolController()
    return _CONTROLLER


def single_thread_blas():
    """A context with one BLAS thread in this process (the one place skfunc
    lowers the BLAS threads: work it runs beside other threads)."""
    return _controller().limit(limits=1, user_api="blas")


def in_main_thread():
    """Whether this is the process's main thread. The BLAS limit of
    :func:`single_thread_blas` is process-wide: limits opened by several
    threads at once (Dask's local threads computing a lazy transform) could
    close out of order and leave BLAS at one thread, so work that may run
    in such threads limits BLAS, or starts threads of its own, only from
    the main thread."""
    return threading.current_thread() is threading.main_thread()


def single_thread_blas_from_main():
    """:func:`single_thread_blas` in the main thread; elsewhere no change
    (see :func:`in_main_thread`)."""
    return single_thread_blas() if in_main_thread() else contextlib.nullcontext()


#: dense solves and eigensolves of up to this many unknowns run with one
#: BLAS thread (:func:`single_thread_blas_up_to`): the Newton systems of the
#: classifier (2,236 unknowns for 52 classes) and FPCA's K x K eigensolves
SMALL_DENSE_SIZE = 4000


def single_thread_blas_up_to(size):
    """:func:`single_thread_blas` for a dense solve or eigensolve of ``size``
    unknowns up to :data:`SMALL_DENSE_SIZE`; no limit for larger ones.

    Up to a few thousand unknowns these are bound by latency, not
    arithmetic: extra BLAS threads only add synchronisation, which on a busy
    machine costs several times the solve itself. Switching costs about
    0.1 ms (the controller is made once), so small sizes switch too.
    """
    return single_thread_blas() if size <= SMALL_DENSE_SIZE else contextlib.nullcontext()


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


def apply_rows(func, X, n_out=None, *, dtype=np.float64, **kwargs):
    """``func(X, **kwargs)``; for a dask X, on each row block, lazily.

    ``func`` must act on rows independently and return (rows, n_out), or
    (rows,) when ``n_out`` is None, of ``dtype``.
    """
    if is_dask_array(X):
        return map_row_blocks(func, X, n_out, dtype=dtype, **kwargs)
    return func(X, **kwargs)


def map_row_blocks(func, X, n_out=None, *, dtype=np.float64, **kwargs):
    """``func(block, **kwargs)`` on each row block of ``X``, lazily.

    ``func`` maps a block of rows to an array of shape (rows, n_out), or
    (rows,) when ``n_out`` is None. Returns a dask array of ``dtype``.
    """
    if n_out is None:
        return X.map_blocks(
            func, drop_axis=1, chunks=(X.chunks[0],), meta=np.empty(0, dtype), **kwargs
        )
    return X.map_blocks(
        func, chunks=(X.chunks[0], (int(n_out),)), meta=np.empty((0, 0), dtype), **kwargs
    )


def output_dtype(X):
    """The dtype of transforms and predictions of ``X``: float32 for float32
    input (half the memory and bandwidth; scikit-learn's ``preserves_dtype``),
    float64 for everything else."""
    dtype = getattr(X, "dtype", None)
    return np.dtype(np.float32) if dtype == np.float32 else np.dtype(np.float64)


#: relative error of a float32 product (against float64) above which
#: :class:`Float32Product` centers the rows first; 1/10 of the 1e-5 that
#: float32 results promise, so the estimate from a sample has room
FLOAT32_RTOL = 1e-6

#: rows of the sample from which :class:`Float32Product` estimates its error
FLOAT32_SAMPLE_ROWS = 256


def padded_width(k):
    """Columns of a float32 operator of ``k`` columns as multiplied: 3, 5, 6
    and 7 are padded with zero columns to 4 or 8. OpenBLAS's single-precision
    kernels work on columns in fours: a cache-resident piece of 262 x 500
    times 500 x k took (us, one thread, the development machine) k = 3: 53,
    4: 44, 5: 60, 7: 76, 8: 42 (and 9: 60, 12: 67, where padding would not
    pay)."""
    return 4 if k == 3 else 8 if 5 <= k <= 7 else k


def product_into(block, operator, out):
    """``block @ operator`` written into ``out``. A one-column operator (a
    prediction) goes through numpy's einsum loop: OpenBLAS's matrix-vector
    kernels read rows at about half the speed of memory on one thread
    (float32 16.6 ms, float64 25 ms for 100,000 x 500 on the development
    machine; einsum 8.7 ms and 19.5 ms), and :func:`chunked_matmul` runs
    such blocks on threads."""
    if operator.shape[1] == 1:
        np.einsum("ij,j->i", block, operator[:, 0], out=out[:, 0])
    else:
        np.matmul(block, operator, out=out)
    return out


class Float32Product:
    """``X @ operator_T + offset`` for float32 rows, in float32, accurate.

    A float32 matrix product costs about half of a float64 one (half the
    bytes to read, twice the values per vector instruction), but its sums
    are rounded at the size of their terms: on curves with a large mean
    (kiln temperatures near 1200 °C varying by a few degrees) ``x @ a`` is
    large and the fitted quantity (a score, a prediction) small, and a plain
    float32 product loses about ``1200 / 5`` times its unit roundoff. So the
    first call estimates the error of the plain product on a sample of rows
    against float64 and, when it exceeds :data:`FLOAT32_RTOL`, centers every
    block first: ``(x - c) @ a + (c @ a + offset)`` with a float32 center
    ``c`` (the sample's column means). The subtraction of two float32 numbers
    is rounded relative to their difference, and ``c @ a`` is computed in
    float64, so no digit is lost to the mean.
    """

    def __init__(self, sample, operator_T, offset=None):
        operator_T = np.asarray(operator_T, dtype=np.float64)
        k = operator_T.shape[1]
        offset = np.zeros(k) if offset is None else np.broadcast_to(
            np.asarray(offset, dtype=np.float64), (k,))
        # C order (a product of a cache-sized piece with a transposed, F
        # order, operator ran 1.3x to 1.5x slower: 100,000 x 500, K = 5),
        # with zero columns beyond k (padded_width)
        self.width = k
        self.operator32 = np.zeros((len(operator_T), padded_width(k)), dtype=np.float32)
        self.operator32[:, :k] = operator_T
        self.offset32 = offset.astype(np.float32)
        self.center = None
        step = max(1, sample.shape[0] // FLOAT32_SAMPLE_ROWS)
        rows = np.asarray(sample[::step][:FLOAT32_SAMPLE_ROWS], dtype=np.float32)
        with np.errstate(all="ignore"):
            exact = rows.astype(np.float64) @ operator_T + offset
            plain = product_into(rows, self.operator32, np.empty(
                (len(rows), self.operator32.shape[1]), np.float32))[:, :k]
            plain += self.offset32
            size = np.linalg.norm(exact[np.isfinite(exact).all(axis=1)])
            error = np.linalg.norm((plain - exact)[np.isfinite(exact).all(axis=1)])
        if error > FLOAT32_RTOL * size:
            # the mean of each column's finite values (0 where there are
            # none; np.nanmean took 0.8 ms here, half of this check)
            finite = np.isfinite(rows)
            count = finite.sum(axis=0)
            total = np.where(finite, rows, 0).sum(axis=0, dtype=np.float64)
            center = np.divide(total, count, out=np.zeros(len(count)), where=count > 0)
            self.center = center.astype(np.float32)
            self.offset32 = (self.center.astype(np.float64) @ operator_T
                             + offset).astype(np.float32)

    def __call__(self, block, out=None):
        block = np.asarray(block, dtype=np.float32)
        if out is None:
            out = np.empty((block.shape[0], self.width), dtype=np.float32)
        if not self.in_pieces:
            product_into(block, self.operator32, out)
        else:
            self._in_pieces(block, out)
        out += self.offset32
        return out

    @property
    def in_pieces(self):
        """Whether blocks run in cache-sized pieces (centered or padded).
        Uncentered padded pieces keep BLAS's threads: on block threads the
        FunctionalPCA transform of 100,000 x 500 (K = 5) took 0.58-0.59 of
        the float64 time instead of 0.52-0.53 (best of 15)."""
        return self.center is not None or self.operator32.shape[1] > self.width

    def _in_pieces(self, block, out):
        """``block (- center) @ operator32`` into ``out``, in pieces of about
        :data:`CACHE_VALUES` values, each centered and multiplied while it is
        still in the cache (centering a whole block first would write it to
        memory and read it back: 0.8x the float64 product's time instead of
        0.5x), through a padded result when the operator is padded."""
        rows = cache_rows(block.shape[1])
        padded = self.operator32.shape[1]
        buffer = np.empty((rows, block.shape[1]), dtype=np.float32)
        result = np.empty((rows, padded), dtype=np.float32)
        for piece in row_blocks(block.shape[0], block.shape[1], rows=rows):
            size = piece.stop - piece.start
            centered = block[piece] if self.center is None else np.subtract(
                block[piece], self.center, out=buffer[:size])
            if padded == self.width:
                product_into(centered, self.operator32, out[piece])
            else:
                out[piece] = product_into(centered, self.operator32, result[:size])[:, : self.width]


def block_product(sample, operator_T, offset=None, *, dtype=np.float64):
    """The function ``block -> block @ operator_T (+ offset)`` of row blocks
    (taking ``out=``): the one place that chooses the precision of a product.

    For ``dtype=np.float32`` (transforms and predictions of float32 input,
    :func:`output_dtype`) it runs in float32 through :class:`Float32Product`,
    which checks its error on ``sample``; for anything else every block is
    promoted to float64 (the statistics of fits, float64 results).
    """
    if np.dtype(dtype) == np.float32:
        return Float32Product(sample, operator_T, offset)

    def product(block, out=None):
        if out is None:
            out = np.empty((block.shape[0], operator_T.shape[1]))
        product_into(np.asarray(block, dtype=np.float64), operator_T, out)
        if offset is not None:
            out += offset
        return out

    return product


def chunked_matmul(X, operator_T, offset=None, *, dtype=np.float64):
    """``X @ operator_T (+ offset)`` in row blocks.

    Peak memory stays near input + output whatever X's dtype or layout. With
    ``dtype=np.float64`` (statistics of fits) every block is converted to
    float64; transforms and predictions pass ``dtype=output_dtype(X)``, so
    float32 rows give a float32 result computed in float32
    (:func:`block_product`). For a dask array X the product runs block by
    block and a lazy dask array is returned.
    """
    dtype = np.dtype(dtype)
    if is_dask_array(X):
        # each dask block through the loop below (picklable: a partial of
        # this module-level function)
        return map_row_blocks(functools.partial(chunked_matmul, dtype=dtype), X,
                              operator_T.shape[1], dtype=dtype,
                              operator_T=operator_T, offset=offset)
    out = np.empty((X.shape[0], operator_T.shape[1]), dtype=dtype)
    product = block_product(X, operator_T, offset, dtype=dtype)
    blocks = row_blocks(*X.shape)
    # a block's work that runs mostly in numpy, on one core (a one-column
    # product, product_into; centering, Float32Product): the blocks on as
    # many threads as BLAS would use, each with one BLAS thread (from the
    # main thread only, in_main_thread)
    in_numpy = (operator_T.shape[1] == 1 or getattr(product, "center", None) is not None) \
        and in_main_thread()
    with block_threads(min(len(blocks), blas_thread_count()) if in_numpy else 1):
        on_block_threads(lambda rows: product(X[rows], out=out[rows]), blocks)
    return out


#: a :class:`BandedProduct` cuts the grid into segments of at least this many
#: points, and into at most one segment per :data:`BAND_COLUMNS` columns of
#: the operator (thinner products run slower per value). Measured on the
#: 2-core development machine (one BLAS thread, 33,554 x 500 float64 in
#: blocks of 8,388 rows; MB of X per CPU second for 1, 2, 3, 4, 6, 8
#: segments): B-splines with K = 20: 2,317, 2,315, 2,970, 2,971, 2,705,
#: 2,224; K = 39: 1,373, 1,954, 2,228, 2,441, 2,265, 2,070; K = 80: 834,
#: 1,307, 1,593, 1,767, 1,655, 1,631; on 1,000 points with K = 40: 1,398,
#: 2,048, 2,402, 2,552, 2,809, 2,586. Four segments on 500 points: 120
BAND_MIN_POINTS = 120

#: see :data:`BAND_MIN_POINTS`
BAND_COLUMNS = 4


class BandedProduct:
    """``X @ operator`` for an operator (m, K) whose columns are each nonzero
    on a run of rows, like B-splines on a grid (each is nonzero on
    ``degree + 1`` knot intervals), at a fraction of the dense cost.

    The grid is cut into segments (each of at least :data:`BAND_MIN_POINTS`
    points, at most one per :data:`BAND_COLUMNS` columns) and each
    segment of X's columns is multiplied by only the operator's columns
    nonzero there: one matrix product per segment, added into the result.
    The sums run in another order than the dense product's, so the result
    equals it up to rounding. An operator without that structure (a Fourier
    basis, a dense map) is applied as one product.

    Every value of X enters the result: a NaN or inf anywhere in X makes
    its row of the result non-finite, also in the columns of X that no
    column of the operator sees (``unused``: all-zero rows of the operator),
    for which the row's first value is set to NaN. So the result can stand
    in for a scan of X.
    """

    def __init__(self, operator):
        self.operator = np.asarray(operator, dtype=np.float64)
        m, k = self.shape = self.operator.shape
        nonzero = self.operator != 0
        self.unused = np.flatnonzero(~nonzero.any(axis=1))
        self.segments = None
        n_segments = min(k // BAND_COLUMNS, m // BAND_MIN_POINTS)
        if n_segments < 2:
            return
        edges = np.linspace(0, m, n_segments + 1).round().astype(int)
        segments, work = [], 0
        for start, stop in zip(edges[:-1], edges[1:]):
            columns = np.flatnonzero(nonzero[start:stop].any(axis=0))
            if not columns.size:
                continue
            if columns[-1] - columns[0] + 1 == columns.size:  # a run: a view
                columns = slice(int(columns[0]), int(columns[-1]) + 1)
            part = np.ascontiguousarray(self.operator[start:stop, columns])
            segments.append((slice(int(start), int(stop)), columns, part))
            work += part.size
        if work < 0.6 * self.operator.size:  # else one dense product is as fast
            self.segments = segments

    def __call__(self, X, operator=None):
        """``X @ operator`` in float64 (a new array), by row blocks; or
        ``X @ operator`` for another ``operator`` with the same zero rows
        (one product; unused columns handled alike)."""
        if self.segments is None or operator is not None:
            out = chunked_matmul(X, self.operator if operator is None else operator)
        else:
            out = np.zeros((X.shape[0], self.shape[1]))
            for rows in row_blocks(*X.shape):
                block = np.asarray(X[rows], dtype=np.float64)
                target = out[rows]
                for columns, selected, part in self.segments:
                    target[:, selected] += block[:, columns] @ part
        if self.unused.size and out.shape[1]:
            out[~np.isfinite(X[:, self.unused]).all(axis=1), 0] = np.nan
        return out
