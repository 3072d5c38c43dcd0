"""Benchmark of modified band depth and CurveOutlierDetector.

Targets: modified band depth of 20,000 curves x 200 points; at n = 2,000
the rank formula at least 100x faster than enumerating the pairs, measured
in the same run; fit and score cost of the detector growing as n log n.
Last, fit time against n for each method and for the robust covariance
alone, with the least-squares line a + b n (the scale target: every time
within 5% of the line, a below 10 ms) and seconds / (n log2 n): the depths
rank the values at each grid point and Qn selects among pairwise
differences, so n log n (and log^2 n for Qn) is the honest model; the
line shows how close to linear that is over the sizes measured.

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
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--fit-scaling", action="store_true",
                        help="only time the fits against n")
    parser.add_argument("--mcd-comparison", action="store_true",
                        help="only compare DetMCD with scikit-learn's MinCovDet")
    args = parser.parse_args()
    if args.mcd_comparison:
        mcd_comparison(quick=args.quick)
        return
    big, m = (4_000, 50) if args.quick else (20_000, 200)
    n_ratio = 300 if args.quick else 2_000
    sizes = [500, 1_000, 2_000, 4_000] if args.quick else [2_500, 5_000, 10_000,
                                                            20_000]
    repeat = 1 if args.quick else args.repeat  # quick: a smoke run
    if args.fit_scaling:
        fit_scaling(sizes, m, repeat)
        return

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
    fit_scaling(sizes, m, repeat)


#: the fits timed against n: label -> detector parameters ("depth" with a
#: fixed contamination: the automatic cutoff's bootstrap repeats the depth
#: 50 times per round of trimming, and the number of rounds depends on the
#: data)
FITS = {
    "boxplot": {"method": "boxplot"},
    "magnitude_shape": {"method": "magnitude_shape"},
    "depth (mbd, 0.1)": {"method": "depth", "contamination": 0.1},
    "depth (integrated)": {"method": "depth", "depth": "integrated",
                           "contamination": 0.1},
}


def line_verdict(ns, seconds, model=lambda n: n):
    """Least-squares line a + b model(n); largest relative distance from it."""
    x, seconds = model(np.asarray(ns, dtype=float)), np.asarray(seconds)
    slope, intercept = np.polyfit(x, seconds, 1)
    off = np.abs(seconds - (intercept + slope * x)) / seconds
    return intercept, off.max()


def fit_scaling(sizes, m, repeat):
    """fit time against n for each method and for the robust covariance
    alone (DetMCD of n points in 2 dimensions): the line a + b n (target:
    every time within 5% of it, a < 10 ms), the largest distance from the
    least-squares a + b n log2 n, and seconds / (n log2 n)."""
    from skfunc._robust_covariance import deterministic_mcd

    print(f"\nfit time against n (CPU seconds, best of {repeat}; m = {m}); "
          "line a + b n: target off line <= 0.05, a < 10 ms")
    print(f"{'fit':<20} " + "".join(f"{n:>10}" for n in sizes)
          + f"{'a (ms)':>10} {'off line':>9} {'off n log n':>12}  s / (n log2 n) x 1e6")
    rows = {label: (lambda t, X, p=params: CurveOutlierDetector(grid=t, **p).fit(X))
            for label, params in FITS.items()}
    rows["DetMCD, 2-d points"] = lambda t, X: deterministic_mcd(X[:, [0, -1]])
    data = {n: curves(n, m, seed=3) for n in sizes}
    for label, fit in rows.items():
        fit(*data[sizes[0]])  # warm-up
        seconds = dict.fromkeys(sizes, np.inf)
        for _ in range(repeat):  # interleaved: load hits every size alike
            for n in sizes:
                spent, _ = timed(lambda n=n, fit=fit: fit(*data[n]))
                seconds[n] = min(seconds[n], spent)
        times = [seconds[n] for n in sizes]
        a, off = line_verdict(sizes, times)
        _, off_log = line_verdict(sizes, times, lambda n: n * np.log2(n))
        per = "  ".join(f"{1e6 * s / (n * np.log2(n)):.2f}" for n, s in zip(sizes, times))
        print(f"{label:<20} " + "".join(f"{s:>10.4f}" for s in times)
              + f"{1e3 * a:>10.1f} {off:>9.3f} {off_log:>12.3f}  {per}")


def mcd_comparison(quick=False):
    """DetMCD against scikit-learn's MinCovDet (FastMCD, random_state = the
    replicate) on 2-d Gaussian points, clean or with a share of outliers in
    a far cluster (SD 0.5 at (10, -10)), near (SD 0.5 at (3, -3)) or tight
    (SD 0.1 at (8, 8)): the ratio of the raw objectives (determinant of
    the covariance of each h-subset), the largest centre difference in
    standard errors of the mean of the kept points, and how often each
    centre lies more than 3 from the clean centre 0 ("pulled")."""
    import warnings

    from sklearn.covariance import MinCovDet

    from skfunc._robust_covariance import deterministic_mcd

    def objective(X, support):
        return np.linalg.det(np.cov(X[support].T, bias=True))

    rng = np.random.default_rng(123)
    print("\nDetMCD / MinCovDet: raw objective ratio, centre difference, pulled centres")
    for n in (50, 200) if quick else (50, 200, 1000):
        for share, kind in ((0, "clean"), (0.1, "far"), (0.2, "far"), (0.3, "far"),
                            (0.4, "far"), (0.2, "near"), (0.4, "tight")):
            ratios, moved, pulled = [], [], [0, 0]
            for rep in range(20 if n < 1000 else 8):
                X = rng.standard_normal((n, 2)) @ np.array([[1, 0.6], [0, 1.2]])
                m = int(share * n)
                centre, sd = {"far": ([10, -10], 0.5), "near": ([3, -3], 0.5),
                              "tight": ([8, 8], 0.1), "clean": ([0, 0], 1)}[kind]
                X[:m] = rng.standard_normal((m, 2)) * sd + centre
                ours = deterministic_mcd(X)
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    theirs = MinCovDet(random_state=rep).fit(X)
                ratios.append(objective(X, ours.raw_support)
                              / objective(X, theirs.raw_support_))
                se = np.sqrt(np.diag(theirs.covariance_) / theirs.support_.sum())
                moved.append(np.max(np.abs(ours.location - theirs.location_) / se))
                pulled[0] += np.linalg.norm(ours.location) > 3
                pulled[1] += np.linalg.norm(theirs.location_) > 3
            print(f"n = {n:5d} {kind:5s} {share:.1f}: ratio {min(ratios):.4f}-"
                  f"{max(ratios):.4f}; centres differ by <= {max(moved):.2f} SE; "
                  f"pulled: DetMCD {pulled[0]}, MinCovDet {pulled[1]} of {len(ratios)}",
                  flush=True)


if __name__ == "__main__":
    main()
