"""Shared fixtures, and one data factory per public estimator.

``ESTIMATOR_CASES[name]`` describes how the common tests
(``tests/test_common.py``) exercise the estimator ``name``:

* ``params(grid)``: constructor parameters for curves on ``grid``;
* ``data(grid)``: ``(X, y)`` with the curves on ``grid`` (y is None for
  transformers); the same call on another grid of the same domain gives the
  same underlying functions (from :func:`skfunc.datasets.make_smooth_regression`);
* ``output(estimator, X)``: what the fitted estimator computes, in a form
  that does not depend on the grid (evaluated at :data:`COMMON_POINTS` where
  the output is a curve);
* ``curve_input``: whether the rows of X are curves (else y is), so grid and
  label checks know where the grid lives.

Adding an estimator means adding its case here; the common tests pick it up
through :func:`skfunc.utils.all_estimators`.
"""

import matplotlib
import numpy as np
import pytest

from skfunc.datasets import make_smooth_regression

matplotlib.use("Agg")

#: points at which curve-valued outputs are compared across grids
COMMON_POINTS = np.linspace(0, 1, 57)

#: number of curves in every common-test data set
N_CURVES = 60


@pytest.fixture
def rng():
    return np.random.default_rng(0)


def smooth_curves(grid, random_state=0, n=N_CURVES):
    """Random smooth curves on ``grid`` and their scalar response; the same
    seed gives the same functions on any grid of [0, 1]."""
    X, y, _ = make_smooth_regression(n, grid=grid, noise=0.1, random_state=random_state)
    return X, y


def _scalar_covariates(n=N_CURVES):
    return np.random.default_rng(7).normal(size=(n, 3))


def _transform(est, X):
    return est.transform(X)


def _predict(est, X):
    return est.predict(X)


def _pca_output(est, X):
    # component signs are a convention: compare magnitudes of the scores
    return np.concatenate([est.explained_variance_, np.abs(est.transform(X)).ravel()])


def _curve_prediction(est, X):
    return est.predict(X, eval_points=COMMON_POINTS)


def _concurrent_output(est, X):
    intercept, coef = est.coef_functions_at(COMMON_POINTS)
    return np.concatenate([intercept, coef])


def _curves_only(grid):
    return smooth_curves(grid)[0], None


def _curves_and_outcome(grid):
    return smooth_curves(grid)


def _curves_and_classes(grid):
    X, y = smooth_curves(grid)
    return X, (y > np.median(y)).astype(int)


def _scalars_and_curves(grid):
    X = _scalar_covariates()
    Y = smooth_curves(grid, random_state=1)[0] + X @ smooth_curves(grid, 2, n=3)[0]
    return X, Y


def _curves_and_curves(grid):
    X = smooth_curves(grid)[0]
    return X, X + smooth_curves(grid, random_state=1)[0]


ESTIMATOR_CASES = {
    "BasisFeatures": dict(
        params=lambda grid: {"n_basis": 12, "alpha": 1e-6, "data_term": "integral",
                             "grid": grid},
        data=_curves_only, output=_transform, curve_input=True,
    ),
    "CurveSmoother": dict(
        params=lambda grid: {"alpha": 1e-5, "data_term": "integral", "grid": grid,
                             "eval_points": COMMON_POINTS},
        data=_curves_only, output=_transform, curve_input=True,
    ),
    "FunctionalPCA": dict(
        params=lambda grid: {"n_components": 3, "grid": grid},
        data=_curves_only, output=_pca_output, curve_input=True,
    ),
    "FunctionalRidge": dict(
        params=lambda grid: {"alpha": 1e-5, "n_basis": 12, "grid": grid},
        data=_curves_and_outcome, output=_predict, curve_input=True,
    ),
    "FunctionalRidgeCV": dict(
        params=lambda grid: {"alpha": np.logspace(-10, -2, 9), "n_basis": 12,
                             "grid": grid},
        data=_curves_and_outcome, output=_predict, curve_input=True,
    ),
    "FunctionalLogisticRegression": dict(
        params=lambda grid: {"alpha": 1e-3, "n_basis": 8, "grid": grid},
        data=_curves_and_classes,
        output=lambda est, X: est.predict_proba(X), curve_input=True,
    ),
    "FunctionOnScalarRidge": dict(
        params=lambda grid: {"alpha": 1e-6, "n_basis": 15, "response_grid": grid},
        data=_scalars_and_curves, output=_curve_prediction, curve_input=False,
    ),
    "FunctionOnFunctionRidge": dict(
        params=lambda grid: {"alpha": 1e-6, "n_basis": 10, "grid": grid,
                             "response_grid": grid},
        data=_curves_and_curves, output=_curve_prediction, curve_input=True,
    ),
    "ConcurrentFunctionRidge": dict(
        params=lambda grid: {"alpha": 1e-6, "n_basis": 12, "grid": grid},
        data=_curves_and_curves, output=_concurrent_output, curve_input=True,
    ),
}


def make_case(name, grid):
    """``(estimator, X, y, output)`` for the estimator ``name`` on ``grid``."""
    from skfunc.utils import all_estimators

    case = ESTIMATOR_CASES[name]
    estimator = dict(all_estimators())[name](**case["params"](grid))
    X, y = case["data"](grid)
    return estimator, X, y, case["output"]
