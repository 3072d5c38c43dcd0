import matplotlib
import pytest

matplotlib.use("Agg")


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(0)


def sparse_curves(rng, n=60, n_points=41, low=2, high=10):
    """Curves observed at ``low``..``high`` of ``n_points`` times on [0, 1]
    (NaN elsewhere): two smooth modes of variation plus noise."""
    import numpy as np

    grid = np.linspace(0, 1, n_points)
    scores = rng.standard_normal((n, 2)) * [2.0, 1.0]
    curves = (np.sin(2 * grid) + scores[:, :1] * np.cos(np.pi * grid)
              + scores[:, 1:] * np.sin(np.pi * grid))
    counts = rng.integers(low, high + 1, n)
    keep = rng.random((n, n_points)).argsort(axis=1) < counts[:, None]
    X = np.where(keep, curves + 0.1 * rng.standard_normal(curves.shape), np.nan)
    return X, grid


#: data for an estimator, by class name: ``factory(rng)`` returns ``(X, y,
#: init_params)``; estimators not listed fit on complete curves
def _sparse_fpca_data(rng):
    X, grid = sparse_curves(rng)
    return X, None, {"grid": grid, "n_components": 2}


DATA_FACTORIES = {"SparseFunctionalPCA": _sparse_fpca_data}
