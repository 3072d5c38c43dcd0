"""Benchmark: FunctionOnScalarRidge against one least-squares solve.

The issue's target: a function-on-scalar fit of 100,000 runs x 5 covariates x
500-point response curves (GCV over 25 alphas, coefficient functions and
their covariance included) within 3x the time of one
``numpy.linalg.lstsq(Z, Y)`` of the same shapes (Z with a constant column).
Also times the function-on-function models against multi-output
``sklearn.linear_model.Ridge`` on raw grid values.

Run ``python tests/benchmarks/bench_function_response.py`` (full size) or with
``--quick`` (small sizes, a few seconds). Times are the best of ``--repeat``
runs, to damp noise from other processes.
"""

import argparse
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", ".."))

from _timing import best_time  # noqa: E402
from sklearn.linear_model import Ridge  # noqa: E402

from skfunc.linear_model import (  # noqa: E402
    ConcurrentFunctionRidge,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)


def scalar_case(n, p, m, repeat, rng):
    t = np.linspace(0, 10, m)
    Z = rng.normal(size=(n, p))
    curves = np.vstack([np.sin(np.pi * (j + 1) * t / 10) for j in range(p)])
    Y = 1100 * np.sin(np.pi * t / 10) + Z @ curves + rng.normal(0, 5, (n, m))
    Z1 = np.column_stack([np.ones(n), Z])
    base = best_time(lambda: np.linalg.lstsq(Z1, Y, rcond=None), repeat)
    model = FunctionOnScalarRidge(response_grid=t)
    ours = best_time(lambda: model.fit(Z, Y), repeat)
    return base, ours


def function_case(n, m, cls, repeat, rng):
    s = np.linspace(0, 1, m)
    k = np.arange(1, 21)
    X = (rng.normal(size=(n, 20)) / k) @ np.sin(np.pi * np.outer(k, s))
    Y = X @ np.exp(-((s[:, None] - s) ** 2) / 0.05) / m + rng.normal(0, 0.1, (n, m))
    base = best_time(lambda: Ridge(alpha=1.0).fit(X, Y), repeat)
    model = cls()
    ours = best_time(lambda: model.fit(X, Y), repeat)
    return base, ours


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    rng = np.random.default_rng(0)
    if args.quick:
        n, m, n_f, m_f = 10_000, 200, 500, 101
    else:
        n, m, n_f, m_f = 100_000, 500, 5_000, 201
    rows = []
    base, ours = scalar_case(n, 5, m, args.repeat, rng)
    rows.append((f"FunctionOnScalarRidge {n}x5 -> {m} pts", "numpy.linalg.lstsq",
                 base, ours, 3.0))
    for cls in (FunctionOnFunctionRidge, ConcurrentFunctionRidge):
        base, ours = function_case(n_f, m_f, cls, args.repeat, rng)
        rows.append((f"{cls.__name__} {n_f}x{m_f} -> {m_f}",
                     "sklearn Ridge (raw values)", base, ours, None))
    print(f"{'case':<48} {'baseline':<27} {'base s':>8} {'ours s':>8} "
          f"{'ratio':>6} {'target':>7}")
    failed = False
    for case, baseline, base, ours, target in rows:
        ratio = ours / base
        mark = "" if target is None else f"<= {target:g}"
        print(f"{case:<48} {baseline:<27} {base:8.3f} {ours:8.3f} {ratio:6.2f} "
              f"{mark:>7}")
        failed |= target is not None and ratio > target
    if failed:
        print("TARGET MISSED")
    return 1 if failed and not args.quick else 0


if __name__ == "__main__":
    sys.exit(main())
