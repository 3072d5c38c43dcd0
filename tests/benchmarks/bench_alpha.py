"""Benchmark the automatic choice of alpha against one fixed-alpha solve.

For least squares the automatic choice (``alpha="auto"``: candidates over the
range of effective degrees of freedom, GCV or REML over all of them from one
decomposition, the best-index policy, the coefficients at the choice) is
compared with what a fixed-alpha fit needs:

* ``fixed, dense``: form the cross products and one dense solve of
  ``(G + lam P) c = b`` (Cholesky) -- the cheapest fixed-alpha fit;
* ``fixed, engine``: the same through the split engine at one alpha.

Two problem shapes, each with K basis functions:

1. a smoother pooled over n curves x m points (data pass ``X @ Phi``);
2. a scalar-outcome ridge on n curves x m points (data pass ``X @ W Phi``).

Ratios are printed with and without the data pass (``engine only``).
Target: automatic choice at most 1.5x a fixed-alpha fit (with the data pass).

Then every penalized estimator, through its public ``fit``: ``alpha="auto"``
against ``alpha=alpha_`` (the automatic fit's own choice), on invented kiln
runs (``skfunc.datasets.make_kiln_firing``, without dropouts), best of the
repeats taken in turns. Same target, 1.5x.

Run ``python tests/benchmarks/bench_alpha.py`` (full sizes) or with
``--quick`` (small sizes, a few seconds) from the repository root;
``--estimators [NAME ...]`` runs only the per-estimator table (for the named
estimators), ``--kiln-runs N`` and ``--repeat K`` set its size.
"""

import argparse
import warnings

import numpy as np
from _timing import best_times  # first: puts the repository on sys.path
from scipy.linalg import cho_factor, cho_solve

from skfunc._alpha import choose_alpha  # noqa: E402
from skfunc._bases import BSplineBasis  # noqa: E402
from skfunc._penalized import SplitPath, engine_alpha, penalty_for  # noqa: E402


def smoother_problem(n, m, K, rng):
    t = np.linspace(0, 1, m)
    X = np.sin(2 * np.pi * t + rng.uniform(0, 6, (n, 1))) + 0.3 * rng.normal(size=(n, m))
    basis = BSplineBasis((0.0, 1.0), K)
    phi_w = basis.evaluate(t) / m
    return X, phi_w, basis.evaluate(t), penalty_for(basis, 2)


def ridge_problem(n, m, K, rng):
    t = np.linspace(0, 1, m)
    X = rng.normal(size=(n, 8)) @ np.sin(np.outer(np.arange(1, 9), np.pi * t))
    y = X @ (np.gradient(t) * np.sin(np.pi * t)) + 0.1 * rng.normal(size=n)
    basis = BSplineBasis((0.0, 1.0), K)
    return X, y, basis.evaluate(t) * np.gradient(t)[:, None], penalty_for(basis, 2)


def bench_smoother(n, m, K, rng, repeat):
    X, phi_w, phi, pen = smoother_problem(n, m, K, rng)
    G = phi_w.T @ phi

    def data():
        B = X @ phi_w  # the data pass: one product over X
        return B, np.einsum("ij,ij->", X, X) / m

    B, yy_total = data()
    norms = np.linalg.norm(B, axis=0)  # pooled: rss reductions need column norms

    def fixed_dense(B):
        lam = engine_alpha(1e-4, G, pen)
        return cho_solve(cho_factor(G + lam * pen.matrix), B.T)

    def fixed_engine(B):
        path = SplitPath(G, pen)
        return path.coef(path.rotate(B), 1e-4)

    def auto(B, criterion):
        path = SplitPath(G, pen)
        r = path.rotate(norms[None])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            chosen = choose_alpha(path, r, yy_total, n * m, criterion=criterion,
                                  total_weight=n, pooled=True)
        return path.coef(path.rotate(B), chosen["alpha"])

    funcs = {
        "data pass": lambda: data(),
        "fixed, dense": lambda: fixed_dense(B),
        "fixed, engine": lambda: fixed_engine(B),
        "auto GCV": lambda: auto(B, "gcv"),
        "auto REML": lambda: auto(B, "reml"),
    }
    return dict(zip(funcs, best_times(list(funcs.values()), repeat)))


def bench_ridge(n, m, K, rng, repeat):
    X, y, phi_w, pen = ridge_problem(n, m, K, rng)

    def data():
        Z = X @ phi_w
        Zc, yc = Z - Z.mean(axis=0), y - y.mean()
        return Zc.T @ Zc, Zc.T @ yc, yc @ yc

    G, b, yy = data()

    def fixed_dense():
        lam = engine_alpha(1e-4, G, pen)
        return cho_solve(cho_factor(G + lam * pen.matrix), b)

    def fixed_engine():
        path = SplitPath(G, pen)
        return path.coef(path.rotate(b), 1e-4)

    def auto(criterion):
        path = SplitPath(G, pen)
        r = path.rotate(b)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            chosen = choose_alpha(path, r, yy, n, criterion=criterion, extra_edf=1)
        return path.coef(r, chosen["alpha"])

    funcs = {
        "data pass": data,
        "fixed, dense": fixed_dense,
        "fixed, engine": fixed_engine,
        "auto GCV": lambda: auto("gcv"),
        "auto REML": lambda: auto("reml"),
    }
    return dict(zip(funcs, best_times(list(funcs.values()), repeat)))


def report(name, times):
    data = times["data pass"]
    base = times["fixed, dense"]
    print(f"\n{name}")
    print(f"  {'step':<15}{'time (ms)':>12}{'vs fixed+data':>16}{'engine only':>14}")
    for key, value in times.items():
        if key == "data pass":
            print(f"  {key:<15}{1e3 * value:>12.3f}")
            continue
        with_data = (value + data) / (base + data)
        print(f"  {key:<15}{1e3 * value:>12.3f}{with_data:>15.2f}x{value / base:>13.2f}x")


def estimator_cases(n):
    """(name, estimator, X, y) of every penalized estimator on ``n`` kiln runs."""
    import skfunc
    from skfunc.datasets import make_kiln_firing

    kiln = make_kiln_firing(n, dropout_fraction=0.0, random_state=0)
    X, minutes = kiln.data, kiln.grid
    rng = np.random.default_rng(0)
    concurrent_y = 0.5 * kiln.true_curves + rng.normal(0, 5.0, X.shape)
    return [
        ("CurveSmoother", skfunc.CurveSmoother(grid=minutes), X, None),
        ("BasisFeatures", skfunc.BasisFeatures(grid=minutes), X, None),
        ("FunctionalPCA", skfunc.FunctionalPCA(n_components=3, basis="bspline",
                                               grid=minutes), X, None),
        ("FunctionalRidge", skfunc.FunctionalRidge(grid=minutes), X, kiln.strength),
        ("FunctionalRidge(gcv)", skfunc.FunctionalRidge(grid=minutes, criterion="gcv"),
         X, kiln.strength),
        ("FunctionalRidgeCV", skfunc.FunctionalRidgeCV(grid=minutes), X, kiln.strength),
        ("FunctionOnScalarRidge", skfunc.FunctionOnScalarRidge(response_grid=minutes),
         kiln.settings, X),
        ("FunctionOnFunctionRidge", skfunc.FunctionOnFunctionRidge(
            grid=kiln.oxygen_grid, response_grid=minutes), kiln.oxygen, X),
        ("ConcurrentFunctionRidge", skfunc.ConcurrentFunctionRidge(grid=minutes,
                                                             response_grid=minutes),
         X, concurrent_y),
        ("FunctionalLogisticRegression", skfunc.FunctionalLogisticRegression(
            grid=minutes), X, kiln.cracked),
    ]


def bench_estimators(n, repeat, names=None):
    """Fit time of ``alpha="auto"`` against ``alpha=alpha_`` per estimator
    (those in ``names``; None for all)."""
    from sklearn.base import clone

    print(f"\nEvery penalized estimator on {n} kiln runs: fit with alpha='auto' "
          f"against alpha=alpha_ (best of {repeat}, in turns; target <= 1.5x)")
    print(f"  {'estimator':<30}{'auto (s)':>10}{'fixed (s)':>11}{'ratio':>8}")
    for name, est, X, y in estimator_cases(n):
        if names is not None and name not in names:
            continue
        args = (X,) if y is None else (X, y)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                auto = clone(est).fit(*args)
            except (TypeError, ValueError) as exc:  # a case this script got wrong
                print(f"  {name:<30}skipped: {exc}")
                continue
            chosen = np.asarray(getattr(auto, "alpha_", np.nan))
            if chosen.size != 1 or not np.isfinite(chosen):
                print(f"  {name:<30}skipped: alpha_ is {chosen!r}")
                continue
            fixed = clone(est).set_params(alpha=float(chosen))
            if getattr(auto, "_grown_n_basis", None):
                # a default basis the automatic fit grew (CurveSmoother): the
                # fixed fit gets the same basis, the growth counts as "auto"
                fixed.set_params(n_basis=auto.n_basis_)
            times = best_times({"auto": lambda e=est, a=args: clone(e).fit(*a),
                                "fixed": lambda e=fixed, a=args: clone(e).fit(*a)}, repeat)
        ratio = times["auto"] / times["fixed"]
        print(f"  {name:<30}{times['auto']:>10.3f}{times['fixed']:>11.3f}{ratio:>7.2f}x")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes, few repeats")
    parser.add_argument("--estimators", nargs="*", metavar="NAME",
                        help="only the per-estimator table, for these estimators "
                        "(all when no name is given)")
    parser.add_argument("--kiln-runs", type=int, default=None,
                        help="kiln runs of the per-estimator table (default 300; "
                        "30 with --quick)")
    parser.add_argument("--repeat", type=int, default=None,
                        help="best of this many runs in the per-estimator table "
                        "(default 3; 1 with --quick)")
    args = parser.parse_args()
    n_runs = args.kiln_runs or (30 if args.quick else 300)
    repeat_estimators = args.repeat or (1 if args.quick else 3)
    if args.estimators is not None:
        bench_estimators(n_runs, repeat_estimators, args.estimators or None)
        return
    rng = np.random.default_rng(0)
    repeat = 3 if args.quick else 7
    sizes = [(200, 100, 20)] if args.quick else [(2000, 500, 20), (2000, 500, 40)]
    print("Automatic alpha vs one fixed-alpha solve (best of "
          f"{repeat}; target auto <= 1.5x fixed with the data pass)")
    for n, m, K in sizes:
        report(f"smoother, pooled: {n} curves x {m} points, K={K}",
               bench_smoother(n, m, K, rng, repeat))
        report(f"scalar-outcome ridge: {n} curves x {m} points, K={K}",
               bench_ridge(n, m, K, rng, repeat))
    bench_estimators(n_runs, repeat_estimators)


if __name__ == "__main__":
    main()
