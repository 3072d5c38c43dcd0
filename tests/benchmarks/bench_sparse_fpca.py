"""Benchmark of SparseFunctionalPCA: cost against the number of observations,
and against a dense FunctionalPCA of the same curves interpolated.

Target: 100,000 curves with 5 observations each at random times; the cost
grows linearly in the number of observations (pairs within a curve are
bounded), the covariance is smoothed on at most 100 x 100 cells, and the
time is reported against ``FunctionalPCA`` on the same curves linearly
interpolated to 100 points (the interpolation itself is timed apart).
The default fit is the one-pass moment fit followed by EM steps of the
likelihood refinement (one pass each); both are timed. ``partial_fit`` (the
moment fit) over 10 batches of the largest size is timed against the
moment ``fit`` and checked to give the same components; each call re-solves the
fixed-size smoothing problems from the merged sums, so it costs about one
such solve per batch on top of the one pass over the data.

Usage::

    python tests/benchmarks/bench_sparse_fpca.py           # full size
    python tests/benchmarks/bench_sparse_fpca.py --quick   # small, seconds
    python tests/benchmarks/bench_sparse_fpca.py --sizes 2000 4000 8000 16000 32000

The observations are binned to a 100-point grid (``curves_from_arrays(...,
grid=100)``), so the padded matrix is as large as the dense one. Times are
the best of ``--repeat`` runs.
"""

import argparse
import time
import warnings

import numpy as np
from _timing import best_time  # first: puts the repository on sys.path

from skfunc.decomposition import FunctionalPCA, SparseFunctionalPCA  # noqa: E402
from skfunc.irregular import curves_from_arrays  # noqa: E402

N_POINTS = 100


def sparse_curves(n, per_curve, seed=0):
    """Times uniform on [0, 10]; two smooth modes plus noise (as in the tests)."""
    rng = np.random.default_rng(seed)
    t = np.sort(rng.uniform(0, 10, (n, per_curve)), axis=1)
    xi = rng.standard_normal((n, 2)) * [2.0, 1.0]
    values = (t + np.sin(t) - xi[:, :1] * np.cos(np.pi * t / 10) / np.sqrt(5)
              + xi[:, 1:] * np.sin(np.pi * t / 10) / np.sqrt(5)
              + 0.5 * rng.standard_normal(t.shape))
    return t, values


def interpolate(times, values, grid):
    """Each curve linearly interpolated to the grid (flat beyond its ends)."""
    return np.array([np.interp(grid, t, v) for t, v in zip(times, values)])


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, a smoke run")
    parser.add_argument("--repeat", type=int, default=None)
    parser.add_argument("--sizes", type=int, nargs="+", help="numbers of curves")
    args = parser.parse_args(argv)
    sizes = args.sizes or ([2_000, 4_000, 8_000] if args.quick
                           else [12_500, 25_000, 50_000, 100_000])
    repeat = args.repeat or (1 if args.quick else 2)
    per_curve = 5
    warnings.simplefilter("ignore")  # alpha at an edge of its candidates

    print(f"SparseFunctionalPCA(2): {per_curve} observations per curve, binned to a "
          f"{N_POINTS}-point grid; best of {repeat}. 'moments s': the one-pass moment "
          "fit (max_iter=0); 'fit s': the default fit (moments, then EM steps of the "
          "likelihood refinement, each one pass); 'EM steps': n_iter_")
    print(f"{'curves':>8} {'obs':>9} {'ingest s':>9} {'moments s':>9} {'fit s':>7} "
          f"{'EM steps':>8} {'s/step':>7} {'transform s':>11} {'us/obs (fit)':>12}")
    rows = []
    for n in sizes:
        times, values = sparse_curves(n, per_curve)
        start = time.perf_counter()
        curves = curves_from_arrays(list(times), list(values), grid=N_POINTS, domain=(0, 10))
        ingest = time.perf_counter() - start
        est = SparseFunctionalPCA(2, grid=curves.grid)
        moments = best_time(lambda X=curves.X, t=curves.grid: SparseFunctionalPCA(
            2, grid=t, max_iter=0).fit(X), repeat)
        fit = best_time(lambda est=est, X=curves.X: est.fit(X), repeat)
        transform = best_time(lambda est=est, X=curves.X: est.transform(X), repeat)
        n_obs = int(np.isfinite(curves.X).sum())
        steps = est.n_iter_
        rows.append((n, n_obs, fit, moments))
        print(f"{n:>8} {n_obs:>9} {ingest:>9.2f} {moments:>9.2f} {fit:>7.2f} {steps:>8} "
              f"{(fit - moments) / max(steps, 1):>7.3f} {transform:>11.2f} "
              f"{1e6 * fit / n_obs:>12.2f}")
    (n0, o0, f0, _), (n1, o1, f1, _) = rows[-2], rows[-1]
    obs = np.array([r[1] for r in rows], float)
    for label, column in (("moment fit", 3), ("fit", 2)):
        fits = np.array([r[column] for r in rows])
        slope, fixed = np.polyfit(obs, fits, 1)
        worst = np.max(np.abs(fits - (fixed + slope * obs)) / fits)
        print(f"{label} time = {fixed:.2f} s + {1e6 * slope:.2f} us per observation; "
              f"worst deviation from that line {100 * worst:.0f}% (the EM's number of "
              "steps varies with the data)")
    print(f"fit time ratio {n1} / {n0} curves: {f1 / f0:.2f} (observations x{o1 / o0:.2f})")

    # the dense baseline on the largest size
    grid = np.linspace(0, 10, N_POINTS)
    start = time.perf_counter()
    dense = interpolate(times, values, grid)
    interp = time.perf_counter() - start
    fpca = FunctionalPCA(2, grid=grid)
    dense_fit = best_time(lambda: fpca.fit(dense), repeat)
    dense_transform = best_time(lambda: fpca.transform(dense), repeat)
    print(f"dense FunctionalPCA(2) on the same {n1} curves interpolated to {N_POINTS} "
          f"points: interpolation {interp:.2f} s, fit {dense_fit:.2f} s, transform "
          f"{dense_transform:.2f} s")
    print(f"ratio sparse / dense: fit {f1 / dense_fit:.1f}x, fit + transform "
          f"{(f1 + transform) / (dense_fit + dense_transform):.1f}x")

    # partial_fit over 10 batches of the largest size (2 in a smoke run)
    n_batches = 2 if args.quick else 10

    def batches():
        model = SparseFunctionalPCA(2, grid=curves.grid, max_iter=0)
        for chunk in np.array_split(curves.X, n_batches):
            model.partial_fit(chunk)
        return model

    streamed = best_time(batches, repeat)
    whole = SparseFunctionalPCA(2, grid=curves.grid, max_iter=0).fit(curves.X)
    gap = np.max(np.abs(batches().components_ - whole.components_))
    print(f"partial_fit over {n_batches} batches (the moment fit): {streamed:.2f} s, "
          f"{streamed / rows[-1][3]:.2f}x the moment fit (one fixed-size solve per "
          f"batch); largest difference of the components from it {gap:.1e}")


if __name__ == "__main__":
    main()
