"""Benchmark: the all-alpha path of FunctionalRidgeCV against refitting.

Targets: FunctionalRidgeCV over 50 alphas on 50,000 curves x 500
points costs at most 3x one FunctionalRidge fit at a fixed alpha, and is at
least 20x faster than GridSearchCV(FunctionalRidge(), 50 alphas, cv=5), in
the same run. sklearn's RidgeCV on the raw grid values is shown for scale.

Run from the repository root::

    python tests/benchmarks/bench_ridge.py           # full size (about 2 min)
    python tests/benchmarks/bench_ridge.py --quick   # small, 10 alphas: a smoke run
"""

import argparse

import numpy as np
from _timing import best_times  # first: puts the repository on sys.path
from sklearn.linear_model import RidgeCV  # noqa: E402
from sklearn.model_selection import GridSearchCV  # noqa: E402

from skfunc import FunctionalRidge, FunctionalRidgeCV  # noqa: E402


def make_data(n, m, seed=0):
    """Brownian-motion-like curves (15 Karhunen-Loeve terms) and a smooth beta."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0, 1, m)
    k = np.arange(1, 16) - 0.5
    scores = rng.normal(size=(n, k.size)) / (k * np.pi)
    X = scores @ (np.sqrt(2) * np.sin(np.pi * np.outer(k, t)))
    beta = 2 * np.sin(2 * np.pi * t) + 1.5 * np.cos(np.pi * t)
    y = X @ (beta * np.gradient(t)) + 0.2 * rng.normal(size=n)
    return X, y


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, 10 alphas")
    args = parser.parse_args()
    # (the grid search refits 5 x n_alphas times: most of a quick run)
    n, m, n_alphas, repeat = (1_000, 100, 10, 2) if args.quick else (50_000, 500, 50, 5)
    X, y = make_data(n, m)
    alphas = np.logspace(-9, 0, n_alphas)

    fast = best_times(
        {
            "FunctionalRidge, one fit at fixed alpha": lambda: FunctionalRidge(
                alpha=1e-5
            ).fit(X, y),
            f"FunctionalRidgeCV, {n_alphas} alphas, gcv": lambda: FunctionalRidgeCV(
                alpha=alphas
            ).fit(X, y),
            f"FunctionalRidgeCV, {n_alphas} alphas, loo": lambda: FunctionalRidgeCV(
                alpha=alphas, criterion="loo"
            ).fit(X, y),
        },
        repeat,
    )
    rows = list(fast.items())
    one, gcv = rows[0][1], rows[1][1]

    def best_time(func, repeat):
        return best_times({"": func}, repeat)[""]

    kfold = FunctionalRidgeCV(alpha=alphas, cv=5)
    rows.append(
        (f"FunctionalRidgeCV, {n_alphas} alphas, cv=5", best_time(lambda: kfold.fit(X, y), 1))
    )
    search = GridSearchCV(FunctionalRidge(), {"alpha": alphas}, cv=5, n_jobs=1)
    grid_seconds = best_time(lambda: search.fit(X, y), 1)
    rows.append((f"GridSearchCV(FunctionalRidge), {n_alphas} alphas, cv=5", grid_seconds))
    raw = RidgeCV(alphas=alphas)
    rows.append(
        (
            f"sklearn RidgeCV on raw values, {n_alphas} alphas",
            best_time(lambda: raw.fit(X, y), 1),
        )
    )

    print(
        f"n_curves={n}, n_points={m}, {n_alphas} alphas, "
        f"best of {repeat} in turns (1 for the slow rows)"
    )
    print(
        f"{'method':50s} {'seconds':>9s} {'x one fit':>10s} {'grid search / this':>19s}"
    )
    for name, seconds in rows:
        ratios = f"{seconds / one:10.2f} {grid_seconds / seconds:19.1f}"
        print(f"{name:50s} {seconds:9.3f} {ratios}")
    print()
    print(
        f"GCV path / one fit = {gcv / one:.2f}  (target <= 3): "
        f"{'PASS' if gcv / one <= 3 else 'FAIL'}"
    )
    print(
        f"GridSearchCV / GCV path = {grid_seconds / gcv:.1f}  (target >= 20): "
        f"{'PASS' if grid_seconds / gcv >= 20 else 'FAIL'}"
    )


if __name__ == "__main__":
    main()
