"""Threads: skfunc keeps threadpoolctl limits and does not oversubscribe.

skfunc starts no threads or processes of its own; BLAS (inside numpy and
scipy) is its only multithreaded part. What applies, and is tested here:

* an outer ``threadpoolctl.threadpool_limits`` is kept by every skfunc path;
* under joblib with ``n_jobs > 1`` (GridSearchCV over a skfunc pipeline), the
  loky workers run BLAS with at most ``cpu_count // n_jobs`` threads;
* a Dask fit on the local thread pool runs BLAS single-threaded while the
  pool runs one block per core, and restores the limit afterwards.
"""

import os

import numpy as np
import pytest
from sklearn.base import BaseEstimator, RegressorMixin
from sklearn.model_selection import GridSearchCV
from sklearn.pipeline import Pipeline
from threadpoolctl import threadpool_info, threadpool_limits

from skfunc import BasisFeatures
from skfunc._blocks import compute_statistics
from skfunc.linear_model import FunctionalRidge, FunctionalRidgeCV


def blas_threads():
    return max(
        (i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"),
        default=1,
    )


def probe(X, *others):
    """Statistics of a block: the BLAS threads available while computing it."""
    return {"threads": blas_threads(), "n": X.shape[0]}


def most(*stats):
    return {
        "threads": max(s["threads"] for s in stats),
        "n": sum(s["n"] for s in stats),
    }


class ThreadProbe(RegressorMixin, BaseEstimator):
    """Scores the number of BLAS threads available where it runs."""

    def fit(self, X, y):
        self.n_features_in_ = X.shape[1]
        return self

    def score(self, X, y):
        return float(blas_threads())


needs_threads = pytest.mark.skipif(
    blas_threads() < 2 or (os.cpu_count() or 1) < 2,
    reason="BLAS runs one thread here: nothing could be oversubscribed",
)


def test_outer_limits_are_kept():
    X = np.ones((300, 7))
    with threadpool_limits(limits=1, user_api="blas"):
        assert compute_statistics(probe, X, merge=most) == {"threads": 1, "n": 300}
        BasisFeatures().fit(X).transform(X)
        assert blas_threads() == 1


@needs_threads
@pytest.mark.parametrize("cls", [FunctionalRidge, FunctionalRidgeCV])
def test_ridge_solve_runs_at_one_blas_thread(monkeypatch, cls):
    # The solve from pooled statistics is a K x K problem: BLAS at one
    # thread there (threadpoolctl's report), its own threads again after.
    seen = []
    original = cls._fit_pooled

    def spy(self, *args):
        seen.append(blas_threads())
        return original(self, *args)

    monkeypatch.setattr(cls, "_fit_pooled", spy)
    before = blas_threads()
    X = np.random.default_rng(0).standard_normal((40, 30)).cumsum(axis=1)
    cls().fit(X, X[:, 3])
    assert seen == [1]
    assert blas_threads() == before


@pytest.mark.slow  # a grid search in worker processes
@needs_threads
def test_grid_search_with_n_jobs_does_not_oversubscribe():
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(60, 30)), rng.normal(size=60)
    pipe = Pipeline([("features", BasisFeatures()), ("probe", ThreadProbe())])
    search = GridSearchCV(pipe, {"features__n_basis": [4, 6]}, cv=2, n_jobs=2)
    search.fit(X, y)
    # joblib's loky backend caps each worker's BLAS at cpu_count // n_jobs
    # threads (joblib documentation, "Avoiding over-subscription of CPU
    # resources")
    cap = max(1, (os.cpu_count() or 1) // 2)
    assert search.cv_results_["mean_test_score"].max() <= cap


@needs_threads
def test_dask_thread_pool_fits_run_blas_single_threaded():
    dask = pytest.importorskip("dask")
    da = pytest.importorskip("dask.array")
    before = blas_threads()
    Xd = da.ones((400, 7), chunks=(50, 7))
    with dask.config.set(scheduler="threads"):
        stats = compute_statistics(probe, Xd, merge=most)
    assert stats == {"threads": 1, "n": 400}
    assert blas_threads() == before
