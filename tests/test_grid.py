import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import simpson, trapezoid

from skfunc._grid import (
    check_grid,
    grid_from_labels,
    grid_weights,
    quadrature_weights,
    resolve_grid,
)


def _uneven(rng, m, a=0.0, b=1.0):
    inner = np.sort(rng.uniform(a, b, m - 2))
    return np.concatenate([[a], inner, [b]])


@pytest.mark.parametrize("m", [2, 3, 4, 7, 50, 51])
@pytest.mark.parametrize("rule", ["trapezoid", "simpson"])
def test_weights_agree_with_scipy_on_uneven_grids(rng, m, rule):
    # Reference: scipy.integrate.trapezoid / scipy.integrate.simpson (scipy >= 1.11
    # handles an odd number of intervals with Cartwright's correction).
    t = _uneven(rng, m)
    y = rng.normal(size=(5, m))
    ref = trapezoid(y, x=t) if rule == "trapezoid" else simpson(y, x=t)
    # the same rule summed in another order: rounding only (sums of <= 51 terms)
    np.testing.assert_allclose(y @ quadrature_weights(t, rule), ref, rtol=1e-12, atol=1e-14)


@settings(max_examples=40, deadline=None)
@given(m=st.integers(3, 60), seed=st.integers(0, 10_000))
def test_simpson_matches_scipy_property(m, seed):
    # Reference: scipy.integrate.simpson on random uneven grids.
    rng = np.random.default_rng(seed)
    t = np.cumsum(rng.uniform(0.1, 1.0, m))
    y = rng.normal(size=m)
    # rounding only; spacing ratios up to 10 amplify it (the weights grow like
    # h1/h0), hence 1e-9 rather than 1e-12
    assert np.isclose(quadrature_weights(t, "simpson") @ y, simpson(y, x=t), rtol=1e-9, atol=1e-12)


def test_exactness_on_polynomials(rng):
    # Common practice: the trapezoid rule is exact for linear functions and the
    # uneven three-point Simpson rule for quadratics on any spacing; on an even
    # spacing Simpson is exact for cubics.
    for m in (41, 42):  # even and odd number of intervals
        t = _uneven(rng, m, 0.0, 2.0)
        assert np.isclose(quadrature_weights(t) @ (3 * t + 1), 3 * 2.0 + 2.0)
        assert np.isclose(quadrature_weights(t, "simpson") @ t**2, 8 / 3, rtol=1e-12)
    t = np.linspace(0.0, 2.0, 41)
    assert np.isclose(quadrature_weights(t, "simpson") @ t**3, 2.0**4 / 4, rtol=1e-12)


@pytest.mark.parametrize("m, rule, tol", [(201, "trapezoid", 1e-4), (201, "simpson", 1e-8)])
def test_trigonometric_integrals(m, rule, tol):
    # Exact integrals: int_0^pi sin = 2, int_0^{2 pi} cos^2 = pi. Tolerances from the
    # error bounds (Davis and Rabinowitz 1984, sec. 2.1-2.2), h = pi/200:
    # trapezoid (b - a) h^2/12 max|f''| = 6.5e-5 < 1e-4, Simpson (b - a) h^4/180
    # max|f''''| = 1.1e-9 < 1e-8. For cos^2 over whole periods both rules are exact
    # to rounding (periodic integrand, common practice), so 10 tol is loose there.
    t = np.linspace(0, np.pi, m)
    assert abs(quadrature_weights(t, rule) @ np.sin(t) - 2) < tol
    t2 = np.linspace(0, 2 * np.pi, m)
    assert abs(quadrature_weights(t2, rule) @ np.cos(t2) ** 2 - np.pi) < 10 * tol


@pytest.mark.parametrize(
    "grid, n_points, match",
    [
        ([0.0, 0.5, 0.5, 1.0], 4, "strictly increasing"),
        ([0.0, 0.7, 0.5, 1.0], 4, "strictly increasing"),
        ([0.0, np.nan, 0.5, 1.0], 4, "finite"),
        ([0.0, np.inf, 0.5, 1.0], 4, "finite"),
        ([[0.0, 1.0], [2.0, 3.0]], None, "1-D"),
        ([0.0, 0.5, 1.0], 4, "has 3 points but X has 4 columns"),
        ([0.0], None, "at least 2"),
    ],
)
def test_bad_grids(grid, n_points, match):
    with pytest.raises(ValueError, match=match):
        check_grid(grid, n_points)


def test_bad_quadrature_name():
    with pytest.raises(ValueError, match="quadrature must be one of"):
        quadrature_weights([0, 1, 2], "gauss")


def test_grid_from_labels():
    assert grid_from_labels(["a", "b"]) is None
    np.testing.assert_array_equal(grid_from_labels([0, 1.5, "3"]), [0, 1.5, 3])
    with pytest.raises(ValueError, match="mix numbers and words"):
        grid_from_labels([0, 1, "temp"])


def test_resolve_grid_sources():
    X = pd.DataFrame(np.zeros((2, 3)), columns=[10, 20, 40])
    np.testing.assert_array_equal(resolve_grid(None, X, 3), [10, 20, 40])
    np.testing.assert_array_equal(resolve_grid([1, 2, 3], X, 3), [1, 2, 3])
    np.testing.assert_array_equal(resolve_grid(None, np.zeros((2, 3)), 3), [0, 0.5, 1])
    with pytest.raises(ValueError, match="at least 2"):
        resolve_grid(None, np.zeros((2, 1)), 1)


def test_grid_weights_refuse_negative_simpson_weights():
    # On this uneven grid the composite Simpson weights include -1.02 (point 10):
    # the "integral" of a square could be negative, so the grid is refused for
    # Simpson and fine for the trapezoid rule.
    g = [0, .0276, .1442, .3118, .4092, .4233, .5118, .5496, .8277, .9486, .9505, 1]
    assert quadrature_weights(g, "simpson").min() < -1  # the raw rule (scipy's too)
    with pytest.raises(ValueError, match=r"negative weight \(-1.02 at grid point 10\)"):
        grid_weights(g, 12, "simpson")
    np.testing.assert_allclose(grid_weights(g, 12), trapezoid(np.eye(12), x=g))


def test_grid_weights_refuse_complex_grids():
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        grid_weights(np.linspace(0, 1, 4) + 1e-3j, 4)
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        grid_weights([0, 0.5j, 1], 3)


@settings(max_examples=60, deadline=None)
@given(m=st.integers(3, 40), seed=st.integers(0, 2**32 - 1))
def test_simpson_weights_positive_when_spacings_within_factor_two(m, seed):
    # The uneven Simpson end weight of a panel is s/6 (2 - h1/h0) (formula in
    # quadrature_weights, as scipy.integrate.simpson), non-negative exactly when
    # h1/h0 <= 2; grids whose neighbouring spacings differ by at most a factor 2 are
    # accepted, which the hilbert and metrics tests rely on for uneven Simpson grids.
    rng = np.random.default_rng(seed)
    ratios = np.exp(rng.uniform(-np.log(2), np.log(2), m - 2))
    t = np.concatenate([[0.0], np.cumsum(np.concatenate([[1.0], np.cumprod(ratios)]))])
    assert grid_weights(t, m, "simpson").min() >= 0
