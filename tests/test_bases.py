import warnings

import numpy as np
import pytest
from numpy.polynomial import legendre as npleg
from numpy.polynomial.legendre import legvander
from scipy.integrate import quad
from scipy.interpolate import BSpline

from skfunc._bases import (
    BSplineBasis,
    FourierBasis,
    IllConditionedFitWarning,
    LegendreBasis,
    check_unpenalized_fit,
    default_n_basis,
    default_period,
    make_basis,
)


@pytest.mark.parametrize(
    "degree, derivative", [(d, q) for d in (0, 1, 2, 3, 5) for q in (0, 1, 2) if q <= d]
)
def test_bspline_values_match_scipy(degree, derivative):
    # Reference: scipy.interpolate.BSpline with unit coefficient vectors.
    basis = BSplineBasis((1.0, 4.0), n_basis=degree + 6, degree=degree)
    t = np.linspace(1.0, 4.0, 97)[:-1]  # scipy's closed right end needs extrapolate
    ref = BSpline(basis.knots, np.eye(basis.n_basis), degree)(t, nu=derivative)
    np.testing.assert_allclose(basis.evaluate(t, derivative), ref, atol=1e-12)


def test_bspline_partition_of_unity_and_user_knots():
    # de Boor, A Practical Guide to Splines: B-splines on a clamped knot vector
    # sum to one everywhere on the domain, including both ends.
    basis = BSplineBasis((0.0, 10.0), degree=3, knots=[1.0, 2.5, 7.0])
    assert basis.n_basis == 7
    t = np.linspace(0, 10, 301)
    np.testing.assert_allclose(basis.evaluate(t).sum(axis=1), 1.0, atol=1e-13)
    np.testing.assert_allclose(basis.evaluate(t, 1).sum(axis=1), 0.0, atol=1e-11)


@pytest.mark.parametrize("order", [0, 1, 2, 3])
def test_bspline_gram_and_penalty_against_adaptive_quadrature(order):
    # Reference: scipy.integrate.quad of the products of derivatives, span by span.
    basis = BSplineBasis((0.0, 2.0), degree=3, knots=[0.3, 0.9, 1.7])
    mat = basis.penalty(order)
    breaks = np.unique(basis.knots)
    for i, j in [(0, 0), (1, 2), (3, 3), (2, 5), (6, 6)]:

        def f(x, i=i, j=j):
            v = basis.evaluate(np.atleast_1d(x), order)[0]
            return v[i] * v[j]

        ref = sum(quad(f, a, b, epsabs=1e-13)[0] for a, b in zip(breaks[:-1], breaks[1:]))
        assert np.isclose(mat[i, j], ref, rtol=1e-9, atol=1e-11)


def test_legendre_orthogonality_and_values():
    # Abramowitz & Stegun 22.2.10: int_{-1}^{1} P_m P_n = 2/(2n+1) delta_mn;
    # values against numpy.polynomial.legendre.
    basis = LegendreBasis((-1.0, 1.0), 8)
    np.testing.assert_allclose(basis.gram(), np.diag(2 / (2 * np.arange(8) + 1)), atol=1e-14)
    s = np.linspace(-1, 1, 33)
    np.testing.assert_allclose(basis.evaluate(s), npleg.legvander(s, 7), atol=1e-13)
    d2 = np.stack([npleg.legval(s, npleg.legder(np.eye(8)[k], 2)) for k in range(8)], axis=1)
    np.testing.assert_allclose(basis.evaluate(s, 2), d2, atol=1e-10)


def test_legendre_shifted_penalty_against_quad():
    # Reference: scipy.integrate.quad of the shifted polynomials' second derivatives.
    basis = LegendreBasis((2.0, 5.0), 6)
    P = basis.penalty(2)
    for i, j in [(2, 2), (3, 5), (5, 5), (4, 2)]:
        ref = quad(lambda x, i=i, j=j: np.prod(basis.evaluate([x], 2)[0][[i, j]]), 2, 5)[0]
        assert np.isclose(P[i, j], ref, rtol=1e-10, atol=1e-10)


def test_fourier_orthonormal_and_derivatives():
    # Standard Fourier series facts: the trigonometric system scaled by sqrt(2/L)
    # is orthonormal; D sin(wt) = w cos(wt).
    L = 3.0
    basis = FourierBasis((1.0, 1.0 + L), 7)
    np.testing.assert_allclose(basis.gram(), np.eye(7))
    t = np.linspace(1.0, 4.0, 50)
    w1 = 2 * np.pi / L
    np.testing.assert_allclose(
        basis.evaluate(t)[:, 1], np.sqrt(2 / L) * np.sin(w1 * (t - 1)), atol=1e-13
    )
    np.testing.assert_allclose(
        basis.evaluate(t, 1)[:, 1], np.sqrt(2 / L) * w1 * np.cos(w1 * (t - 1)), atol=1e-12
    )
    np.testing.assert_allclose(
        basis.evaluate(t, 2)[:, 4],
        -np.sqrt(2 / L) * (2 * w1) ** 2 * np.cos(2 * w1 * (t - 1)),
        atol=1e-10,
    )
    np.testing.assert_allclose(np.diag(basis.penalty(2))[3:5], (2 * w1) ** 4)
    assert basis.feature_names()[:4] == ["const", "sin1", "cos1", "sin2"]


def test_errors():
    with pytest.raises(ValueError, match="n_basis >= 4"):
        BSplineBasis((0, 1), n_basis=3, degree=3)
    with pytest.raises(ValueError, match="basis must be one of"):
        make_basis("wavelet", (0, 1), 4)
    with pytest.raises(ValueError, match="strictly inside"):
        BSplineBasis((0, 1), degree=3, knots=[0.5, 1.2])
    with pytest.raises(ValueError, match="domain"):
        BSplineBasis((0, 1), n_basis=6).evaluate([1.5])
    with pytest.raises(ValueError, match="exceeds the smoothness"):
        BSplineBasis((0, 1), n_basis=6, degree=2).penalty(3)


# -- exact null spaces, unit-domain matrices, defaults ----------------------



@pytest.mark.parametrize(
    "basis",
    [
        BSplineBasis((2.0, 7.0), 12),
        BSplineBasis((0.0, 1.0), degree=3, knots=[0.01, 0.1, 0.15, 0.7]),
        BSplineBasis((-3.0, 3.0), 9, degree=5),
        LegendreBasis((2.0, 5.0), 8),
    ],
    ids=["bspline", "bspline-uneven", "bspline-quintic", "legendre"],
)
@pytest.mark.parametrize("order", [1, 2, 3])
def test_null_space_is_exactly_the_polynomials(basis, order):
    # Common practice: the null space of int (D^q f)^2 is the polynomials of
    # degree < q. Reference: numpy.polynomial.legendre.legvander of the shifted
    # Legendre polynomials on the domain; the coefficients reproduce them to
    # rounding, and the roughness matrix annihilates them.
    N = basis.null_space(order)
    assert N.shape == (basis.n_basis, order)
    a, b = basis.domain
    t = np.linspace(a, b, 257)
    ref = legvander(2 * (t - a) / (b - a) - 1, order - 1)
    np.testing.assert_allclose(basis.evaluate(t) @ N, ref, atol=1e-12)
    P = basis.roughness(order)
    assert np.abs(P @ N).max() <= 1e-12 * np.abs(P).max()


def test_fourier_null_space_is_the_constant():
    # Common practice: D^q of a trigonometric polynomial vanishes only for the constant.
    basis = FourierBasis((1.0, 12.0), 7, period=12.0)
    N = basis.null_space(2)
    assert N.shape == (7, 1)
    np.testing.assert_allclose(basis.evaluate(np.linspace(1, 12, 30)) @ N, 1.0, atol=1e-13)


def test_single_piece_rule():
    # A single polynomial piece of degree p < q has D^q f = 0 (calculus): zero
    # roughness and the whole basis as null space, not an error.
    basis = BSplineBasis((0.0, 1.0), n_basis=3, degree=2)
    np.testing.assert_array_equal(basis.roughness(3), np.zeros((3, 3)))
    np.testing.assert_array_equal(basis.null_space(3), np.eye(3))
    with pytest.raises(ValueError, match="exceeds the smoothness"):
        BSplineBasis((0.0, 1.0), n_basis=6, degree=2).null_space(3)
    assert BSplineBasis((0, 1), 6).null_space(0).shape == (6, 0)


@pytest.mark.parametrize("name", ["bspline", "legendre", "fourier"])
def test_unit_domain_matrices_do_not_depend_on_unit_or_origin(name):
    # Change of variables u = (t - a) / L (calculus): int (D_t^q f)^2 dt =
    # L^(1 - 2q) int_0^1 (D_u^q f)^2 du and int f^2 dt = L int_0^1 f^2 du. The
    # same functions on [0, 1] and on [-40, 560] give the same unit matrices.
    unit = make_basis(name, (0.0, 1.0), 9)
    moved = make_basis(name, (-40.0, 560.0), 9)
    # Fourier coefficients scale by sqrt(L) (orthonormal functions), splines and
    # Legendre polynomials not at all
    c = 1 / 600 if name == "fourier" else 1.0
    ref = c * unit.unit_roughness(2)
    np.testing.assert_allclose(moved.unit_roughness(2), ref, rtol=1e-9,
                               atol=1e-12 * np.abs(ref).max())
    np.testing.assert_allclose(moved.unit_gram(), c * unit.unit_gram(), rtol=1e-9, atol=1e-14)
    # and the rule against quad on the original domain (scipy.integrate.quad)
    ref = quad(lambda x: moved.evaluate([x], 2)[0][3] ** 2, -40, 560, limit=200)[0]
    assert np.isclose(moved.roughness(2)[3, 3], ref, rtol=1e-8)


def test_fourier_period_gram_and_penalty_against_quad():
    # Reference: scipy.integrate.quad of the products on a domain shorter than
    # the period (the functions are no longer orthogonal there).
    basis = FourierBasis((1.0, 12.0), 7, period=12.0)
    G, P = basis.gram(), basis.penalty(2)
    for i, j in [(0, 0), (1, 1), (1, 2), (3, 6), (6, 6)]:
        g = quad(lambda x, i=i, j=j: np.prod(basis.evaluate([x])[0][[i, j]]), 1, 12)[0]
        p = quad(lambda x, i=i, j=j: np.prod(basis.evaluate([x], 2)[0][[i, j]]), 1, 12)[0]
        assert np.isclose(G[i, j], g, rtol=1e-10, atol=1e-12)
        assert np.isclose(P[i, j], p, rtol=1e-10, atol=1e-10)
    assert abs(G[1, 2]) > 1e-3  # not orthogonal: the quadrature branch is exercised
    # ends are no longer forced equal: sin(2 pi (12 - 1) / 12) != sin(0)
    values = basis.evaluate([1.0, 12.0])
    assert abs(values[0, 1] - values[1, 1]) > 0.1
    with pytest.raises(ValueError, match="period must be"):
        FourierBasis((0.0, 2.0), 5, period=1.0)


def test_default_period_for_monthly_values():
    # Twelve monthly values at 1..12 are one cycle of period 12 (common practice).
    assert default_period(np.arange(1.0, 13.0)) == 12.0
    assert np.isclose(default_period(np.linspace(0, 1, 11)), 1.1)


def test_default_n_basis_rule():
    # Ruppert (2002), from memory: min(n / 4, 35) interior knots; cubic B-splines
    # add degree + 1 = 4.
    assert default_n_basis("bspline", 12) == 4 + 3
    assert default_n_basis("bspline", 601) == 4 + 35
    assert default_n_basis("bspline", 3) == 3  # single piece, degree lowered by the caller
    assert default_n_basis("fourier", 12) % 2 == 1
    assert default_n_basis("fourier", 12) <= 11
    assert default_n_basis("legendre", 601) == 12
    with pytest.raises(ValueError, match="basis must be one of"):
        default_n_basis("wavelet", 10)


def test_unpenalized_near_interpolation_warns(rng):
    # Twelve uneven points and twelve cubic B-splines interpolate; the condition
    # number (reference: numpy.linalg.cond of the whitened cross products) is
    # large and a warning says what to do. The default basis on the same grid
    # is well conditioned and silent.
    t = np.sort(np.concatenate([[0.0, 1.0], rng.uniform(0, 1, 10)]))
    w = np.full(t.size, 1 / t.size)
    full = BSplineBasis((0.0, 1.0), 12)
    phi = full.evaluate(t)
    G, M = (phi * w[:, None]).T @ phi, full.gram()
    L = np.linalg.cholesky(M)
    ref = np.linalg.cond(np.linalg.solve(L, np.linalg.solve(L, G).T))
    with pytest.warns(IllConditionedFitWarning, match="n_basis"):
        cond = check_unpenalized_fit(G, M)
    assert np.isclose(cond, ref, rtol=1e-4)
    small = BSplineBasis((0.0, 1.0), default_n_basis("bspline", t.size))
    phi = small.evaluate(t)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        check_unpenalized_fit((phi * w[:, None]).T @ phi, small.gram())
