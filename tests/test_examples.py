"""The examples: the kiln scenario's scripts are there, and a recipe they
show holds. Every script in examples/ is run by the docs build
(``tests/test_docs.py::test_docs_build_without_warnings``: sphinx-gallery
runs each to completion, Agg backend, and the test checks each printed what
it found and left no files behind), not a second time here."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.py"))


def test_there_are_kiln_examples():
    kiln = [p for p in EXAMPLES if p.name.startswith("kiln_")]
    assert len(kiln) >= 4


def test_nearest_neighbour_recipe_distance_is_the_l2_distance():
    # The recipe in docs/nearest_neighbours.rst and
    # examples/kiln_nearest_neighbours.py: Euclidean distances between
    # BasisFeatures rows are L2 distances between curves. Curves in the span
    # of a Fourier basis are fitted exactly, so the distances must equal the
    # integral sqrt(int (x_i - x_j)^2 dt) computed directly with
    # scipy.integrate.simpson on the sampled curves (scipy's composite
    # Simpson rule; exact to ~1e-9 for these smooth curves on 401 points).
    import numpy as np
    from scipy.integrate import simpson
    from sklearn.neighbors import KNeighborsClassifier

    from skfunc.datasets import make_smooth_regression
    from skfunc.preprocessing import BasisFeatures

    t = np.linspace(0.0, 2.0, 401)
    # random Fourier series of 11 terms on [0, 2] (make_smooth_regression)
    X, y, _ = make_smooth_regression(30, grid=t, n_terms=11, random_state=0)
    coords = BasisFeatures(basis="fourier", n_basis=11, alpha=0,
                           period=2.0, grid=t).fit_transform(X)
    euclidean = np.linalg.norm(coords[:, None] - coords[None], axis=-1)
    direct = np.sqrt(simpson((X[:, None] - X[None]) ** 2, x=t, axis=-1))
    np.testing.assert_allclose(euclidean, direct, rtol=1e-6, atol=1e-9)

    # so k-NN on the coordinates is k-NN with the L2 distance: the same
    # neighbours and predictions as scikit-learn's KNeighborsClassifier on the
    # precomputed quadrature distances
    labels = (y > np.median(y)).astype(int)
    knn = KNeighborsClassifier(n_neighbors=3).fit(coords[:20], labels[:20])
    reference = KNeighborsClassifier(n_neighbors=3, metric="precomputed")
    reference.fit(direct[:20, :20], labels[:20])
    np.testing.assert_array_equal(knn.kneighbors(coords[20:])[1],
                                  reference.kneighbors(direct[20:, :20])[1])
    np.testing.assert_array_equal(knn.predict(coords[20:]),
                                  reference.predict(direct[20:, :20]))
