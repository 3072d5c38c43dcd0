"""The per-block pass of the additive fits: the B-spline product by grid
segments, row blocks on threads, and the scaling of FunctionalRidge's
design after its product."""

import contextlib
import sys
import threading
import warnings

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from skfunc import _blocks
from skfunc._blocks import BandedProduct, block_threads, compute_statistics
from skfunc._fpca import _fold_rows
from skfunc.datasets import make_smooth_regression
from skfunc.decomposition import FunctionalPCA
from skfunc.linear_model import FunctionalRidge
from skfunc.utils import partial_fit_batches

GRID = np.linspace(0, 1, 500)


def _operator(n_basis, grid=GRID):
    """W Phi of FunctionalRidge's default B-splines on ``grid``."""
    X = np.random.default_rng(0).standard_normal((20, grid.size)).cumsum(axis=1)
    ridge = FunctionalRidge(grid=grid, n_basis=n_basis, alpha=1.0).fit(X, X[:, 3])
    return ridge._integration_operator(ridge._basis())


@pytest.mark.parametrize("n_basis", [20, 39])
def test_banded_product_is_the_dense_product(n_basis):
    # Reference: numpy's dense product X @ operator. The segments only
    # regroup its sums (the skipped terms are exact zeros), so the two agree
    # to rounding: 1e-13 of the largest value is a few hundred ulps of sums
    # of 500 terms (the error bound of a sum grows with its length: common
    # practice).
    operator = _operator(n_basis)
    product = BandedProduct(operator)
    assert product.segments is not None and len(product.segments) == 4
    # the segments must cut the work: B-splines of degree 3 touch about
    # K / 4 + 3 columns per quarter of the grid
    assert sum(part.size for *_, part in product.segments) < 0.6 * operator.size
    X = np.random.default_rng(1).standard_normal((300, GRID.size))
    dense = X @ operator
    np.testing.assert_allclose(product(X), dense, rtol=0, atol=1e-13 * np.abs(dense).max())
    # float32 rows are read as float64, as by the dense path
    np.testing.assert_allclose(product(X.astype(np.float32)),
                               X.astype(np.float32).astype(np.float64) @ operator,
                               rtol=0, atol=1e-13 * np.abs(dense).max())


def test_banded_product_sees_every_value():
    # A NaN or inf anywhere in X must reach the result (the fits rely on it
    # to reject such curves): a product that skipped a grid point would not.
    operator = _operator(20)
    product = BandedProduct(operator)
    assert product.unused.size == 0
    X = np.ones((3, GRID.size))
    for column in (0, 124, 125, 250, 499):  # segment edges included
        for bad in (np.nan, np.inf):
            X_bad = X.copy()
            X_bad[1, column] = bad
            with np.errstate(invalid="ignore"):  # inf * 0, as in numpy's product
                out = product(X_bad)
            assert not np.isfinite(out[1]).all() and np.isfinite(out[[0, 2]]).all()
    # also at grid points no column of the operator sees
    operator[7] = 0.0
    product = BandedProduct(operator)
    assert product.unused.tolist() == [7]
    X_bad = X.copy()
    X_bad[2, 7] = np.inf
    with np.errstate(invalid="ignore"):
        out = product(X_bad)
    assert not np.isfinite(out[2]).all() and np.isfinite(out[:2]).all()
    np.testing.assert_allclose(out[:2], X[:2] @ operator, rtol=1e-13)


def test_dense_operators_stay_one_product():
    operator = np.random.default_rng(2).standard_normal((500, 40))  # no zeros
    assert BandedProduct(operator).segments is None
    X = np.random.default_rng(3).standard_normal((50, 500))
    np.testing.assert_array_equal(BandedProduct(operator)(X), X @ operator)


def _probe(X, index):
    """Statistics of a block: its rows, the thread and the BLAS threads."""
    blas = max(i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas")
    return {"rows": list(index), "threads": {threading.current_thread().name},
            "blas": blas}


def _concatenate(*stats):
    return {"rows": sum((s["rows"] for s in stats), []),
            "threads": set().union(*(s["threads"] for s in stats)),
            "blas": max(s["blas"] for s in stats)}


def test_block_threads_keep_the_order_of_the_blocks(monkeypatch):
    # With block threads the blocks of a batch run on the pool's threads,
    # BLAS at one thread, and are merged in row order: concatenating the
    # row indices must give every row once, in order. A pool that merged in
    # the order the blocks finish, or lost or repeated a block, fails.
    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 10 * 8)  # blocks of 10 rows of 8
    X = np.zeros((97, 7))
    index = np.arange(97)
    serial = compute_statistics(_probe, X, index, merge=_concatenate)
    assert serial["rows"] == list(range(97))
    with block_threads(2):
        stats = compute_statistics(_probe, X, index, merge=_concatenate)
    assert stats["rows"] == list(range(97))
    assert stats["blas"] == 1
    assert all(name.startswith("skfunc-blocks") for name in stats["threads"])


@pytest.mark.parametrize("make", [
    # alpha chosen by folds of rows (cross-validation over curves: seconds)
    pytest.param(lambda: FunctionalPCA(3, basis="bspline"), marks=pytest.mark.slow),
    lambda: FunctionalRidge(),
])
def test_threads_give_the_one_thread_fit(monkeypatch, make):
    # The statistics of a batch computed on two threads (in equal blocks)
    # equal those computed in the calling thread up to the order of the
    # sums: 1e-10 relative, as the memory-mapped test of test_batches. A
    # block given the wrong rows of y or the wrong fold positions changes
    # the fit (or the chosen alpha) far beyond that.
    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 40 * 101)  # blocks of ~40 rows
    grid = np.linspace(0, 1, 101)
    X, y = make_smooth_regression(500, grid=grid, random_state=0)[:2]
    y = y if isinstance(make(), FunctionalRidge) else None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # alpha at the edge of its candidates
        one = partial_fit_batches(make(), X, y, batch_size=170, n_threads=1)
        two = partial_fit_batches(make(), X, y, batch_size=170, n_threads=2)
    assert two.alpha_ == pytest.approx(one.alpha_, rel=1e-10)
    if y is None:
        a, b = two.transform(X), one.transform(X)
    else:
        a, b = two.predict(X), one.predict(X)
    assert np.linalg.norm(a - b) / np.linalg.norm(b) < 1e-10


def test_threads_follow_an_outer_blas_limit(monkeypatch):
    # n_threads=None takes the threads BLAS would use: under an outer
    # threadpoolctl limit of 1 the blocks stay in the calling thread.
    seen = []
    original = _blocks.block_threads

    def spy(n_threads):
        seen.append(n_threads)
        return original(n_threads)

    monkeypatch.setattr("skfunc._batches.block_threads", spy)
    X = np.random.default_rng(0).standard_normal((60, 30)).cumsum(axis=1)
    with threadpool_limits(limits=1, user_api="blas"):
        partial_fit_batches(FunctionalPCA(2), X, batch_size=20)
    assert seen == [1]


@pytest.mark.skipif(max((i["num_threads"] for i in threadpool_info()
                         if i["user_api"] == "blas"), default=1) < 2,
                    reason="BLAS runs one thread here")
@pytest.mark.parametrize("n_threads, expected", [(1, "blas"), (2, 1)])
def test_final_solve_runs_at_one_blas_thread_beside_block_threads(monkeypatch, n_threads,
                                                                  expected):
    # The solve after the last batch is a small problem: beside the block
    # threads it runs with BLAS at one thread (threadpoolctl's report), as
    # the blocks do; with n_threads=1 BLAS keeps its own threads.
    before = max(i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas")
    seen = []
    original = FunctionalRidge._solve_statistics

    def spy(self):
        seen.append(max(i["num_threads"] for i in threadpool_info()
                        if i["user_api"] == "blas"))
        return original(self)

    monkeypatch.setattr(FunctionalRidge, "_solve_statistics", spy)
    X = np.random.default_rng(0).standard_normal((60, 30)).cumsum(axis=1)
    partial_fit_batches(FunctionalRidge(alpha=1.0), X, X[:, 3], batch_size=20,
                        n_threads=n_threads)
    assert seen == [before if expected == "blas" else expected]


def test_fold_rows_are_those_of_the_mask():
    # Consecutive positions take every tenth row as a view; any other
    # positions fall back to masks. Both must select the rows of each fold.
    for positions in (np.arange(13, 60), np.arange(3), np.array([5, 2, 15, 7, 25])):
        folds = positions % 10
        for fold, rows in _fold_rows(folds):
            np.testing.assert_array_equal(np.arange(len(folds))[rows],
                                          np.flatnonzero(folds == fold))
        assert sorted(f for f, _ in _fold_rows(folds)) == sorted(set(folds.tolist()))


# coefficients y / X near 1e-307 underflow in the data's units, as they must
@pytest.mark.filterwarnings("ignore:.*underflows float64:RuntimeWarning")
def test_ridge_design_falls_back_where_the_product_overflows():
    # FunctionalRidge forms the product of the curves first and scales the
    # n x K result. Curves near 1e307 on a grid 10,000 units long make that
    # product overflow (each B-spline integrates to about 10,000 / 36, so the
    # integrals are near 3e309 > 1.8e308, numpy.finfo(float).max),
    # so the design must be formed from the curves scaled first, and the fit
    # must equal the unit-scale fit scaled (1e-8 relative, the tolerance of
    # test_bad_inputs' extreme-scale test).
    grid = np.linspace(0, 10_000, 200)
    X, y = make_smooth_regression(120, grid=grid, random_state=0)[:2]
    X = X - X.min() + 1.0  # positive curves: the integrals add up
    a = 1e307
    ridge = FunctionalRidge(grid=grid, alpha=1e-3)
    operator = ridge.fit(X, y)._integration_operator(ridge._basis())
    with np.errstate(over="ignore"):
        assert not np.isfinite((X * a) @ operator).all()  # the product overflows
    design, z_exp, _, _ = ridge._scaled_design(X * a, y, operator)
    assert np.isfinite(design).all()
    unit, unit_exp, _, _ = ridge._scaled_design(X, y, operator)
    np.testing.assert_allclose(np.ldexp(design, z_exp - unit_exp) / a, unit, rtol=1e-12)
    big = FunctionalRidge(grid=grid, alpha=1e-3).fit(X * a, y)
    np.testing.assert_allclose(big.predict(X * a), ridge.predict(X), rtol=1e-8)


@pytest.mark.parametrize("n_threads", [1, 2])
@pytest.mark.parametrize("bad", [np.nan, np.inf])
@pytest.mark.parametrize("make", [lambda: FunctionalPCA(2, basis="bspline"),
                                  lambda: FunctionalRidge()])
def test_unscanned_batches_still_name_the_bad_value(monkeypatch, make, bad, n_threads):
    # These fits do not scan a batch for NaN and inf before its statistics
    # (every value enters them); non-finite statistics send the batch through
    # the full validation, which must raise the usual error, with the
    # position of a NaN within the batch, and no RuntimeWarning on the way
    # (pytest turns warnings into errors here). A fit that let the value
    # through would return NaN coefficients or fail elsewhere.
    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 40 * 300)  # several blocks per batch
    X = np.random.default_rng(0).standard_normal((300, 300)).cumsum(axis=1)
    X[170, 233] = bad
    y = None if isinstance(make(), FunctionalPCA) else X[:, 3]
    match = ("contains NaN \\(first at row 70, column 233\\)" if np.isnan(bad)
             else "contains infinity")
    with pytest.raises(ValueError, match=match):
        partial_fit_batches(make(), X, y, batch_size=100, n_threads=n_threads)


@pytest.mark.parametrize("dtype", [np.float64, np.float32])
@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
@pytest.mark.parametrize("name, column", [
    (name, column) for name in ("FunctionalPCA", "BasisFeatures", "FunctionalRidge",
                                "FunctionalLogisticRegression")
    # 120: the covariate column of the models that take one
    for column in (0, 57, 119) + ((120,) if name.startswith("FunctionalR")
                                  or name.startswith("FunctionalL") else ())])
def test_unscanned_transforms_still_name_the_bad_value(name, column, bad, dtype):
    # transform / predict do not scan X for NaN and inf before the product
    # (every value enters it); a non-finite result sends X through the full
    # validation, which must raise the usual error with the NaN's position,
    # without a RuntimeWarning on the way (errors here, see pyproject.toml).
    # An implementation that skipped the scan without the check would return
    # NaN or inf scores instead (common practice: scikit-learn's
    # check_array rejects NaN and inf at predict time).
    from skfunc.linear_model import FunctionalLogisticRegression
    from skfunc.preprocessing import BasisFeatures

    grid = np.linspace(0, 1, 120)
    X, y = make_smooth_regression(80, grid=grid, random_state=1)[:2]
    covariate = np.random.default_rng(1).standard_normal((80, 1))
    make = {"FunctionalPCA": lambda: FunctionalPCA(2, basis="bspline", grid=grid),
            "BasisFeatures": lambda: BasisFeatures(n_basis=12, grid=grid),
            "FunctionalRidge": lambda: FunctionalRidge(grid=grid, n_covariates=1),
            "FunctionalLogisticRegression": lambda: FunctionalLogisticRegression(
                grid=grid, n_covariates=1)}[name]
    has_covariate = name in ("FunctionalRidge", "FunctionalLogisticRegression")
    data = np.hstack([X, covariate]) if has_covariate else X
    target = {"FunctionalRidge": y, "FunctionalLogisticRegression": y > np.median(y)}
    est = make().fit(data, target.get(name))
    method = getattr(est, "predict" if has_covariate else "transform")
    bad_data = data.astype(dtype)
    bad_data[37, column] = bad
    match = (f"contains NaN \\(first at row 37, column {column}\\)" if np.isnan(bad)
             else "contains infinity")
    with pytest.raises(ValueError, match=match):
        method(bad_data)
    assert np.isfinite(method(data.astype(dtype))).all()  # the clean rows pass


@pytest.mark.parametrize("shift", [0.0, 1200.0])
@pytest.mark.parametrize("dtype", [np.float64, np.float32])
# 3 and 5 columns: float32 operators padded with zero columns (padded_width)
@pytest.mark.parametrize("k", [1, 3, 5, 9])
def test_chunked_products_on_threads_equal_one_thread(monkeypatch, k, dtype, shift):
    # chunked_matmul runs one-column products (numpy's einsum) and centered
    # float32 products on threads: the result must equal the one-thread run
    # bit for bit (each block is computed alone) and the float64 numpy
    # product of the same values within float32's promise, 1e-5 of the
    # largest value (IEEE 754 unit roundoff 2^-24 times the 300 terms and
    # the 1200 / 1 ratio of mean to spread, common practice), or 1e-12 for
    # float64
    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 300 * 50)  # 50 rows per block
    rng = np.random.default_rng(3)
    X = (rng.standard_normal((1000, 300)).cumsum(axis=1) / 10 + shift).astype(dtype)
    operator = rng.standard_normal((300, k))
    offset = rng.standard_normal(k)
    exact = X.astype(np.float64) @ operator + offset
    monkeypatch.setattr(_blocks, "blas_thread_count", lambda: 2)  # also on one core
    got = _blocks.chunked_matmul(X, operator, offset, dtype=dtype)
    assert got.dtype == dtype
    monkeypatch.setattr(_blocks, "blas_thread_count", lambda: 1)  # no block threads
    alone = _blocks.chunked_matmul(X, operator, offset, dtype=dtype)
    np.testing.assert_array_equal(got, alone)
    tol = 1e-5 if dtype == np.float32 else 1e-12
    np.testing.assert_allclose(got, exact, rtol=0, atol=tol * np.abs(exact).max())


def _threaded_product_in_child(queue):
    X = np.ones((4000, 300), dtype=np.float32)
    queue.put(float(_blocks.chunked_matmul(X, np.ones((300, 1)), dtype=np.float32).sum()))


@pytest.mark.skipif(sys.platform == "win32", reason="no fork on Windows")
def test_block_threads_work_in_a_forked_child(monkeypatch):
    # block_threads keeps its thread pool for the process; a child forked
    # after the pool started has a copy without threads, which would never
    # run a task (the parent's idle threads are counted but gone): the child
    # must start its own pool and finish (a timeout here means a hang).
    # Expected value: 4000 rows of 300 ones times a column of ones (exact
    # in float32, common practice).
    import multiprocessing

    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 300 * 500)  # 8 blocks
    monkeypatch.setattr(_blocks, "blas_thread_count", lambda: 2)
    X = np.ones((4000, 300), dtype=np.float32)
    assert _blocks.chunked_matmul(X, np.ones((300, 1)), dtype=np.float32).sum() == 4000 * 300
    context = multiprocessing.get_context("fork")
    queue = context.Queue()
    child = context.Process(target=_threaded_product_in_child, args=(queue,))
    child.start()
    child.join(timeout=60)
    alive = child.is_alive()
    if alive:
        child.kill()
    assert not alive, "the forked child hung on the parent's thread pool"
    assert queue.get(timeout=5) == 4000 * 300


def test_blas_is_limited_from_the_main_thread_only(monkeypatch):
    # The one-thread BLAS limit is process-wide: opened by Dask's local
    # threads on a lazy transform, limits could close out of order and leave
    # BLAS at one thread. Work that may run in such threads (ShiftAligner's
    # shift search, the block threads of chunked_matmul) limits BLAS only
    # from the main thread.
    opened = []
    monkeypatch.setattr(_blocks, "single_thread_blas",
                        lambda: opened.append(threading.current_thread().name)
                        or contextlib.nullcontext())
    with _blocks.single_thread_blas_from_main():
        pass
    worker = threading.Thread(target=lambda: _blocks.single_thread_blas_from_main().__enter__(),
                              name="dask-like")
    worker.start()
    worker.join(10)
    assert opened == [threading.main_thread().name]
    # and chunked_matmul starts no block threads outside the main thread
    monkeypatch.setattr(_blocks, "blas_thread_count", lambda: 2)
    monkeypatch.setattr(_blocks, "CHUNK_VALUES", 8 * 10)  # 5 blocks
    started = []
    monkeypatch.setattr(_blocks, "block_threads",
                        lambda n: started.append(n) or contextlib.nullcontext())
    X = np.ones((50, 8), dtype=np.float32)
    worker = threading.Thread(target=lambda: _blocks.chunked_matmul(X, np.ones((8, 1))))
    worker.start()
    worker.join(10)
    _blocks.chunked_matmul(X, np.ones((8, 1)))
    assert started == [1, 2]


def test_scratch_is_reused_per_thread_and_only_when_small():
    # one buffer per thread, reused by the next call from that thread; large
    # temporaries get a fresh array each time
    import threading

    from skfunc._blocks import CACHE_VALUES, scratch

    a = scratch((100, 7))
    assert a.shape == (100, 7) and a.dtype == np.float64
    b = scratch((50, 3))
    assert np.shares_memory(a, b)
    big = (4 * CACHE_VALUES + 1,)
    assert not np.shares_memory(scratch(big), scratch(big))
    other = []
    thread = threading.Thread(target=lambda: other.append(scratch((100, 7))))
    thread.start()
    thread.join()
    assert not np.shares_memory(other[0], scratch((100, 7)))
