"""skfunc.hilbert against closed forms, scipy.integrate.quad and scipy's
quadrature, on uneven grids, at extreme scales and with bad input."""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad, simpson, trapezoid
from scipy.optimize import minimize, minimize_scalar
from scipy.spatial.distance import cdist

from skfunc import hilbert

EPS = np.finfo(np.float64).eps


def squared_grid(m=801, b=2.0):
    """A strongly uneven grid on [0, b] (points crowd near 0: spacings grow
    from b/(m-1)^2 to about 2b/(m-1)); quadrature that ignores the spacing
    is far off on it."""
    return b * np.linspace(0, 1, m) ** 2


def jittered_grid(m=401, b=2.0, seed=0):
    """An uneven grid whose neighbouring spacings differ by at most a factor
    1.3/0.7 < 2: interior points moved by up to 15% of the even spacing. The
    uneven Simpson end weights s/6 (2 - h1/h0) stay positive while h1/h0 <= 2
    (formula in skfunc._grid.quadrature_weights), so Simpson is allowed."""
    h = b / (m - 1)
    t = np.linspace(0, b, m)
    t[1:-1] += np.random.default_rng(seed).uniform(-0.15, 0.15, m - 2) * h
    return t


def trapezoid_bound(t, second_derivative_max):
    """Error bound of the composite trapezoid rule, (b - a) h_max^2 / 12
    max|f''| (Davis and Rabinowitz 1984, sec. 2.1)."""
    return (t[-1] - t[0]) * np.diff(t).max() ** 2 / 12 * second_derivative_max


def test_inner_product_against_quad_trapezoid():
    # int_0^2 e^t (cos t + 2) dt by scipy.integrate.quad; the integrand does not
    # vanish at either end (e^2 (cos 2 + 2) = 11.7 at t = 2), so a wrong end weight
    # (h instead of h/2: an error near h_end/2 * 11.7 = 0.029) fails the check.
    t = squared_grid()
    ref = quad(lambda s: np.exp(s) * (np.cos(s) + 2), 0, 2, epsabs=1e-13)[0]
    # (e^t (cos t + 2))'' = e^t (2 - 2 sin t), at most 2 e^2 on [0, 2] (closed form)
    tol = trapezoid_bound(t, 2 * np.exp(2))
    got = hilbert.inner_product(np.exp(t), np.cos(t) + 2, grid=t)
    assert abs(got - ref) <= tol
    assert tol < 1e-3  # the bound is sharp enough for the end-weight check above


def test_norm_against_closed_form_simpson():
    # ||e^t||^2 on [0, 2] = (e^4 - 1) / 2 (closed form). The uneven three-point
    # Simpson rule is exact for quadratics, so on a panel of width H its error is
    # the integral of the interpolation error, at most H * H^3 max|f'''| / 6
    # (interpolation error bound, common practice); summed: (b - a) H^3 M3 / 6 with
    # f = e^2t, M3 = 8 e^4 and H <= 2 max spacing.
    t = jittered_grid()
    exact = (np.exp(4) - 1) / 2
    tol = 2 * (2 * np.diff(t).max()) ** 3 / 6 * 8 * np.exp(4)
    got = hilbert.norm(np.exp(t), grid=t, quadrature="simpson") ** 2
    assert abs(got - exact) <= tol
    assert tol < 1e-3  # far below an end-weight error (about h/3 e^4 = 0.09)
    # and the same rule as scipy.integrate.simpson (rounding of 401-term sums)
    np.testing.assert_allclose(got, simpson(np.exp(2 * t), x=t), rtol=1e-12)


def test_inner_product_rows_and_broadcasting():
    # int_0^2 t * t = 8/3 and int_0^2 t^2 * t = 4 (closed forms); trapezoid bound
    # with (t^2)'' = 2 and (t^3)'' = 6t <= 12
    t = squared_grid()
    X = np.stack([t, t**2])
    got = hilbert.inner_product(X, t, grid=t)
    assert np.all(np.abs(got - [8 / 3, 4.0]) <= trapezoid_bound(t, 12.0))
    np.testing.assert_array_equal(hilbert.inner_product(t, X, grid=t), got)


def test_l2_distance_matches_pairwise_definition(rng):
    # Reference: scipy.spatial.distance.cdist on values scaled by the square roots
    # of the trapezoid weights (the quadrature definition of the L2 distance).
    t = squared_grid(101)
    X, Y = rng.normal(size=(4, t.size)), rng.normal(size=(3, t.size))
    w = np.sqrt(np.diff(t, prepend=t[0]) / 2 + np.diff(t, append=t[-1]) / 2)
    # rtol: both sides sum 101 rounded terms (relative error well below 1e-13)
    np.testing.assert_allclose(hilbert.l2_distance(X, Y, grid=t), cdist(X * w, Y * w),
                               rtol=1e-12)
    D = hilbert.l2_distance(X, grid=t)
    assert D.shape == (4, 4)
    np.testing.assert_array_equal(np.diag(D), 0.0)  # differences are exactly 0


def test_l2_distance_of_close_curves_far_from_zero():
    # ||(1000 + x + c) - (1000 + x)|| = c sqrt(|T|) (closed form, |T| = 1).
    # Storing 1000 + x rounds by at most ulp(1000)/2 = 5.7e-14 per value, so the
    # difference of 1e-5 is known to 2 * 5.7e-14 / 1e-5 = 1.1e-8 relative.
    t = np.linspace(0, 1, 30)
    x = np.sin(2 * np.pi * t) + t
    d = hilbert.l2_distance([1000 + x], [1000 + x + 1e-5], grid=t)
    np.testing.assert_allclose(d, [[1e-5]], rtol=2e-8)


@pytest.mark.parametrize("scale", [1e155, 1e-200])
def test_norms_and_inner_products_at_extreme_scales(scale):
    # ||s x|| = s ||x|| and <s x, s y> = s^2 <x, y> (homogeneity); references from
    # scipy.integrate.trapezoid at scale 1. The squares of 1e155 overflow and
    # those of 1e-200 underflow, so squaring before scaling fails here.
    t = squared_grid(201, 1.0)
    x, y = np.sin(2 * np.pi * t) + t, np.cos(3 * t)
    # rtol: a few rounding steps on sums of 201 terms
    np.testing.assert_allclose(hilbert.norm(scale * x, grid=t),
                               scale * np.sqrt(trapezoid(x * x, t)), rtol=1e-13)
    np.testing.assert_allclose(hilbert.inner_product(scale * x, y / scale, grid=t),
                               trapezoid(x * y, t), rtol=1e-13)
    np.testing.assert_allclose(hilbert.mean_value(scale * x, grid=t),
                               scale * trapezoid(x, t), rtol=1e-13)
    np.testing.assert_allclose(
        hilbert.correlation(scale * x, scale * y, grid=t),
        hilbert.correlation(x, y, grid=t), rtol=1e-13,
    )
    np.testing.assert_allclose(hilbert.l2_distance([scale * x], [scale * y], grid=t),
                               [[scale * np.sqrt(trapezoid((x - y) ** 2, t))]],
                               rtol=1e-13)


def test_mean_value_against_quad_and_best_constant():
    # int_0^2 e^t cos 3t dt / 2 by scipy.integrate.quad; ((e^t cos 3t)'' =
    # e^t (-8 cos 3t - 6 sin 3t), at most 10 e^2 in size: trapezoid bound)
    t = squared_grid()
    y = np.exp(t) * np.cos(3 * t)
    ref = quad(lambda s: np.exp(s) * np.cos(3 * s), 0, 2, epsabs=1e-13)[0] / 2
    assert abs(hilbert.mean_value(y, grid=t) - ref) <= trapezoid_bound(t, 10 * np.exp(2)) / 2
    # Standard result: the mean value minimises ||y - c||, with the objective from
    # scipy.integrate.trapezoid (not from skfunc)
    best = minimize_scalar(lambda c: trapezoid((y - c) ** 2, t), method="brent",
                           options={"xtol": 1e-12}).x
    # a line search resolves the minimiser of a quadratic to about sqrt(eps) = 1.5e-8
    assert abs(hilbert.mean_value(y, grid=t) - best) < 1e-7


def test_simple_regression_closed_form_and_brute_force():
    # x = t, y = sin(2 pi t) on [0, 1]: <y~, x~> = int t sin 2 pi t = -1/(2 pi),
    # <x~, x~> = 1/12, so b1 = -6/pi and b0 = ybar - b1 xbar = 3/pi (closed form).
    t = squared_grid(2001, 1.0)
    b0, b1 = hilbert.simple_regression(t, np.sin(2 * np.pi * t), grid=t)
    # trapezoid errors: the integrands' second derivatives are at most 4 pi^2 + 4 pi;
    # dividing by <x~, x~> = 1/12 multiplies the error by 12
    tol = 12 * trapezoid_bound(t, 4 * np.pi**2 + 4 * np.pi) * 2
    assert abs(b1 + 6 / np.pi) <= tol and abs(b0 - 3 / np.pi) <= tol
    # and the least-squares property with an objective from scipy (not skfunc)
    x = np.sin(2 * t) + t
    y = 0.5 + 1.7 * x + np.cos(5 * t)
    fit = hilbert.simple_regression(x, y, grid=t)
    res = minimize(lambda b: trapezoid((y - b[0] - b[1] * x) ** 2, t), [0.0, 0.0],
                   method="BFGS", options={"gtol": 1e-12})
    # BFGS stops where the gradient is about 1e-10: about 1e-6 in the coefficients
    np.testing.assert_allclose(fit, res.x, rtol=1e-5)


def test_correlation_closed_form():
    # corr(sin 2 pi t, t) on [0, 1] = (-1/(2 pi)) / sqrt(1/2 * 1/12) = -sqrt(24)/(2 pi)
    # (closed form); on this uneven grid unweighted sums give -0.58 instead of -0.78.
    t = squared_grid(2001, 1.0)
    r = hilbert.correlation(np.sin(2 * np.pi * t), t, grid=t)
    # trapezoid error of each of the three integrals is below
    # trapezoid_bound(t, 4 pi^2 + 4 pi) = 3e-6, divided by norms of size 0.2 or more
    assert abs(r + np.sqrt(24) / (2 * np.pi)) < 1e-4
    assert abs(r + np.sqrt(24) / (2 * np.pi)) > 0  # the quadrature error is not zero
    with pytest.raises(ValueError, match="constant x curve"):
        hilbert.correlation(np.ones_like(t), t, grid=t)


@pytest.mark.parametrize("value", [3.0, 0.1, 1e-250, 7e300, -2.5])
def test_constant_curves_are_refused_whatever_their_level(value):
    # A constant curve has no centred part; rounding of its mean value must not
    # make one up (correlation 1.0 and slope 0.23 before this rule).
    t = np.linspace(0, 1, 30)
    c = np.full(30, value)
    with pytest.raises(ValueError, match="constant x curve"):
        hilbert.correlation(c, c)
    with pytest.raises(ValueError, match="constant y curve"):
        hilbert.correlation(t, c)
    with pytest.raises(ValueError, match="constant x curve"):
        hilbert.simple_regression(c, t)
    # a constant response is fine: intercept = the value, slope 0
    b0, b1 = hilbert.simple_regression(t, c)
    # 1e-13: the centred constant is rounding noise of about 30 eps relative to
    # |value| (the bound behind the constant-curve rule), so is the slope
    assert np.isclose(b0, value, rtol=1e-13) and abs(b1) <= 1e-13 * abs(value)


def test_small_variation_on_a_large_level_is_not_constant():
    # 1 + 1e-9 sin(2 pi t) varies well beyond rounding (1e-9 >> 30 eps = 7e-15):
    # its correlation with t equals that of sin(2 pi t) (shift and scale invariance),
    # up to the representation error of the stored values, 1e-16 / 1e-9 = 1e-7.
    t = np.linspace(0, 1, 30)
    s = np.sin(2 * np.pi * t)
    assert np.isclose(hilbert.correlation(1 + 1e-9 * s, t), hilbert.correlation(s, t),
                      rtol=1e-6)


def test_uneven_grid_with_negative_simpson_weights_is_refused():
    # On this grid the composite Simpson weights include -1.02 (at point 10), so
    # "<e, e>" of a unit vector would be -1.02 and its norm 0.
    g = [0, .0276, .1442, .3118, .4092, .4233, .5118, .5496, .8277, .9486, .9505, 1]
    e = np.zeros(len(g))
    e[10] = 1.0
    for call in (hilbert.norm, hilbert.mean_value):
        with pytest.raises(ValueError, match="negative weight.*quadrature='trapezoid'"):
            call(e, grid=g, quadrature="simpson")
    with pytest.raises(ValueError, match="negative weight"):
        hilbert.inner_product(e, e, grid=g, quadrature="simpson")
    # the trapezoid rule is fine there: <e, e> = (g[11] - g[9]) / 2 (its weight)
    assert np.isclose(hilbert.inner_product(e, e, grid=g), (1 - 0.9486) / 2)


def test_moment_functions_match_numpy(rng):
    # Reference: numpy.mean / numpy.var / numpy.cov pointwise.
    X = rng.normal(size=(30, 12)) + 1000.0
    # rtol: sums of 30 terms, relative rounding near 30 eps = 7e-15
    np.testing.assert_allclose(hilbert.mean_function(X), X.mean(axis=0), rtol=1e-13)
    np.testing.assert_allclose(hilbert.variance_function(X), X.var(axis=0, ddof=1),
                               rtol=1e-12)
    np.testing.assert_allclose(hilbert.covariance_function(X), np.cov(X, rowvar=False),
                               rtol=1e-10, atol=1e-12)


def test_variance_function_of_one_curve_is_refused_like_covariance():
    for call in (hilbert.variance_function, hilbert.covariance_function):
        with pytest.raises(ValueError, match="more than ddof=1 curves; got 1"):
            call(np.arange(5.0))
    np.testing.assert_array_equal(hilbert.variance_function(np.arange(5.0), ddof=0), 0)


def test_bad_input():
    with pytest.raises(ValueError, match="same grid"):
        hilbert.inner_product(np.ones(3), np.ones(4))
    with pytest.raises(ValueError, match="x has 5 curves and y has 3"):
        hilbert.inner_product(np.ones((5, 4)), np.ones((3, 4)))
    with pytest.raises(ValueError, match="x has 5 curves and y has 3"):
        hilbert.correlation(np.ones((5, 4)), np.ones((3, 4)))
    with pytest.raises(ValueError, match="NaN"):
        hilbert.norm([0.0, np.nan, 1.0])
    with pytest.raises(ValueError, match="strictly increasing"):
        hilbert.norm(np.ones(3), grid=[0, 2, 1])
    with pytest.raises(ValueError, match="3-D"):
        hilbert.norm(np.ones((2, 2, 2)))
    with pytest.raises(TypeError, match="x must hold real curve values"):
        hilbert.norm(np.ones(3) + 1j)
    with pytest.raises(TypeError, match="y must hold real curve values"):
        hilbert.inner_product(np.ones(3), [1, 2j, 3])
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # no ComplexWarning on the way
            hilbert.norm(np.ones(3), grid=np.array([0, 0.5, 1]) + 0j)


# --------------------------------------------------------------- properties
FLOATS = st.floats(-10, 10, allow_nan=False)


@st.composite
def grids(draw, max_points=25):
    m = draw(st.integers(3, max_points))
    seed = draw(st.integers(0, 2**32 - 1))
    return jittered_grid(m, draw(st.floats(0.5, 5.0)), seed), seed


@settings(max_examples=40, deadline=None)
@given(grid=grids(), a=FLOATS, b=FLOATS)
def test_inner_product_is_bilinear_and_symmetric(grid, a, b):
    # Definition of an inner product (common practice); tolerances: a few
    # rounding steps relative to the terms' size |a| ||x|| ||y|| + |b| ||z|| ||y||.
    t, seed = grid
    x, y, z = np.random.default_rng(seed).normal(size=(3, t.size))
    for rule in ("trapezoid", "simpson"):
        ip = lambda f, g, rule=rule: hilbert.inner_product(f, g, grid=t, quadrature=rule)  # noqa: E731
        nx, ny, nz = (hilbert.norm(v, grid=t, quadrature=rule) for v in (x, y, z))
        size = (abs(a) * nx + abs(b) * nz + 1) * ny
        assert abs(ip(a * x + b * z, y) - (a * ip(x, y) + b * ip(z, y))) <= 1e-12 * size
        assert abs(ip(x, y) - ip(y, x)) <= 1e-14 * nx * ny
        # Cauchy-Schwarz holds for any positive weights (common practice)
        assert abs(ip(x, y)) <= nx * ny * (1 + 1e-12)


@settings(max_examples=40, deadline=None)
@given(grid=grids(), coef=st.lists(FLOATS, min_size=4, max_size=4))
def test_simpson_inner_products_of_lines_are_exact(grid, coef):
    # The product of two lines is a quadratic, which the uneven Simpson rule
    # integrates exactly (common practice); reference: scipy.integrate.quad.
    t, _ = grid
    p, q = np.poly1d(coef[:2]), np.poly1d(coef[2:])
    ref = quad(lambda s: p(s) * q(s), t[0], t[-1], epsabs=1e-13)[0]
    got = hilbert.inner_product(p(t), q(t), grid=t, quadrature="simpson")
    scale = quad(lambda s: abs(p(s) * q(s)), t[0], t[-1])[0] + 1e-12
    assert abs(got - ref) <= 1e-10 * scale  # rounding of sums of <= 25 terms
