import numpy as np
import pytest

from skfunc._bases import BSplineBasis
from skfunc._penalized import (
    NotIdentifiableError,
    PenalizedPath,
    centered,
    cross_products,
    gcv_score,
    merge,
)


@pytest.fixture
def problem(rng):
    n, K = 40, 10
    Z = rng.normal(size=(n, K))
    y = rng.normal(size=(n, 3))
    P = BSplineBasis((0, 1), K).penalty(2)
    return Z, y, P


def test_path_matches_direct_solves(problem):
    # Reference: numpy.linalg.solve of (G + alpha P) c = b and the explicit hat
    # matrix H = Z (G + alpha P)^{-1} Z' (Craven & Wahba, 1979: trace H = edf).
    Z, y, P = problem
    G, b = Z.T @ Z, (Z.T @ y).T
    path = PenalizedPath(G, P)
    alphas = np.array([1e-6, 1e-2, 1.0, 1e3])
    r = path.rotate(b)
    red = path.rss_reduction(r, alphas)
    for j, alpha in enumerate(alphas):
        c = np.linalg.solve(G + alpha * P, b.T)
        np.testing.assert_allclose(path.coef(r, alpha), c.T, rtol=1e-8, atol=1e-10)
        H = Z @ np.linalg.solve(G + alpha * P, Z.T)
        assert np.isclose(path.edf(alphas)[j], np.trace(H), rtol=1e-9)
        rss = ((y - H @ y) ** 2).sum(axis=0)
        np.testing.assert_allclose((y**2).sum(axis=0) - red[:, j], rss, rtol=1e-8)
    # one alpha per right-hand side
    per_row = path.coef(r, alphas[:3])
    for i in range(3):
        c = np.linalg.solve(G + alphas[i] * P, b[i])
        np.testing.assert_allclose(per_row[i], c, rtol=1e-8)
    np.testing.assert_allclose(path.operator(0.5), np.linalg.inv(G + 0.5 * P), rtol=1e-8)


def test_gcv_formula():
    # Craven & Wahba (1979): GCV = n RSS / (n - tr S)^2, here divided by n.
    assert np.isclose(gcv_score(2.0, 3.0, 10), (2.0 / 10) / (1 - 0.3) ** 2)
    assert np.isinf(gcv_score(2.0, 10.0, 10))


def test_not_identifiable(rng):
    Z = rng.normal(size=(5, 10))  # fewer rows than coefficients
    with pytest.raises(NotIdentifiableError, match="alpha > 0"):
        PenalizedPath(Z.T @ Z, None)
    P = BSplineBasis((0, 1), 10).penalty(2)
    path = PenalizedPath(Z.T @ Z, P)  # the penalty identifies the rest
    with pytest.raises(NotIdentifiableError, match="alpha > 0"):
        path.coef(path.rotate(np.ones((1, 10))), 0.0)


def test_statistics_are_sums(rng):
    # Reference: numpy weighted means and covariances (numpy.average, numpy.cov).
    Z, y, w = rng.normal(size=(30, 4)), rng.normal(size=(30, 2)), rng.uniform(0.5, 2, 30)
    whole = cross_products(Z, y, w)
    parts = merge(cross_products(Z[:11], y[:11], w[:11]), cross_products(Z[11:], y[11:], w[11:]))
    for key in whole:
        np.testing.assert_allclose(parts[key], whole[key], rtol=1e-12)
    zz, zy, yy, z_mean, y_mean = centered(whole)
    np.testing.assert_allclose(z_mean, np.average(Z, axis=0, weights=w))
    np.testing.assert_allclose(
        zz, np.cov(Z, rowvar=False, aweights=w, ddof=0) * w.sum(), rtol=1e-10
    )
    yc = y - y_mean
    np.testing.assert_allclose(yy, (w[:, None] * yc**2).sum(axis=0), rtol=1e-10)
    np.testing.assert_allclose(zy, (Z - z_mean).T @ (w[:, None] * yc), rtol=1e-10)


def test_huge_alpha_limit_is_least_squares_on_the_penalty_null_space(problem):
    # Common practice: as alpha -> inf, penalized least squares tends to least
    # squares restricted to the null space of P (here straight lines for a
    # second-derivative penalty). Reference: scipy.linalg.null_space and
    # numpy.linalg.lstsq. (Rounding limits the agreement to about
    # alpha / scale * 1e-16 relative: see DEVELOPERS.md, known numerical limits.)
    from scipy.linalg import null_space

    Z, y, P = problem
    N = null_space(P, rcond=1e-10)
    assert N.shape[1] == 2
    path = PenalizedPath(Z.T @ Z, P)
    c = path.coef(path.rotate((Z.T @ y).T), 1e9 * path.scale)
    ref = N @ np.linalg.lstsq(Z @ N, y, rcond=None)[0]
    np.testing.assert_allclose(Z @ c.T, Z @ ref, rtol=1e-5, atol=1e-7)
