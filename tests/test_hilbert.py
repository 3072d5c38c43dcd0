import numpy as np
import pytest
from scipy.optimize import minimize, minimize_scalar
from scipy.spatial.distance import cdist

from skfunc import hilbert


@pytest.fixture
def uneven(rng):
    return np.concatenate([[0.0], np.sort(rng.uniform(0, 2, 399)), [2.0]])


def test_inner_product_and_norm_exact(uneven):
    # Exact integrals on [0, 2]: int t * t^2 = 4, int sin^2(pi t) = 1.
    t = uneven
    assert np.isclose(hilbert.inner_product(t, t**2, grid=t), 4.0, rtol=1e-3)
    assert np.isclose(hilbert.norm(np.sin(np.pi * t), grid=t, quadrature="simpson"), 1.0, rtol=1e-4)
    X = np.stack([t, t**2])
    np.testing.assert_allclose(hilbert.inner_product(X, t, grid=t), [8 / 3, 4.0], rtol=1e-3)


def test_l2_distance_matches_pairwise_definition(rng, uneven):
    # Reference: scipy.spatial.distance.cdist on sqrt(w)-scaled values, which is the
    # quadrature definition of the L2 distance.
    t = uneven
    X, Y = rng.normal(size=(4, t.size)), rng.normal(size=(3, t.size))
    w = np.sqrt(np.diff(t, prepend=t[0]) / 2 + np.diff(t, append=t[-1]) / 2)
    np.testing.assert_allclose(hilbert.l2_distance(X, Y, grid=t), cdist(X * w, Y * w), rtol=1e-10)
    D = hilbert.l2_distance(X, grid=t)
    assert D.shape == (4, 4) and np.allclose(np.diag(D), 0, atol=1e-6)


def test_mean_value_is_best_constant(uneven):
    # Standard result: the constant c minimising ||y - c|| is int y / |T|; checked
    # against scipy.optimize.minimize_scalar of the quadrature norm.
    t = uneven
    y = np.exp(t) * np.cos(3 * t)
    best = minimize_scalar(
        lambda c: hilbert.norm(y - c, grid=t) ** 2, method="brent", options={"xtol": 1e-12}
    ).x
    # a line search resolves the minimiser of a quadratic to about sqrt(eps)
    assert np.isclose(hilbert.mean_value(y, grid=t), best, rtol=0, atol=1e-7)
    # int_0^2 t dt / 2 = 1
    assert np.isclose(hilbert.mean_value(t, grid=t), 1.0)


def test_simple_regression_matches_brute_force(uneven):
    # Standard result: b1 = <y~, x~>/<x~, x~>, b0 = ybar - b1 xbar; checked against
    # scipy.optimize.minimize of ||y - b0 - b1 x||^2 on an uneven grid.
    t = uneven
    x = np.sin(2 * t) + t
    y = 0.5 + 1.7 * x + np.cos(5 * t)
    b0, b1 = hilbert.simple_regression(x, y, grid=t)
    res = minimize(lambda b: hilbert.norm(y - b[0] - b[1] * x, grid=t) ** 2, [0.0, 0.0], tol=1e-12)
    np.testing.assert_allclose([b0, b1], res.x, rtol=1e-5)


def test_correlation_properties(rng, uneven):
    # Cauchy-Schwarz (common practice): |corr| <= 1, = 1 for affine relations.
    t = uneven
    x, y = np.sin(t), np.cos(3 * t)
    assert np.isclose(hilbert.correlation(x, 2 - 3 * x, grid=t), -1.0)
    r = hilbert.correlation(x, y, grid=t)
    assert -1 <= r <= 1
    # the slope of the L2 regression equals corr * ||y~|| / ||x~||
    b0, b1 = hilbert.simple_regression(x, y, grid=t)
    xc, yc = x - hilbert.mean_value(x, grid=t), y - hilbert.mean_value(y, grid=t)
    assert np.isclose(b1, r * hilbert.norm(yc, grid=t) / hilbert.norm(xc, grid=t))
    with pytest.raises(ValueError, match="constant"):
        hilbert.correlation(np.ones_like(t), y, grid=t)


def test_moment_functions_match_numpy(rng):
    # Reference: numpy.mean / numpy.var / numpy.cov pointwise.
    X = rng.normal(size=(30, 12))
    np.testing.assert_allclose(hilbert.mean_function(X), X.mean(axis=0))
    np.testing.assert_allclose(hilbert.variance_function(X), X.var(axis=0, ddof=1))
    np.testing.assert_allclose(hilbert.covariance_function(X), np.cov(X, rowvar=False))


def test_bad_input():
    with pytest.raises(ValueError, match="same grid"):
        hilbert.inner_product(np.ones(3), np.ones(4))
    with pytest.raises(ValueError, match="NaN"):
        hilbert.norm([0.0, np.nan, 1.0])
    with pytest.raises(ValueError, match="strictly increasing"):
        hilbert.norm(np.ones(3), grid=[0, 2, 1])
    with pytest.raises(ValueError, match="dim 3"):
        hilbert.norm(np.ones((2, 2, 2)))
