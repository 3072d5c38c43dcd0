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
  label checks know where the grid lives;
* ``resolution_rtol`` and ``even_grids_only`` (optional): a wider tolerance
  of the resolution-invariance test (default 1e-3, derived there), or even
  grids only, when the estimator's own discretisation differs from the
  quadrature's; the reason stands beside the case;
* ``partial_fit_params`` (optional): parameters of the fit that
  ``partial_fit`` over batches equals, when ``partial_fit`` does less than
  ``fit``; the reason stands beside the case.

Adding an estimator means adding its case here; the common tests pick it up
through :func:`skfunc.utils.all_estimators`.
"""

import matplotlib
import numpy as np
import pytest
from scipy.integrate import trapezoid
from scipy.interpolate import CubicSpline, make_smoothing_spline

from skfunc.datasets import make_smooth_regression

matplotlib.use("Agg")

#: points at which curve-valued outputs are compared across grids
COMMON_POINTS = np.linspace(0, 1, 57)

#: number of curves in every common-test data set
N_CURVES = 60


@pytest.fixture
def rng():
    return np.random.default_rng(0)


@pytest.fixture(scope="session")
def scipy_smoothing():
    """Noisy curves on an uneven grid (70 points on [0, 0.3], 30 on [0.3, 1],
    the same noise at every point, 50 replications) and the mean squared
    error to the truth of scipy's GCV smoothing splines
    (``scipy.interpolate.make_smoothing_spline`` with ``lam=None``):
    ``(t, truth, X, mse_ref)``."""
    rng = np.random.default_rng(1)
    t = np.concatenate([np.linspace(0, 0.3, 70, endpoint=False), np.linspace(0.3, 1, 30)])
    truth = np.sin(2 * np.pi * t) + 0.5 * np.cos(5 * t)
    X = truth + 0.3 * rng.normal(size=(50, t.size))
    ref = np.stack([make_smoothing_spline(t, x)(t) for x in X])
    return t, truth, X, ((ref - truth) ** 2).mean()


def trapezoid_weights(t):
    """Composite trapezoid weights on the points t, from scipy's trapezoid
    rule applied to the unit vectors (independent of skfunc)."""
    t = np.asarray(t, dtype=np.float64)
    return trapezoid(np.eye(t.size), t, axis=1)


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


def _sparse_pca_output(est, X):
    # eigenvalues and the component functions at common points; the scores
    # are conditional expectations that weigh every observation alike (sums
    # over points, not integrals), so on curves outside the components' span
    # they change with the number of points by O(1/m), as they should
    from skfunc._bases import BSplineBasis

    basis = BSplineBasis((0.0, 1.0), est.covariance_n_basis_, degree=est.covariance_degree_)
    components = est.components_basis_coef_ @ basis.evaluate(COMMON_POINTS).T
    return np.concatenate([est.explained_variance_, np.abs(components).ravel()])


def _curve_prediction(est, X):
    return est.predict(X, eval_points=COMMON_POINTS)


def _concurrent_output(est, X):
    intercept, coef = est.coef_functions_at(COMMON_POINTS)
    return np.concatenate([intercept, coef])


def _on_common_points(grid, Y):
    """Rows of ``Y`` (values on ``grid``) at :data:`COMMON_POINTS`, by scipy's
    cubic spline (its O(h^4) error keeps the comparison on the estimator)."""
    return CubicSpline(grid, np.atleast_2d(Y), axis=1)(COMMON_POINTS).ravel()


def _template_and_warps(est, X):
    g = est.grid_
    return np.concatenate([_on_common_points(g, est.template_),
                           _on_common_points(g, est.transform_warps(X))])


def _warps(est, X):
    return _on_common_points(est.grid_, est.transform_warps(X))


#: warps t + a (t - t0)(t1 - t) / (t1 - t0) of the elastic aligner's data
#: (strictly increasing for |a| < 1, ends fixed)
WARP_SIZES = np.linspace(-0.5, 0.5, 6)


def _warped_copies(grid):
    """Copies ``f o gamma_k`` of one smooth curve ``f``: ``f`` sampled at the
    warped grid points, so the same functions on any grid."""
    grid = np.asarray(grid, dtype=np.float64)
    t0, t1 = grid[0], grid[-1]
    bend = (grid - t0) * (t1 - grid) / (t1 - t0)
    X = np.array([smooth_curves(grid + a * bend, n=1)[0][0] for a in WARP_SIZES])
    return X, None


def _curves_only(grid):
    return smooth_curves(grid)[0], None


def _smoother_curves_only(grid):
    # 5 Fourier terms: a covariance surface that 15 x 15 B-splines represent
    # (11 terms put variation at scales the smoothed surface leaves to noise)
    return make_smooth_regression(N_CURVES, grid=grid, n_terms=5, random_state=0)[0], None


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
        # smoothed components in a basis, so that the penalty and its
        # automatic choice are exercised
        params=lambda grid: {"n_components": 3, "basis": "bspline", "n_basis": 12,
                             "alpha": 1e-4, "grid": grid},
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
    "SparseFunctionalPCA": dict(
        # fixed alphas: the automatic choice may step to a neighbouring
        # candidate between samplings, which is not what these tests check
        params=lambda grid: {"n_components": 3, "alpha": 1e-6, "covariance_alpha": 1e-6,
                             "max_covariance_points": 201, "grid": grid},
        data=_smoother_curves_only, output=_sparse_pca_output, curve_input=True,
        # observations are pooled with equal weights (Yao, Mueller and Wang
        # 2005), not quadrature weights: a grid dense at the ends weighs the
        # ends more (a different, equally consistent estimate), and on even
        # grids the end points weigh a full step instead of half of one, an
        # O(h) = 1/200 relative difference; 2e-2 leaves room (a sum in place
        # of an integral would change eigenvalues 5x)
        even_grids_only=True, resolution_rtol=2e-2,
        # partial_fit gives the one-pass moment fit (each EM step of fit's
        # likelihood refinement needs every curve again): fit without it
        partial_fit_params={"max_iter": 0},
    ),
    "ConcurrentFunctionRidge": dict(
        params=lambda grid: {"alpha": 1e-6, "n_basis": 12, "grid": grid},
        data=_curves_and_curves, output=_concurrent_output, curve_input=True,
    ),
    "ShiftAligner": dict(
        params=lambda grid: {"grid": grid},
        data=_curves_only, output=_template_and_warps, curve_input=True,
    ),
    "LandmarkAligner": dict(
        params=lambda grid: {"grid": grid},
        data=_curves_only, output=_template_and_warps, curve_input=True,
    ),
    # warped copies of the given template, so the warps are determined; the
    # dynamic program's warps pass through grid points, so across samplings
    # they differ by up to the coarser grid's largest spacing: pi / 400
    # ~ 7.9e-3 on the uneven grid, 1.4e-2 of the identity warp's L2 norm
    # (1 / sqrt(3)) (derivation)
    "ElasticAligner": dict(
        params=lambda grid: {"template": smooth_curves(grid, n=1)[0][0], "grid": grid},
        data=_warped_copies, output=_warps, curve_input=True, resolution_rtol=1.4e-2,
    ),
    "CurveOutlierDetector": dict(
        params=lambda grid: {"random_state": 0, "grid": grid},
        data=_curves_only,
        output=lambda est, X: est.score_samples(X), curve_input=True,
        # the pointwise median and MAD switch curves where curves cross, so
        # the outlyingness integrands have kinks; measured against 4001
        # points the scores' relative error falls as h^2 (6.8e-3, 2.3e-3,
        # 4.6e-4, 7.5e-5 on 101, 201, 401, 1001 points), with a larger
        # constant than smooth integrands: 5e-3 at 201 points
        resolution_rtol=5e-3,
    ),
}


def make_case(name, grid):
    """``(estimator, X, y, output)`` for the estimator ``name`` on ``grid``."""
    from skfunc.utils import all_estimators

    case = ESTIMATOR_CASES[name]
    estimator = dict(all_estimators())[name](**case["params"](grid))
    X, y = case["data"](grid)
    return estimator, X, y, case["output"]
