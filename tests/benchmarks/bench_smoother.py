"""Benchmark CurveSmoother against its baselines; prints a table of ratios.

1. Per-curve GCV: ``CurveSmoother(per_curve=True)`` on n curves x 200 points
   x 25 candidates, against a loop of ``scipy.interpolate.make_smoothing_spline``
   (its own GCV) over a subset of the curves; compared per curve.
   Target: skfunc at least 1000x faster per curve.
2. Fixed-alpha transform of n curves x 500 points into 30 B-splines and back,
   against the two bare numpy matrix products of the same shapes.
   Targets: time within 1.3x; peak memory within 1.1x of input + output.

Run ``python tests/benchmarks/bench_smoother.py`` (full sizes) or with
``--quick`` (small sizes, a few seconds) from the repository root.
"""

import argparse
import tracemalloc

import numpy as np
from _timing import best_time, best_times  # first: puts the repository on sys.path
from scipy.interpolate import make_smoothing_spline
from threadpoolctl import threadpool_limits

from skfunc.preprocessing import CurveSmoother  # noqa: E402


def noisy_curves(n, m, rng):
    t = np.linspace(0, 1, m)
    amp = rng.uniform(0.5, 2.0, (n, 1))
    phase = rng.uniform(0, 2 * np.pi, (n, 1))
    return t, amp * np.sin(2 * np.pi * t + phase) + rng.normal(scale=0.3, size=(n, m))


def bench_per_curve(n, n_scipy, rng):
    t, X = noisy_curves(n, 200, rng)
    smoother = CurveSmoother(per_curve=True, grid=t)
    ours = best_time(lambda: smoother.fit_transform(X), 3) / n
    theirs = best_time(
        lambda: [make_smoothing_spline(t, x)(t) for x in X[:n_scipy]], 1
    ) / n_scipy
    return [
        (f"per-curve GCV, {n} x 200 x 25: s/curve", ours, theirs, theirs / ours,
         ">= 1000 (speed-up)"),
    ]


def bench_transform(n, rng):
    m, k = 500, 30
    X = rng.standard_normal((n, m))
    smoother = CurveSmoother(alpha=1e-6, n_basis=k).fit(X[:100])
    B = np.ascontiguousarray(smoother.projection_.T)
    C = np.ascontiguousarray(smoother.evaluation_.T)
    ours, bare = best_times([lambda: smoother.transform(X), lambda: (X @ B) @ C], 7)
    tracemalloc.start()
    out = smoother.transform(X)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    memory = (X.nbytes + peak) / (X.nbytes + out.nbytes)
    return [
        (f"fixed-alpha transform, {n} x {m} via {k}: s", ours, bare, ours / bare,
         "<= 1.3 (time ratio)"),
        ("  peak memory / (input + output)", X.nbytes + peak, X.nbytes + out.nbytes,
         memory, "<= 1.1"),
    ]


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    parser.add_argument("--threads", type=int, default=None,
                        help="limit BLAS threads (default: no limit)")
    args = parser.parse_args(argv)
    with threadpool_limits(args.threads):
        run(args.quick)


def run(quick):
    rng = np.random.default_rng(0)
    if quick:
        rows = bench_per_curve(2_000, 5, rng) + bench_transform(10_000, rng)
    else:
        rows = bench_per_curve(20_000, 200, rng) + bench_transform(100_000, rng)
    print(f"{'case':48s} {'skfunc':>11s} {'baseline':>11s} {'ratio':>9s}  target")
    for name, ours, base, ratio, target in rows:
        print(f"{name:48s} {ours:11.4g} {base:11.4g} {ratio:9.3g}  {target}")


if __name__ == "__main__":
    main()
