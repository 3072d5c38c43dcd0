import numpy as np
import pytest
from numpy.polynomial import legendre as npleg
from scipy.integrate import quad
from scipy.interpolate import BSpline

from skfunc._bases import BSplineBasis, FourierBasis, LegendreBasis, make_basis


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
