"""Large-alpha limits: every least-squares estimator tends to the fit on the
roughness penalty's null space, with no loss of accuracy at alpha 1e12 and
1e20.

Source of each reference: the null space of a second-derivative penalty is
the straight lines (common practice: D^2 (a + b t) = 0), and the fit on it
is computed here with ``numpy.linalg.lstsq`` on the null-space design, built
independently of the estimators (trapezoid weights from scipy's trapezoid rule; the
unpenalized intercept functions of the curve-response models are expanded in
the response basis, whose values come from the basis' ``evaluate``).
Tolerance: the penalized part of the fit decays like 1 / alpha (1e-12 at
1e12), so 1e-8 relative leaves room for rounding only.
"""

import numpy as np
import pytest
from conftest import make_case, trapezoid_weights

from skfunc._validation import basis_for

T = np.linspace(2.0, 7.0, 101)  # not [0, 1]: the null space must be exact anywhere
RTOL = 1e-8
ALPHAS = [1e12, 1e20]


def _lstsq(design, target, sqrt_w=None):
    if sqrt_w is not None:
        design, target = design * sqrt_w[:, None], target * sqrt_w
    return np.linalg.lstsq(design, target, rcond=None)[0]


def _relative(a, b):
    return np.linalg.norm(a - b) / np.linalg.norm(b)


def _case(name, alpha):
    estimator, X, y, _ = make_case(name, T)
    params = {key: T for key in ("grid", "response_grid") if key in estimator.get_params()}
    if name == "CurveSmoother":
        params["eval_points"] = None
    params["alpha"] = alpha
    estimator.set_params(**params)
    if name == "BasisFeatures":
        estimator.set_params(data_term="mean")
    return estimator.fit(X, y), X, y


@pytest.mark.parametrize("alpha", ALPHAS)
@pytest.mark.parametrize("name", ["CurveSmoother", "BasisFeatures"])
def test_smoothers_tend_to_the_straight_line(name, alpha):
    est, X, _ = _case(name, alpha)
    line = np.column_stack([np.ones_like(T), T])
    if est.data_term == "mean":
        weights = None
    else:
        weights = np.sqrt(trapezoid_weights(T))
    expected = np.array([line @ _lstsq(line, x, weights) for x in X])
    out = est.transform(X) if name == "CurveSmoother" else est.inverse_transform(
        est.transform(X))
    assert _relative(out, expected) < RTOL


@pytest.mark.parametrize("alpha", ALPHAS)
@pytest.mark.parametrize("name", ["FunctionalRidge", "FunctionalRidgeCV"])
def test_scalar_outcome_tends_to_a_straight_line_beta(name, alpha):
    est, X, y = _case(name, alpha)
    w = trapezoid_weights(T)
    design = np.column_stack([np.ones(len(X)), X @ w, X @ (w * T)])
    coef = _lstsq(design, y)
    assert _relative(est.predict(X), design @ coef) < RTOL
    assert _relative(est.coef_function_, coef[1] + coef[2] * T) < RTOL


def _response_values(est):
    return basis_for(est, est.response_grid_, cap=False).evaluate(est.response_grid_)


def _null_space_fit(est, z, Y, w):
    """Weighted least squares of Y (rows of curves on T, weights w) on the
    null space of the penalties: any intercept function in the response
    basis, and the design ``z`` (one row per observation) times (1, t)."""
    n, m = Y.shape
    rows_t = np.tile(T, n)[:, None]
    design = np.column_stack([np.tile(_response_values(est), (n, 1)), z, z * rows_t])
    coef = _lstsq(design, Y.ravel(), np.sqrt(np.tile(w, n)))
    return (design @ coef).reshape(n, m)


@pytest.mark.parametrize("alpha", ALPHAS)
def test_function_on_scalar_tends_to_straight_line_coefficients(alpha):
    est, X, Y = _case("FunctionOnScalarRidge", alpha)
    expected = _null_space_fit(est, np.repeat(X, Y.shape[1], axis=0), Y, trapezoid_weights(T))
    assert _relative(est.predict(X), expected) < RTOL


@pytest.mark.parametrize("alpha", ALPHAS)
def test_function_on_function_tends_to_a_bilinear_surface(alpha):
    # both penalties vanish only on beta(s, t) = (1, s) A (1, t)'
    est, X, Y = _case("FunctionOnFunctionRidge", alpha)
    w = trapezoid_weights(T)
    moments = np.column_stack([X @ w, X @ (w * T)])  # int x, int x s
    expected = _null_space_fit(est, np.repeat(moments, Y.shape[1], axis=0), Y, w)
    assert _relative(est.predict(X), expected) < RTOL


@pytest.mark.parametrize("alpha", ALPHAS)
def test_concurrent_tends_to_a_straight_line_slope(alpha):
    est, X, Y = _case("ConcurrentFunctionRidge", alpha)
    expected = _null_space_fit(est, X.reshape(-1, 1), Y, trapezoid_weights(T))
    assert _relative(est.predict(X), expected) < RTOL
