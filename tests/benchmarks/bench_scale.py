"""Benchmark of scale: transform memory, fit time against n, Dask, float32.

1. Memory: ``transform`` of 1,000,000 curves x 200 points (1.6 GB of
   float64) by each fitted transformer, in a fresh process; peak resident
   memory (``VmHWM``) against input + output. Target: below 1.3.
2. Scaling: ``fit`` time of every estimator at four sizes n (200 grid
   points; each estimator at its own multiple of the sizes, so that its
   largest fit takes a fraction of a second). Target: linear in n, every
   time within 5% of the least-squares line ``a + b n`` ("off line"), with
   a constant ``a`` below 10 ms; also shown, the time per row relative to
   the largest n and the ratio to the bare numpy product ``X @ Phi``
   (n x 200 by 200 x 20). A diagnostic row, "paired off line", fits the
   same line to each size's time relative to the largest size's in the same
   round (median over rounds), scaled by the largest size's best time: the
   machine's speed drifts between rounds by up to 13% here, and the best
   times of different sizes can come from rounds at different speeds; the
   paired figures are not moved by that. The target's verdict stays on the
   best times. Each estimator runs at least ``repeat`` (15) interleaved
   rounds, more for short fits (up to 100, until about
   :data:`ROUND_BUDGET` seconds): as timeit's autorange, so the best of a
   20 ms fit is as settled as that of a 0.5 s one.
3. Dask: fit and transform of a chunked dask array on the local thread pool
   against the in-memory fit and transform (ratio; no target), and
   ``FunctionOnFunctionRidge`` and ``FunctionalLogisticRegression`` (default
   ``alpha="auto"``) fitted on a ``distributed.LocalCluster`` of two
   single-threaded workers, their data persisted there, against the
   in-memory fit (target: at most 1.5x, best of the runs; each run's ratio
   and the load average are printed too) and equal to it within 1e-8.
4. float32: ``transform`` (``predict``) of 100,000 curves x 500 points stored
   as float32 against the same values as float64, fitted alike. Target: at
   most 0.6x the float64 time; shown also on curves with a large mean (near
   1200), where the products are centered first to keep 1e-5 accuracy.

Usage, from the repository root::

    python tests/benchmarks/bench_scale.py           # full sizes
    python tests/benchmarks/bench_scale.py --quick   # small sizes, no cluster: a smoke run
    python tests/benchmarks/bench_scale.py --only scaling float32   # some sections

Times are the best of a few runs (15 for the scaling table: at 25,000 rows a
fit takes 20-80 ms, and the noise of a best of 5 was several percent; 15 for
float32 too: a prediction takes 7-15 ms, and its ratio moved by 0.1 between
runs of a best of 5); other processes on the machine inflate
them, so read the ratios rather than the seconds.
"""

import argparse
import json
import os
import subprocess
import sys
import warnings
from functools import partial

import numpy as np
from _timing import best_time, round_times, status_bytes  # noqa: E402

from skfunc.utils import all_estimators  # noqa: E402

M = 200  # grid points

#: seconds of interleaved rounds per estimator in the scaling section, at
#: least ``repeat`` rounds and at most 100 (short fits get more rounds)
ROUND_BUDGET = 8.0


def smooth_curves(n, m=M, seed=0):
    """Smooth random curves plus noise (low rank, like process logs)."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0.0, 1.0, m)
    shapes = np.array([np.cos(np.pi * k * t) for k in range(8)])
    X = rng.standard_normal((n, 8)) @ shapes
    X += 0.1 * rng.standard_normal((n, m))
    return t, X


#: name -> (estimator on grid t, how fit is called); the call gets the
#: estimator, curves X (n x m) and two responses: scalars s (n,) and
#: covariates S (n x 3). Estimators not in this skfunc are skipped.
CASES = {
    "BasisFeatures": (lambda cls, t: cls(n_basis=20, grid=t),
                      lambda est, X, s, S: est.fit(X)),
    "CurveSmoother": (lambda cls, t: cls(grid=t), lambda est, X, s, S: est.fit(X)),
    "FunctionalPCA": (lambda cls, t: cls(n_components=5, basis="bspline", n_basis=20, grid=t),
                      lambda est, X, s, S: est.fit(X)),
    "FunctionalRidge": (lambda cls, t: cls(grid=t),
                        lambda est, X, s, S: est.fit(X, s)),
    "FunctionalRidgeCV": (lambda cls, t: cls(grid=t),
                          lambda est, X, s, S: est.fit(X, s)),
    "FunctionOnScalarRidge": (lambda cls, t: cls(response_grid=t),
                              lambda est, X, s, S: est.fit(S, X)),
}

#: the other estimators, for the scaling table only: name -> (estimator on
#: grid t, how fit is called, sizes as multiples of the base sizes); the call
#: gets the estimator and the data dict of :func:`scaling_data` cut to n rows
MORE_CASES = {
    "FunctionOnFunctionRidge": (lambda cls, t: cls(grid=t, response_grid=t),
                                lambda est, d: est.fit(d["X"], d["Y"]), 1.0),
    "ConcurrentFunctionRidge": (lambda cls, t: cls(grid=t),
                                lambda est, d: est.fit(d["X"], d["Y"]), 1.0),
    "FunctionalLogisticRegression": (lambda cls, t: cls(grid=t),
                                     lambda est, d: est.fit(d["X"], d["classes"]), 0.2),
    # 5 components as FunctionalPCA above (None keeps every positive
    # eigenvalue, about 11 here, and the EM refines them all); a fixed number
    # of EM steps (tol=0): the steps to convergence depend on the sample
    # (100, 89, 67, 100 at the four sizes), not on n, and would hide the
    # cost of a fit against n
    "SparseFunctionalPCA": (lambda cls, t: cls(5, grid=t, max_iter=20, tol=0.0),
                            lambda est, d: est.fit(d["sparse"]), 0.5),
    "ShiftAligner": (lambda cls, t: cls(grid=t), lambda est, d: est.fit(d["X"]), 0.1),
    "LandmarkAligner": (lambda cls, t: cls(grid=t), lambda est, d: est.fit(d["X"]), 0.1),
    # the elastic dynamic program costs O(m^2) per curve: 50 points
    "ElasticAligner": (lambda cls, t: cls(grid=t[::4]),
                       lambda est, d: est.fit(d["X"][:, ::4]), 0.002),
    "CurveOutlierDetector": (lambda cls, t: cls(grid=t, random_state=0),
                             lambda est, d: est.fit(d["X"]), 0.02),
}
TRANSFORMERS = ("BasisFeatures", "CurveSmoother", "FunctionalPCA")


def available(names):
    present = dict(all_estimators())
    return [(name, present[name]) for name in names if name in present]


def fit_case(name, cls, t, X, s=None, S=None):
    """A fresh estimator of a case, fitted."""
    make, call = CASES[name]
    return call(make(cls, t), X, s, S)


# ---------------------------------------------------------------------------
# 1. memory, measured in a child process
# ---------------------------------------------------------------------------


def memory_child(name, n):
    """Fit on a few curves, then transform n curves; print the figures."""
    cls = dict(available(TRANSFORMERS))[name]
    t, sample = smooth_curves(2000)
    est = fit_case(name, cls, t, sample)
    before = status_bytes("VmRSS")
    X = np.empty((n, M))
    X[:] = sample[:1]  # touches every page; values do not matter here
    Z = est.transform(X)
    print(json.dumps({"before": before, "peak": status_bytes("VmHWM"),
                      "input": X.nbytes, "output": Z.nbytes}))


def bench_memory(n, names=TRANSFORMERS):
    rows = []
    for name, _ in available(names):
        done = subprocess.run(
            [sys.executable, __file__, "--memory-child", name, str(n)],
            capture_output=True, text=True, check=True,
        )
        fig = json.loads(done.stdout.strip().splitlines()[-1])
        data = fig["input"] + fig["output"]
        rows.append((name, fig["input"] / 1e9, fig["output"] / 1e9,
                     fig["peak"] / 1e9, fig["peak"] / data,
                     (fig["peak"] - fig["before"]) / data))
    print(f"\nMemory: transform of {n:,} x {M} float64 curves, fresh process "
          "(target: peak / (input + output) < 1.3)")
    print(f"{'transformer':24s} {'input GB':>9s} {'output GB':>9s} {'peak GB':>8s} "
          f"{'peak/(in+out)':>14s} {'growth/(in+out)':>16s}")
    for name, x, z, peak, ratio, growth in rows:
        print(f"{name:24s} {x:9.3f} {z:9.3f} {peak:8.3f} {ratio:14.3f} {growth:16.3f}")
    return rows


# ---------------------------------------------------------------------------
# 2. fit time against n
# ---------------------------------------------------------------------------


def scaling_data(n):
    """Curves, their responses and a sparse copy, n rows each."""
    t, X = smooth_curves(n)
    rng = np.random.default_rng(2)
    s = X @ np.exp(-((t - 0.5) ** 2) / 0.02) / M + rng.normal(0, 0.1, n)
    sparse = np.where(rng.random(X.shape) < 0.03, X, np.nan)  # about 6 points per curve
    sparse[np.arange(n), rng.integers(0, M, n)] = X[np.arange(n), rng.integers(0, M, n)]
    return t, {"X": X, "s": s, "S": rng.standard_normal((n, 3)),
               "Y": X[::-1] + 0.1 * np.cos(3 * t),  # another curve per row
               "classes": (s > np.median(s)).astype(int), "sparse": sparse}


def all_scaling_cases():
    """name -> (class, make, call on (estimator, data cut to n rows), size factor)."""
    out = {}
    for name, cls in available(CASES):
        make, call = CASES[name]
        out[name] = (cls, make, (lambda est, d, call=call: call(est, d["X"], d["s"], d["S"])),
                     1.0)
    for name, cls in available(MORE_CASES):
        make, call, factor = MORE_CASES[name]
        out[name] = (cls, make, call, factor)
    return out


def _load():
    """The machine's load averages (other processes inflate the times)."""
    try:
        return ", ".join(f"{value:.1f}" for value in os.getloadavg())
    except OSError:  # not available on this platform
        return "unknown"


def _rows(data, n):
    return {key: value[:n] for key, value in data.items()}


def bench_scaling(sizes, repeat, names=None, budget=ROUND_BUDGET):
    """Fit time against n for every estimator (each at its own multiple of
    ``sizes``); least-squares line a + b n; verdict: every time within 5% of
    the line and a below 10 ms. At least ``repeat`` rounds, more for short
    fits within ``budget`` seconds (at most 100)."""
    cases = all_scaling_cases()
    if names:
        cases = {k: v for k, v in cases.items() if k in names}
    t, data = scaling_data(sizes[-1])
    phi = np.ascontiguousarray(np.random.default_rng(2).standard_normal((M, 20)))
    base = {n: best_time(lambda n=n: data["X"][:n] @ phi, repeat) for n in sizes}
    print(f"\nScaling: fit time against n ({M} grid points; each estimator at its own "
          "multiple of the sizes); relative distance from the least-squares line "
          "a + b n (target: <= 0.05, a < 10 ms), per-row time relative to the "
          "largest n, and fit time / bare X @ Phi (200 x 20) at the same n")
    print(f"load average (1, 5, 15 min) at the start: {_load()}")
    print(f"{'numpy X @ Phi':24s} {'n':16s}" + "".join(f"{n:>12,}" for n in sizes))
    print(f"{'':24s} {'seconds':16s}" + "".join(f"{base[n]:12.4f}" for n in sizes))
    verdicts, paired_lines = {}, {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # edge and convergence notices of some sizes
        for name, (cls, make, call, factor) in cases.items():
            # at least 8, 16, 32, 64 rows: distinct sizes even for small factors
            ns = [max(8 << i, int(round(n * factor))) for i, n in enumerate(sizes)]
            call(make(cls, t), _rows(data, ns[0]))  # warm-up
            largest = best_time(partial(call, make(cls, t), _rows(data, ns[-1])), 1)
            n_rounds = int(np.clip(budget / (largest * sum(ns) / ns[-1]), repeat, 100))
            rounds = np.empty((n_rounds, len(ns)))
            for r in range(n_rounds):  # interleaved, so load hits every size alike
                for i, n in enumerate(ns):
                    cut = _rows(data, n)
                    rounds[r, i] = best_time(partial(call, make(cls, t), cut), 1)
            times = rounds.min(axis=0)
            seconds = dict(zip(ns, times, strict=True))
            per_row = times / np.array(ns)
            intercept, deviation = _line(ns, times)
            verdicts[name] = (bool(deviation.max() <= 0.05 and intercept < 0.010),
                              intercept, deviation.max())
            # the same rounds, each size against the largest in the same round
            # (median over rounds), scaled by the largest size's best: a
            # diagnostic that a drift of the machine's speed between rounds
            # cannot move (the best times of different sizes may come from
            # rounds at different speeds)
            paired = np.median(rounds / rounds[:, -1:], axis=0) * times[-1]
            paired_lines[name] = _line(ns, paired)
            print(f"{name:24s} {'n':16s}" + "".join(f"{n:12,}" for n in ns)
                  + f"   ({n_rounds} rounds)")
            print(f"{'':24s} {'seconds':16s}" + "".join(f"{seconds[n]:12.4f}" for n in ns))
            print(f"{'':24s} {'per row / last':16s}"
                  + "".join(f"{r:12.3f}" for r in per_row / per_row[-1]))
            print(f"{'':24s} {'off line':16s}" + "".join(f"{d:12.3f}" for d in deviation))
            print(f"{'':24s} {'paired off line':16s}"
                  + "".join(f"{d:12.3f}" for d in paired_lines[name][1]))
            if factor == 1.0:
                print(f"{'':24s} {'/ X @ Phi':16s}"
                      + "".join(f"{seconds[n] / base[n]:12.2f}" for n in sizes))
    print(f"load average (1, 5, 15 min) at the end: {_load()}")
    print("linear in n (every time within 5% of the line a + b n, a < 10 ms): "
          + "; ".join(f"{name} {'yes' if ok else 'NO'} (a = {a * 1e3:.1f} ms, "
                      f"off line {d:.3f})" for name, (ok, a, d) in verdicts.items()))
    print("diagnostic, paired within rounds (not the target's measure): "
          + "; ".join(f"{name} a = {a * 1e3:.1f} ms, off line {d.max():.3f}"
                      for name, (a, d) in paired_lines.items()))
    return verdicts


def _line(ns, times):
    """Intercept of the least-squares line a + b n through ``times``, and
    each time's relative distance from it."""
    slope, intercept = np.polyfit(ns, times, 1)
    return intercept, np.abs(times - (intercept + slope * np.asarray(ns))) / times


# ---------------------------------------------------------------------------
# 3. Dask on the local thread pool against in-memory
# ---------------------------------------------------------------------------


def bench_dask(n, repeat):
    try:
        import dask
        import dask.array as da
    except ImportError:
        print("\nDask: not installed, skipped")
        return
    t, X = smooth_curves(n)
    Xd = da.from_array(X, chunks=(max(1, n // 8), M))
    print(f"\nDask: {n:,} x {M} curves in 8 blocks on the local thread pool, "
          "time / in-memory time")
    print(f"{'estimator':24s} {'fit s':>8s} {'dask s':>8s} {'ratio':>7s} "
          f"{'transform s':>12s} {'dask s':>8s} {'ratio':>7s}")
    with dask.config.set(scheduler="threads"):
        for name, cls in available(TRANSFORMERS):
            fit_np = best_time(partial(fit_case, name, cls, t, X), repeat)
            fit_da = best_time(partial(fit_case, name, cls, t, Xd), repeat)
            est = fit_case(name, cls, t, X)
            tr_np = best_time(lambda est=est: est.transform(X), repeat)
            tr_da = best_time(lambda est=est: est.transform(Xd).compute(), repeat)
            print(f"{name:24s} {fit_np:8.4f} {fit_da:8.4f} {fit_da / fit_np:7.2f} "
                  f"{tr_np:12.4f} {tr_da:8.4f} {tr_da / tr_np:7.2f}")


# ---------------------------------------------------------------------------
# 3b. FunctionOnFunctionRidge and FunctionalLogisticRegression on a
#     distributed LocalCluster
# ---------------------------------------------------------------------------

#: name -> (estimator on grid t, the data's arrays its fit takes); the
#: arrays come from :func:`scaling_data`
CLUSTER_CASES = {
    "FunctionOnFunctionRidge": (lambda cls, t: cls(grid=t, response_grid=t), ("X", "Y")),
    "FunctionalLogisticRegression": (lambda cls, t: cls(grid=t), ("X", "classes")),
}


def bench_cluster(n, repeat):
    try:
        import dask.array as da
        import distributed
    except ImportError:
        print("\nLocalCluster: dask.distributed not installed, skipped")
        return
    import time

    t, data = scaling_data(n)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1,
                                           processes=True, host="127.0.0.1",
                                           dashboard_address=None)
        client = distributed.Client(cluster)
    chunks = max(1, n // 8)
    rows = []
    try:
        for name, cls in available(CLUSTER_CASES):
            make, keys = CLUSTER_CASES[name]
            here = [data[k] for k in keys]
            there = [client.persist(da.from_array(np.ascontiguousarray(a),
                                                  chunks=(chunks,) + a.shape[1:]))
                     for a in here]
            distributed.wait(there)
            # interleaved runs, so that a busy machine slows both alike; each
            # run's own ratio is kept (the spread shows the machine's noise)
            runs = []
            for _ in range(repeat):
                load = os.getloadavg()[0]  # the 1-minute load
                start = time.perf_counter()
                fitted_here = make(cls, t).fit(*here)
                memory = time.perf_counter() - start
                start = time.perf_counter()
                fitted_there = make(cls, t).fit(*there)
                remote = time.perf_counter() - start
                runs.append((memory, remote, load))
            output = ("predict_proba" if hasattr(fitted_here, "predict_proba")
                      else "predict")
            a = getattr(fitted_there, output)(data["X"][:500])
            b = getattr(fitted_here, output)(data["X"][:500])
            rows.append((name, runs, np.linalg.norm(a - b) / np.linalg.norm(b)))
    finally:
        client.close()
        cluster.close()
    print(f"\nLocalCluster (2 workers x 1 thread): fits on {n:,} x {M} curves in 8 "
          "blocks persisted on the workers, against the in-memory fit; per run: "
          "memory s / cluster s = ratio (1-minute load average before the run)")
    print("target: ratio <= 1.5 (best of the runs), rel. diff of the outputs <= 1e-8")
    for name, runs, difference in rows:
        per_run = "  ".join(f"{m:.2f}/{c:.2f}={c / m:.2f} (load {lo:.1f})"
                            for m, c, lo in runs)
        best_m, best_c = min(r[0] for r in runs), min(r[1] for r in runs)
        print(f"{name:30s} best {best_m:.3f} s / {best_c:.3f} s = ratio "
              f"{best_c / best_m:.2f}; rel. diff {difference:.1e}")
        print(f"{'':30s} runs: {per_run}")


# ---------------------------------------------------------------------------
# 4. float32 against float64
# ---------------------------------------------------------------------------

FLOAT32_CASES = {
    "BasisFeatures": (lambda cls, t: cls(n_basis=20, grid=t), "transform"),
    "CurveSmoother": (lambda cls, t: cls(grid=t), "transform"),
    "FunctionalPCA": (lambda cls, t: cls(n_components=5, basis="bspline", n_basis=20,
                                         grid=t), "transform"),
    "FunctionalRidge": (lambda cls, t: cls(grid=t), "predict"),
    "FunctionOnFunctionRidge": (lambda cls, t: cls(n_basis=20, grid=t, response_grid=t[::10]),
                                "predict"),
}


def bench_float32(n, m, repeat):
    t = np.linspace(0.0, 1.0, m)
    rng = np.random.default_rng(0)
    shapes = np.array([np.cos(np.pi * k * t) for k in range(8)])
    print(f"\nfloat32: transform / predict of {n:,} x {m} curves, float32 time / float64 "
          "time on the same values (target: <= 0.6, best times), the median of "
          "that ratio within interleaved rounds (a diagnostic a drift of the "
          "machine's speed cannot move), and the float32 result's relative "
          "error (target: <= 1e-5)")
    print(f"{'estimator':24s} {'data':10s} {'float64 s':>10s} {'float32 s':>10s} "
          f"{'ratio':>7s} {'paired':>7s} {'rel. error':>11s}")
    present = dict(all_estimators())
    for shift, label in ((0.0, "mean 0"), (1200.0, "mean 1200")):
        X32 = (rng.standard_normal((n, 8)) @ shapes + 0.1 * rng.standard_normal((n, m))
               + shift).astype(np.float32)
        X64 = X32.astype(np.float64)
        s = X64[:2000] @ np.exp(-((t - 0.5) ** 2) / 0.02) / m
        for name, (make, method) in FLOAT32_CASES.items():
            if name not in present:
                continue
            target = {"FunctionalRidge": s, "FunctionOnFunctionRidge": X64[:2000, ::10]}
            est = make(present[name], t).fit(X64[:2000], target.get(name))
            run = getattr(est, method)
            rounds = round_times({"64": partial(run, X64), "32": partial(run, X32)}, repeat)
            times = {key: value.min() for key, value in rounds.items()}
            paired = np.median(rounds["32"] / rounds["64"])
            a, b = run(X32), run(X64)
            assert a.dtype == np.float32
            error = np.linalg.norm(a - b) / np.linalg.norm(b)
            print(f"{name:24s} {label:10s} {times['64']:10.4f} {times['32']:10.4f} "
                  f"{times['32'] / times['64']:7.2f} {paired:7.2f} {error:11.1e}")
            del a, b


SECTIONS = ("memory", "scaling", "dask", "cluster", "float32")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    parser.add_argument("--only", nargs="+", choices=SECTIONS, help="these sections")
    parser.add_argument("--names", nargs="+", help="scaling: only these estimators")
    parser.add_argument("--memory-child", nargs=2, metavar=("NAME", "N"),
                        help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.memory_child:
        memory_child(args.memory_child[0], int(args.memory_child[1]))
        return
    run = set(args.only or SECTIONS)
    if args.quick:
        "memory" in run and bench_memory(50_000, names=TRANSFORMERS[:1])
        "scaling" in run and bench_scaling([250, 500, 1_000, 2_000], 1, args.names, budget=0)
        "dask" in run and bench_dask(10_000, repeat=1)
        if "cluster" in run:  # starting worker processes is most of a smoke run
            print("\nLocalCluster: skipped with --quick (tests/test_dask.py runs one)")
        "float32" in run and bench_float32(5_000, 500, repeat=1)
    else:
        "memory" in run and bench_memory(1_000_000)
        "scaling" in run and bench_scaling([25_000, 50_000, 100_000, 200_000], 15, args.names)
        "dask" in run and bench_dask(200_000, repeat=3)
        "cluster" in run and bench_cluster(200_000, repeat=3)
        "float32" in run and bench_float32(100_000, 500, repeat=15)


if __name__ == "__main__":
    main()
