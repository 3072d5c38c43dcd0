"""Benchmark of scale: transform memory, fit time against n, Dask overhead.

1. Memory: ``transform`` of 1,000,000 curves x 200 points (1.6 GB of
   float64) by each fitted transformer, in a fresh process; peak resident
   memory (``VmHWM``) against input + output. Target: below 1.3.
2. Scaling: ``fit`` time at four sizes n (200 grid points). Target: linear
   in n, every time within 15% of the least-squares line ``a + b n`` ("off
   line"); also shown, the time per row relative to the largest n and the
   ratio to the bare numpy product ``X @ Phi`` (n x 200 by 200 x 20).
3. Dask: fit and transform of a chunked dask array on the local thread pool
   against the in-memory fit and transform (ratio; no target).

Usage, from the repository root::

    python tests/benchmarks/bench_scale.py           # full sizes
    python tests/benchmarks/bench_scale.py --quick   # small sizes, a few seconds

Times are the best of a few runs; other processes on the machine inflate
them, so read the ratios rather than the seconds.
"""

import argparse
import json
import subprocess
import sys
from functools import partial

import numpy as np
from _timing import best_time  # noqa: E402

from skfunc.utils import all_estimators  # noqa: E402

M = 200  # grid points


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


def _status_bytes(field):
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith(field + ":"):
                return int(line.split()[1]) * 1024
    raise RuntimeError(f"{field} not in /proc/self/status")


def memory_child(name, n):
    """Fit on a few curves, then transform n curves; print the figures."""
    cls = dict(available(TRANSFORMERS))[name]
    t, sample = smooth_curves(2000)
    est = fit_case(name, cls, t, sample)
    before = _status_bytes("VmRSS")
    X = np.empty((n, M))
    X[:] = sample[:1]  # touches every page; values do not matter here
    Z = est.transform(X)
    print(json.dumps({"before": before, "peak": _status_bytes("VmHWM"),
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


def bench_scaling(sizes, repeat):
    t, X_all = smooth_curves(sizes[-1])
    rng = np.random.default_rng(2)
    s_all = X_all @ np.exp(-((t - 0.5) ** 2) / 0.02) / M + rng.normal(0, 0.1, sizes[-1])
    S_all = rng.standard_normal((sizes[-1], 3))
    phi = np.ascontiguousarray(rng.standard_normal((M, 20)))
    base = {n: best_time(lambda n=n: X_all[:n] @ phi, repeat) for n in sizes}
    print(f"\nScaling: fit time against n ({M} grid points); relative distance "
          "from the line a + b n (target: <= 0.15), per-row time relative to the "
          "largest n, and fit time / bare X @ Phi (200 x 20)")
    header = "".join(f"{n:>12,}" for n in sizes)
    print(f"{'estimator':24s} {'quantity':16s}{header}")
    print(f"{'numpy X @ Phi':24s} {'seconds':16s}"
          + "".join(f"{base[n]:12.4f}" for n in sizes))
    verdicts = {}
    for name, cls in available(CASES):
        fit_case(name, cls, t, X_all[: sizes[0]], s_all[: sizes[0]], S_all[: sizes[0]])
        seconds = dict.fromkeys(sizes, np.inf)
        for _ in range(repeat):  # interleaved, so load hits every size alike
            for n in sizes:
                seconds[n] = min(seconds[n], best_time(partial(
                    fit_case, name, cls, t, X_all[:n], s_all[:n], S_all[:n]), 1))
        times = np.array([seconds[n] for n in sizes])
        per_row = times / np.array(sizes)
        relative = per_row / per_row[-1]
        slope, intercept = np.polyfit(sizes, times, 1)
        deviation = np.abs(times - (intercept + slope * np.array(sizes))) / times
        verdicts[name] = (bool(deviation.max() <= 0.15), intercept)
        print(f"{name:24s} {'seconds':16s}" + "".join(f"{seconds[n]:12.4f}" for n in sizes))
        print(f"{'':24s} {'per row / last':16s}" + "".join(f"{r:12.3f}" for r in relative))
        print(f"{'':24s} {'off line':16s}" + "".join(f"{d:12.3f}" for d in deviation))
        print(f"{'':24s} {'/ X @ Phi':16s}"
              + "".join(f"{seconds[n] / base[n]:12.2f}" for n in sizes))
    print("linear in n (every time within 15% of the least-squares line a + b n): "
          + ", ".join(f"{name} {'yes' if ok else 'NO'} (a = {a * 1e3:.1f} ms)"
                      for name, (ok, a) in verdicts.items()))
    return verdicts


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


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    parser.add_argument("--memory-child", nargs=2, metavar=("NAME", "N"),
                        help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.memory_child:
        memory_child(args.memory_child[0], int(args.memory_child[1]))
        return
    if args.quick:
        bench_memory(50_000, names=TRANSFORMERS[:1])
        bench_scaling([2_500, 5_000, 10_000, 20_000], repeat=1)
        bench_dask(20_000, repeat=1)
    else:
        bench_memory(1_000_000)
        bench_scaling([25_000, 50_000, 100_000, 200_000], repeat=5)
        bench_dask(200_000, repeat=3)


if __name__ == "__main__":
    main()
