"""Benchmark of modified band depth and CurveOutlierDetector.

Targets: modified band depth of 20,000 curves x 200 points; at n = 2,000
the rank formula at least 100x faster than enumerating the pairs, measured
in the same run; fit and score cost of the detector growing as n log n.

Usage::

    python tests/benchmarks/bench_depth.py           # full size
    python tests/benchmarks/bench_depth.py --quick   # small, a few seconds

Enumerating the C(n, 2) pairs costs the same for every curve scored, so it
is timed on ``--enumerated`` curves and scaled to all n (the scaled time is
printed as such); the depths of those curves are checked against the rank
formula. Times are CPU seconds of this process.
"""

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from skfunc.outliers import CurveOutlierDetector, modified_band_depth  # noqa: E402


def curves(n, m, seed=0):
    """Brownian paths plus a mean curve on an even grid of [0, 1]."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0, 1, m)
    X = np.cumsum(rng.standard_normal((n, m)), axis=1) / np.sqrt(m)
    return t, X + np.sin(np.pi * t)


def enumerated_mbd(x, X, t, pair_chunk=200_000):
    """MBD of one curve by going through every pair (Lopez-Pintado & Romo,
    2009), in chunks of pairs; time inside a band by numpy.trapezoid."""
    i, j = np.triu_indices(len(X), k=1)
    total = 0.0
    for start in range(0, i.size, pair_chunk):
        a, b = X[i[start:start + pair_chunk]], X[j[start:start + pair_chunk]]
        inside = (np.minimum(a, b) <= x) & (x <= np.maximum(a, b))
        total += np.trapezoid(inside.astype(np.float64), t, axis=1).sum()
    return total / i.size / (t[-1] - t[0])


def timed(job):
    """CPU seconds of this process (less disturbed than wall time by other
    processes on a shared machine) and the job's result."""
    start = time.process_time()
    out = job()
    return time.process_time() - start, out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--enumerated", type=int, default=3)
    args = parser.parse_args()
    big, m = (4_000, 50) if args.quick else (20_000, 200)
    n_ratio = 300 if args.quick else 2_000
    sizes = [500, 1_000, 2_000, 4_000] if args.quick else [2_500, 5_000, 10_000,
                                                            20_000]

    t, X = curves(big, m)
    seconds, _ = timed(lambda: modified_band_depth(X, grid=t))
    print(f"modified band depth, {big} curves x {m} points: {seconds:.2f} s")

    t, X = curves(n_ratio, m, seed=1)
    fast_seconds, fast = timed(lambda: modified_band_depth(X, grid=t))
    k = args.enumerated
    slow_seconds, slow = timed(lambda: [enumerated_mbd(x, X, t) for x in X[:k]])
    np.testing.assert_allclose(slow, fast[:k], rtol=1e-10)
    scaled = slow_seconds / k * n_ratio
    print(f"n = {n_ratio}, m = {m}: rank formula {fast_seconds:.3f} s; pairs "
          f"enumerated for {k} curves {slow_seconds:.2f} s, scaled to {n_ratio} "
          f"curves {scaled:.0f} s; ratio {scaled / fast_seconds:.0f}x "
          f"(target >= 100x)")

    print(f"\nCurveOutlierDetector, fit + score_samples, m = {m}:")
    print(f"{'method':<16} {'n':>7} {'seconds':>9} {'s / (n log2 n) x 1e6':>22}")
    for method in ("boxplot", "magnitude_shape"):
        for n in sizes:
            t, X = curves(n, m, seed=2)
            detector = CurveOutlierDetector(method, random_state=0, grid=t)
            seconds, _ = timed(lambda d=detector, X=X: d.fit(X).score_samples(X))
            print(f"{method:<16} {n:>7} {seconds:>9.3f} "
                  f"{1e6 * seconds / (n * np.log2(n)):>22.3f}")


if __name__ == "__main__":
    main()
