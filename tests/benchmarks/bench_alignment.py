"""Benchmark the aligners against their baselines; prints a table of ratios.

1. Elastic alignment of n curves x 200 points to a fitted template (the
   vectorised dynamic program, one table row for a block of curves at a
   time), against the same dynamic program called one curve at a time in a
   Python loop (over a subset), compared per curve, in one run.
   Target: at least 20x lower per-curve time than a scalar textbook version
   of the same recursion (cell by cell in pure Python, same steps and segment
   costs; timed on two curves). For context the table also gives the same
   dynamic program called one curve at a time: since each table row is
   computed for all steps at once, one curve alone already runs fast, so
   this ratio only shows what blocks of curves still amortise.
2. Shift alignment (``ShiftAligner.transform``) of n curves x 200 points
   against one fixed-alpha ``CurveSmoother`` transform of the same data.
   Target: within 10x.

Run ``python tests/benchmarks/bench_alignment.py`` (full sizes: 1,000 elastic
curves, 100,000 shifted curves) or with ``--quick`` (a few seconds) from the
repository root.
"""

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from _timing import best_time  # noqa: E402

from skfunc._warping import DP_STEPS, dynamic_program_warps, srsf  # noqa: E402
from skfunc.alignment import ElasticAligner, ShiftAligner  # noqa: E402
from skfunc.preprocessing import CurveSmoother  # noqa: E402


def warped_bumps(n, m, rng):
    t = np.linspace(0, 1, m)
    a = rng.uniform(-0.6, 0.6, (n, 1))
    warps = t + a * t * (1 - t)
    height = rng.uniform(0.7, 1.3, (n, 1))
    X = height * (np.exp(-((warps - 0.35) / 0.08) ** 2)
                  + 0.6 * np.exp(-((warps - 0.7) / 0.06) ** 2))
    return t, X


def scalar_dynamic_program(t, q1, q2):
    """The recursion cell by cell in pure Python, for one curve: same steps
    and the same Simpson segment cost as the vectorised version."""
    m = t.size
    energy = np.full((m, m), np.inf)
    energy[0, 0] = 0.0
    for i in range(1, m):
        for j in range(1, m):
            best = np.inf
            for di, dj in DP_STEPS:
                k, ll = i - di, j - dj
                if k < 0 or ll < 0 or energy[k, ll] == np.inf:
                    continue
                h = t[i] - t[k]
                r = ((t[j] - t[ll]) / h) ** 0.5
                q1m = np.interp(0.5 * (t[i] + t[k]), t, q1)
                q2m = np.interp(0.5 * (t[j] + t[ll]), t, q2)
                cost = h / 6 * ((q1[k] - r * q2[ll]) ** 2 + 4 * (q1m - r * q2m) ** 2
                                + (q1[i] - r * q2[j]) ** 2)
                best = min(best, energy[k, ll] + cost)
            energy[i, j] = best
    return energy[-1, -1]


def bench_elastic(n, n_loop, n_scalar, rng):
    t, X = warped_bumps(n, 200, rng)
    aligner = ElasticAligner(max_iter=2).fit(X[:50])
    q1 = aligner.template_srsf_
    Q = srsf(t, X)
    vectorised = best_time(lambda: dynamic_program_warps(t, q1, Q), 1) / n
    loop = best_time(
        lambda: [dynamic_program_warps(t, q1, Q[i:i + 1]) for i in range(n_loop)], 1
    ) / n_loop
    scalar = best_time(
        lambda: [scalar_dynamic_program(t, q1, Q[i]) for i in range(n_scalar)], 1
    ) / n_scalar if n_scalar else float("nan")
    whole = best_time(lambda: aligner.transform(X), 1) / n
    return [
        (f"elastic DP, {n} curves x 200, per curve", vectorised,
         "scalar pure-Python recursion", scalar, 20.0),
        ("elastic DP (context)", vectorised,
         "same DP one curve at a time", loop, None),
        ("ElasticAligner.transform per curve (context)", whole,
         "same DP one curve at a time", loop, None),
    ]


def bench_shift(n, rng):
    t = np.linspace(0, 1, 200)
    delays = rng.uniform(-0.1, 0.1, (n, 1))
    X = np.exp(-((t - 0.5 - delays) / 0.1) ** 2) + 0.01 * rng.normal(size=(n, 200))
    aligner = ShiftAligner().fit(X[:2000])
    smoother = CurveSmoother(alpha=1e-4).fit(X[:2000])
    ours = best_time(lambda: aligner.transform(X), 2)
    theirs = best_time(lambda: smoother.transform(X), 2)
    return [(f"ShiftAligner.transform, {n} x 200", ours,
             "CurveSmoother fixed-alpha transform", theirs, -10.0)]


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    args = parser.parse_args(argv)
    rng = np.random.default_rng(0)
    if args.quick:
        rows = bench_elastic(60, 3, 0, rng) + bench_shift(5_000, rng)
    else:
        rows = bench_elastic(1_000, 20, 2, rng) + bench_shift(100_000, rng)
    print(f"{'measure':48s} {'skfunc s':>10s} {'baseline':36s} {'base s':>10s} "
          f"{'ratio':>16s}  target")
    for name, ours, base_name, base, target in rows:
        if base != base:  # NaN: baseline skipped in --quick
            continue
        if target is not None and target < 0:  # a slowdown bound
            ratio = f"{ours / base:6.1f}x slower"
            goal = f"within {-target:g}x"
        else:
            ratio = f"{base / ours:6.1f}x faster"
            goal = "" if target is None else f">= {target:g}x faster"
        print(f"{name:48s} {ours:10.4g} {base_name:36s} {base:10.4g} {ratio:>16s}  {goal}")


if __name__ == "__main__":
    main()
