import numpy as np
import pandas as pd
import pytest
from numpy.polynomial import Legendre
from numpy.polynomial import legendre as npleg
from sklearn.linear_model import Ridge
from sklearn.model_selection import GridSearchCV
from sklearn.pipeline import make_pipeline

from skfunc.datasets import make_smooth_regression
from skfunc.preprocessing import BasisFeatures


def smooth_curves(t, n=6, seed=0):
    """Smooth random curves at t, the same functions at any sampling of t's domain."""
    return make_smooth_regression(n, grid=t, random_state=seed)[0]


def test_euclidean_distance_equals_exact_l2_distance_legendre(rng):
    # Reference: numpy.polynomial.Legendre. The fitted functions are rebuilt from a
    # weighted least-squares fit done with numpy.linalg.lstsq on the Legendre
    # Vandermonde matrix, and the L2 distance is integrated exactly (.integ()).
    t = np.concatenate([[-1.0], np.sort(rng.uniform(-1, 3, 148)), [3.0]])
    X = smooth_curves(t, n=2)
    K = 7
    Z = BasisFeatures(basis="legendre", n_basis=K, grid=t, alpha=0,
                      data_term="integral").fit_transform(X)
    from skfunc._grid import quadrature_weights

    w = quadrature_weights(t)
    V = npleg.legvander(2 * (t + 1) / 4 - 1, K - 1) * np.sqrt(w)[:, None]
    c = [np.linalg.lstsq(V, x * np.sqrt(w), rcond=None)[0] for x in X]
    diff = Legendre(c[0] - c[1], domain=[-1, 3])
    sq = (diff * diff).integ(lbnd=-1)
    exact = np.sqrt(sq(3.0))
    assert abs(np.linalg.norm(Z[0] - Z[1]) - exact) < 1e-10


def test_square_wave_fourier_coefficients():
    # Standard Fourier series: sign(sin 2 pi t) = sum_{k odd} 4/(pi k) sin(2 pi k t);
    # in the orthonormal basis sqrt(2) sin(2 pi k t) the coordinate is 4/(pi k)/sqrt(2).
    t = np.linspace(0, 1, 20001)
    x = np.sign(np.sin(2 * np.pi * t))
    # the grid closes the cycle: period 1, unpenalized projection
    est = BasisFeatures(basis="fourier", n_basis=11, grid=t, period=1.0, alpha=0)
    Z = est.fit_transform(x[None, :])[0]
    names = list(est.get_feature_names_out())
    for k in range(1, 6):
        expected = 4 / (np.pi * k) / np.sqrt(2) if k % 2 else 0.0
        assert abs(Z[names.index(f"sin{k}")] - expected) < 1e-3
        assert abs(Z[names.index(f"cos{k}")]) < 1e-3
    assert abs(Z[0]) < 1e-3


def test_penalized_projection_matches_augmented_least_squares(rng):
    # Reference: numpy.linalg.lstsq on the augmented system [sqrt(W) Phi; sqrt(alpha) R]
    # with P = R'R, the textbook form of penalized least squares (common practice),
    # on a grid of length 2 from 3 to 5, with the unit-free alpha converted by the
    # smoother's definition: objective (1 / sum w) ||x - f||_W^2 + alpha int_0^1
    # (f'')^2 du, so lam = alpha * sum(w) * L^(2q - 1) = alpha * 2 * 2^3.
    t = 3 + 2 * np.sort(rng.uniform(0, 1, 60))
    t[0], t[-1] = 3.0, 5.0
    X = smooth_curves(t, n=3) + rng.normal(scale=0.1, size=(3, t.size))
    est = BasisFeatures(n_basis=12, alpha=1e-4, grid=t, data_term="integral").fit(X)
    from skfunc._bases import BSplineBasis
    from skfunc._grid import quadrature_weights

    basis = BSplineBasis((3.0, 5.0), 12)
    phi = basis.evaluate(t)
    sw = np.sqrt(quadrature_weights(t))
    alpha = 1e-4 * 2.0 * 2.0**3
    s, v = np.linalg.eigh(basis.penalty(2))
    R = (v * np.sqrt(np.clip(s, 0, None))).T
    A = np.vstack([phi * sw[:, None], np.sqrt(alpha) * R])
    for x, xhat in zip(X, est.inverse_transform(est.transform(X))):
        c = np.linalg.lstsq(A, np.concatenate([x * sw, np.zeros(12)]), rcond=None)[0]
        np.testing.assert_allclose(xhat, phi @ c, rtol=1e-8, atol=1e-10)


def test_interpolation_reproduces_curves(rng):
    # With as many basis functions as points, least squares interpolates.
    t = np.linspace(0, 1, 8)
    X = rng.normal(size=(5, 8))
    for basis in ("bspline", "legendre"):
        est = BasisFeatures(basis=basis, n_basis=8, alpha=0).fit(X)
        np.testing.assert_allclose(est.inverse_transform(est.transform(X)), X, atol=1e-8)
    assert est.grid_.tolist() == t.tolist()


def test_chunked_transform_equals_single_product(rng, monkeypatch):
    X = rng.normal(size=(1000, 40))
    est = BasisFeatures(n_basis=10).fit(X)
    full = X @ est.projection_.T
    import skfunc._blocks as base

    monkeypatch.setattr(base, "CHUNK_VALUES", 40 * 7)  # 7 rows per chunk
    # equal up to rounding relative to the largest coordinate (BLAS may sum
    # a 7-row block in another order than the whole; unit roundoff 1.1e-16
    # times 40 terms, IEEE 754 and common practice): an entry near zero is
    # not held to 1e-12 of itself
    np.testing.assert_allclose(est.transform(X), full, rtol=0,
                               atol=1e-12 * np.abs(full).max())
    # float32 rows give float32 coordinates, computed in float32 chunk by
    # chunk: within float32's promise (1e-5 of the largest coordinate; 2^-24
    # unit roundoff times sqrt(40) terms is about 4e-7, IEEE 754 and common
    # practice) of the float64 product of the same values
    X32 = X.astype(np.float32)
    got = est.transform(X32)
    assert got.dtype == np.float32
    exact = X32.astype(np.float64) @ est.projection_.T
    np.testing.assert_allclose(got, exact, rtol=0, atol=1e-5 * np.abs(exact).max())


def test_dataframe_grid_and_pandas_output():
    minutes = np.arange(0, 600, 5)
    X = pd.DataFrame(smooth_curves(minutes / 600, n=4), columns=minutes)
    est = BasisFeatures(n_basis=8).set_output(transform="pandas").fit(X)
    np.testing.assert_array_equal(est.grid_, minutes)
    out = est.transform(X)
    assert isinstance(out, pd.DataFrame)
    assert list(out.columns) == [f"bspline{k}" for k in range(8)]
    shifted = X.rename(columns=lambda c: c + 1)
    with pytest.raises(ValueError, match="differs from the one"):
        est.transform(shifted)
    with pytest.raises(ValueError, match="mix numbers and words"):
        BasisFeatures().fit(X.rename(columns={0: "start"}))


def test_in_pipeline_under_grid_search(rng):
    t = np.linspace(0, 1, 101)
    X = smooth_curves(t, n=80, seed=1)
    y = X @ (np.cos(np.pi * t) / t.size) + rng.normal(scale=0.01, size=80)
    pipe = make_pipeline(BasisFeatures(grid=t), Ridge())
    search = GridSearchCV(
        pipe, {"basisfeatures__n_basis": [6, 10], "ridge__alpha": [1e-3, 1.0]}, cv=3
    )
    search.fit(X, y)
    assert search.best_score_ > 0.9


@pytest.mark.parametrize(
    "params, X, match",
    [
        ({"grid": [0, 1, 1, 2]}, np.ones((3, 4)), "strictly increasing"),
        ({"grid": [0, 1, 2]}, np.ones((3, 4)), "has 3 points but X has 4 columns"),
        ({}, np.array([[0.0, np.nan, 1.0, 2.0]]), "NaN"),
        ({}, np.array([[0.0, np.inf, 1.0, 2.0]]), "infinity"),
        ({}, np.ones(4), "2D array"),
        ({}, np.ones((2, 2, 2)), "dim 3"),
        ({}, np.ones((3, 1)), "at least 2 grid points"),
        ({"n_basis": 5, "alpha": 0}, np.ones((3, 4)), "n_basis=5 exceeds the 4 grid points"),
        ({"n_basis": 4, "degree": 4}, np.ones((3, 10)), "n_basis >= 5"),
        ({"degree": -1}, np.ones((3, 10)), "'degree' parameter"),
        ({"alpha": -1.0}, np.ones((3, 10)), "'alpha' parameter"),
        ({"basis": "wavelet"}, np.ones((3, 10)), "'basis' parameter"),
        ({"quadrature": "gauss"}, np.ones((3, 10)), "'quadrature' parameter"),
        ({}, np.ones((0, 10)), "0 sample"),
    ],
)
def test_bad_input(params, X, match):
    with pytest.raises((ValueError, TypeError), match=match):
        BasisFeatures(**params).fit(X)


def test_transform_with_other_number_of_points():
    est = BasisFeatures().fit(np.ones((3, 10)))
    with pytest.raises(ValueError, match="X has 9 features, but BasisFeatures is expecting 10"):
        est.transform(np.ones((3, 9)))
    # the default basis on 10 points: 4 + 10 // 4 = 6 B-splines
    with pytest.raises(ValueError, match="Expected 6 coordinates per row"):
        est.inverse_transform(np.ones((3, 4)))
