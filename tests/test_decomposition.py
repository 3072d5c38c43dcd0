"""Tests of FunctionalPCA against outside references.

Sources are named beside each check: scikit-learn's PCA, numpy/scipy
routines, the Karhunen-Loeve expansion of Brownian motion, and the
generalized eigenproblem of Silverman (1996) / Ramsay and Silverman (2005).
"""

import warnings

import numpy as np
import pytest
import scipy.linalg
from conftest import trapezoid_weights
from scipy.integrate import trapezoid
from scipy.interpolate import BSpline
from sklearn.decomposition import PCA
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from skfunc._bases import make_basis
from skfunc._grid import quadrature_weights
from skfunc.decomposition import FunctionalPCA


def low_rank_curves(rng, n, t, rank=4, noise=0.0):
    """Curves with a known, decaying spectrum: mean + sum_j a_ij sqrt(2) sin(j pi t)."""
    j = np.arange(1, rank + 1)
    scores = rng.standard_normal((n, rank)) * (2.0 ** -j)
    funcs = np.sqrt(2) * np.sin(np.pi * np.outer(j, t))
    X = 3 + t + scores @ funcs
    return X + noise * rng.standard_normal(X.shape)


def align(a, b):
    """Flip rows of ``a`` to match the signs of ``b`` (eigenvectors have no sign)."""
    signs = np.sign(np.sum(a * b, axis=1))
    return a * signs[:, None]


# ---------------------------------------------------------------- references
@pytest.mark.parametrize("uneven", [False, True])
@pytest.mark.parametrize("solver", ["full", "covariance_eigh", "randomized"])
def test_matches_sklearn_pca_of_sqrt_w_scaled_data(rng, solver, uneven):
    # Source: scikit-learn's PCA. Functional PCA with quadrature weights w is
    # ordinary PCA of the curves scaled by sqrt(w) (Ramsay and Silverman,
    # 2005, sec. 8.4.2): the same eigenvalues, singular values and scores,
    # and components = PCA components / sqrt(w).
    t = np.linspace(0, 1, 41)
    if uneven:
        t = np.sort(np.concatenate([[0, 1], rng.uniform(0, 1, 39)]))
    X = low_rank_curves(rng, 300, t, rank=6, noise=1e-3)
    w = trapezoid_weights(t)
    fpca = FunctionalPCA(5, grid=t, svd_solver=solver, random_state=0).fit(X)
    pca = PCA(5, svd_solver="full").fit(X * np.sqrt(w))
    np.testing.assert_allclose(fpca.explained_variance_, pca.explained_variance_,
                               rtol=1e-8)
    np.testing.assert_allclose(fpca.singular_values_, pca.singular_values_, rtol=1e-8)
    np.testing.assert_allclose(fpca.explained_variance_ratio_,
                               pca.explained_variance_ratio_, rtol=1e-8)
    np.testing.assert_allclose(fpca.mean_, X.mean(axis=0), rtol=1e-12)
    np.testing.assert_allclose(
        fpca.components_, align(pca.components_ / np.sqrt(w), fpca.components_),
        atol=1e-6,
    )
    scores = fpca.transform(X)
    np.testing.assert_allclose(
        scores.T, align(pca.transform(X * np.sqrt(w)).T, scores.T), atol=1e-7
    )


def test_fraction_of_variance_matches_sklearn(rng):
    # Source: scikit-learn's PCA(n_components=<fraction>) picks the fewest
    # components explaining the fraction; the same on sqrt(w)-scaled data.
    t = np.linspace(0, 2, 31)
    X = low_rank_curves(rng, 200, t, rank=8, noise=1e-2)
    w = trapezoid_weights(t)
    for fraction in (0.5, 0.9, 0.99):
        fpca = FunctionalPCA(fraction, grid=t).fit(X)
        pca = PCA(fraction, svd_solver="full").fit(X * np.sqrt(w))
        assert fpca.n_components_ == pca.n_components_
        assert fpca.explained_variance_ratio_.sum() >= fraction
    assert FunctionalPCA(1.0, grid=t).fit(X).n_components_ == len(t)


@pytest.mark.parametrize(
    "shape, n_components",
    [((600, 50), 5), ((100, 50), 5), ((600, 520), 5), ((600, 520), 450),
     ((100, 600), None), ((100, 600), 0.5)],
)
@pytest.mark.slow
def test_auto_solver_choice_matches_sklearn(rng, shape, n_components):
    # Source: sklearn.decomposition.PCA's "auto" rule (its _fit_svd_solver
    # after fit); FunctionalPCA documents the same rule.
    pca = PCA(n_components, svd_solver="auto", random_state=0)
    pca.fit(rng.standard_normal(shape))
    fpca = FunctionalPCA(n_components)
    assert fpca._solver(*shape) == pca._fit_svd_solver


def test_brownian_motion_karhunen_loeve():
    # Source: Karhunen-Loeve expansion of standard Brownian motion on [0, 1]
    # (a standard result): eigenvalues 1 / ((k - 1/2)^2 pi^2), eigenfunctions
    # sqrt(2) sin((k - 1/2) pi t). With 20,000 paths an eigenvalue's relative
    # sampling error is about sqrt(2 / n) = 1%, so 3% is a 3-sigma bound.
    rng = np.random.default_rng(20260101)
    t = np.linspace(0, 1, 501)
    steps = rng.standard_normal((20_000, 500)) * np.sqrt(np.diff(t))
    paths = np.concatenate([np.zeros((20_000, 1)), np.cumsum(steps, axis=1)], axis=1)
    fpca = FunctionalPCA(3, grid=t).fit(paths)
    k = np.arange(1, 4)
    np.testing.assert_allclose(
        fpca.explained_variance_, 1 / ((k - 0.5) ** 2 * np.pi**2), rtol=0.03
    )
    truth = np.sqrt(2) * np.sin(np.outer(k - 0.5, np.pi * t))
    # eigenfunctions are determined up to sign
    diff = align(fpca.components_, truth) - truth
    l2 = np.sqrt(trapezoid(diff**2, t, axis=1))  # numpy/scipy trapezoid rule
    assert np.all(l2 < 0.05), l2


def test_scores_are_integrals_on_uneven_grid(rng):
    # Source: scipy.integrate.trapezoid. Scores are <x - mean, phi_k> and the
    # components are orthonormal in L2, both with the trapezoid rule.
    t = np.sort(rng.uniform(0, 3, 60))
    X = low_rank_curves(rng, 40, t / 3, rank=5, noise=0.05)
    fpca = FunctionalPCA(4, grid=t).fit(X)
    scores = fpca.transform(X)
    for k in range(4):
        expected = trapezoid((X - X.mean(axis=0)) * fpca.components_[k], t, axis=1)
        np.testing.assert_allclose(scores[:, k], expected, atol=1e-10)
        for j in range(4):
            inner = trapezoid(fpca.components_[k] * fpca.components_[j], t)
            assert abs(inner - (j == k)) < 1e-10


@pytest.mark.parametrize("n_samples, n_points", [(50, 20), (10, 30)])
def test_reconstruction_with_all_components(rng, n_samples, n_points):
    # Algebraic identity: with as many components as the data allow
    # (min(n_samples, n_points)), the expansion mean + sum_k score_k phi_k
    # reproduces every curve.
    X = rng.standard_normal((n_samples, n_points)).cumsum(axis=1)
    t = np.sort(rng.uniform(0, 1, n_points))
    for solver in ("full", "covariance_eigh"):
        fpca = FunctionalPCA(grid=t, svd_solver=solver).fit(X)
        assert fpca.n_components_ == min(n_samples, n_points)
        np.testing.assert_allclose(
            fpca.inverse_transform(fpca.transform(X)), X, atol=1e-10, rtol=0
        )


def test_reconstruction_in_basis_when_data_lie_in_it(rng):
    # Algebraic identity: curves in the span of 8 Legendre polynomials are
    # reproduced by all 8 components of the Legendre expansion.
    t = np.linspace(-1, 1, 50)
    coef = rng.standard_normal((30, 8))
    X = np.polynomial.legendre.legval(t, coef.T)  # numpy's Legendre series
    fpca = FunctionalPCA(8, basis="legendre", n_basis=8, grid=t).fit(X)
    np.testing.assert_allclose(
        fpca.inverse_transform(fpca.transform(X)), X, atol=1e-10, rtol=0
    )


# ------------------------------------------------------------- partial_fit
@pytest.mark.parametrize(
    "params",
    [
        {},
        {"svd_solver": "full"},
        {"basis": "bspline", "n_basis": 12},
        {"basis": "bspline", "n_basis": 12, "alpha": 1e-4},
        {"n_components": 0.95},
    ],
)
def test_partial_fit_equals_fit(rng, params):
    # "Fits are sums": chunk statistics merged exactly (Chan, Golub and
    # LeVeque, 1979) give the fit on the stacked data, here with curves that
    # the coordinates represent exactly (grid values, or splines in the basis).
    t = np.linspace(0, 10, 80)
    basis = make_basis("bspline", (0, 10), 12)
    coef = rng.standard_normal((500, 12)) * np.linspace(30, 1, 12)
    X = 1200 + coef @ basis.evaluate(t).T
    fitted = FunctionalPCA(grid=t, **{"n_components": 5, **params}).fit(X)
    streamed = FunctionalPCA(grid=t, **{"n_components": 5, **params})
    for chunk in np.array_split(X, [37, 150, 151, 300, 420]):
        streamed.partial_fit(chunk)
    assert streamed.n_samples_seen_ == 500
    assert streamed.n_components_ == fitted.n_components_
    # with a basis and alpha="auto" the folds of curves follow the row
    # positions across batches, so the choice is the same
    assert streamed.alpha_ == pytest.approx(fitted.alpha_, rel=1e-12)
    for name in ("mean_", "components_", "explained_variance_", "singular_values_",
                 "explained_variance_ratio_"):
        np.testing.assert_allclose(
            getattr(streamed, name), getattr(fitted, name), rtol=1e-8, atol=1e-8,
            err_msg=name,
        )


def test_partial_fit_continues_a_fit(rng):
    t = np.linspace(0, 1, 15)
    X = low_rank_curves(rng, 60, t, noise=0.1)
    both = FunctionalPCA(3, grid=t).fit(X[:30]).partial_fit(X[30:])
    whole = FunctionalPCA(3, grid=t).fit(X)
    np.testing.assert_allclose(both.components_, whole.components_, atol=1e-10)


# -------------------------------------------------------------- solvers
@pytest.mark.slow
def test_randomized_solver_honours_random_state(rng):
    t = np.linspace(0, 1, 300)
    X = low_rank_curves(rng, 400, t, rank=10, noise=1e-3)
    kw = {"grid": t, "svd_solver": "randomized", "iterated_power": 1,
          "n_oversamples": 2}
    a = FunctionalPCA(5, random_state=0, **kw).fit(X)
    b = FunctionalPCA(5, random_state=0, **kw).fit(X)
    c = FunctionalPCA(5, random_state=1, **kw).fit(X)
    np.testing.assert_array_equal(a.components_, b.components_)
    assert not np.array_equal(a.components_, c.components_)
    exact = FunctionalPCA(5, grid=t, svd_solver="full").fit(X)
    np.testing.assert_allclose(a.explained_variance_[:3], exact.explained_variance_[:3],
                               rtol=1e-3)


@pytest.mark.slow
def test_sign_convention_is_the_same_for_every_solver(rng):
    t = np.linspace(0, 1, 120)
    X = low_rank_curves(rng, 300, t, rank=5, noise=0.01)
    fits = [FunctionalPCA(4, grid=t, svd_solver=s, random_state=0).fit(X)
            for s in ("full", "covariance_eigh", "randomized")]
    for fpca in fits:
        peak = np.argmax(np.abs(fpca.components_), axis=1)
        assert np.all(fpca.components_[np.arange(4), peak] > 0)
        np.testing.assert_allclose(fpca.components_, fits[0].components_, atol=1e-6)
    flipped = FunctionalPCA(4, grid=t).fit(2 * X.mean(axis=0) - X)
    np.testing.assert_allclose(flipped.components_, fits[0].components_, atol=1e-8)


# ------------------------------------------------------ smoothed components
def spline_gram_and_penalty(basis, n_fine=20001):
    # Independent of skfunc's exact matrices: scipy BSpline values and second
    # derivatives, integrated by scipy's trapezoid rule on a fine grid.
    spline = BSpline(basis.knots, np.eye(basis.n_basis), basis.degree)
    s = np.linspace(*basis.domain, n_fine)
    v, d2 = spline(s), spline(s, nu=2)
    gram = trapezoid(v[:, :, None] * v[:, None, :], s, axis=0)
    penalty = trapezoid(d2[:, :, None] * d2[:, None, :], s, axis=0)
    return gram, penalty


def test_smoothed_leading_component_solves_silverman_eigenproblem(rng):
    # Source: Silverman (1996); Ramsay and Silverman (2005, sec. 9.4): the
    # leading smoothed component phi = Phi b maximises b'GSGb subject to
    # b'(G + alpha R)b = 1, the top eigenvector of that generalized problem
    # (solved here with scipy.linalg.eigh), rescaled to unit L2 norm.
    t = np.linspace(0, 1, 60)
    basis = make_basis("bspline", (0, 1), 15)
    coef = rng.standard_normal((80, 15)) * np.linspace(2, 0.2, 15)
    X = coef @ basis.evaluate(t).T
    alpha = 1e-5
    fpca = FunctionalPCA(3, basis="bspline", n_basis=15, alpha=alpha, grid=t).fit(X)
    gram, penalty = spline_gram_and_penalty(basis)
    S = np.cov(coef, rowvar=False)
    _, vecs = scipy.linalg.eigh(gram @ S @ gram, gram + alpha * penalty)
    b = vecs[:, -1] / np.sqrt(vecs[:, -1] @ gram @ vecs[:, -1])
    b *= np.sign(b @ fpca.components_basis_coef_[0])
    np.testing.assert_allclose(fpca.components_basis_coef_[0], b, atol=1e-5)
    # orthonormal in L2 after the final Gram-Schmidt step
    np.testing.assert_allclose(
        fpca.components_basis_coef_ @ gram @ fpca.components_basis_coef_.T, np.eye(3), atol=1e-6
    )


def test_smoothing_reduces_roughness_and_error(rng):
    # Silverman (1996): the penalty trades variance for smoothness. Noisy
    # curves around a smooth leading mode: a smoothed first component is
    # less rough and closer to the true mode than the unsmoothed one.
    t = np.linspace(0, 1, 101)
    truth = np.sqrt(2) * np.sin(np.pi * t)
    X = rng.standard_normal((25, 1)) * truth + 0.7 * rng.standard_normal((25, 101))
    kw = {"basis": "bspline", "n_basis": 30, "grid": t, "n_components": 1}
    rough = []
    errors = []
    for alpha in (0.0, 1e-6, 1e-4):
        phi = FunctionalPCA(alpha=alpha, **kw).fit(X).components_[0]
        rough.append(trapezoid(np.gradient(np.gradient(phi, t), t) ** 2, t))
        diff = align(phi[None], truth[None])[0] - truth
        errors.append(np.sqrt(trapezoid(diff**2, t)))
    assert rough[0] > rough[1] > rough[2]
    assert errors[2] < errors[0]


def test_tiny_alpha_approaches_unsmoothed_components(rng):
    t = np.linspace(0, 1, 50)
    X = low_rank_curves(rng, 100, t, rank=4, noise=0.01)
    kw = {"basis": "bspline", "n_basis": 10, "grid": t, "n_components": 3}
    plain = FunctionalPCA(alpha=0, **kw).fit(X)
    smooth = FunctionalPCA(alpha=1e-14, **kw).fit(X)
    np.testing.assert_allclose(smooth.components_, plain.components_, atol=1e-6)
    np.testing.assert_allclose(smooth.explained_variance_, plain.explained_variance_,
                               rtol=1e-6)


# ------------------------------------------------ alpha chosen from the data
def spline_curves(rng, n, domain=(0.0, 1.0), n_basis=10, noise=0.0):
    """Curves exactly in a cubic B-spline basis (coefficients ``coef``)."""
    basis = make_basis("bspline", domain, n_basis)
    coef = rng.standard_normal((n, n_basis)) * np.linspace(2, 0.2, n_basis)
    return basis, coef + noise * rng.standard_normal(coef.shape)


def brute_force_cv(X, coef, gram, alphas, n_components, **kw):
    """Cross-validation over curves through the public API: for each fold
    (row i in fold i mod 10) refit at a fixed alpha on the other rows,
    reconstruct the fold's curves and add their squared L2 errors,
    integrated exactly with ``gram`` (the curves lie in the basis, with
    coefficients ``coef``, so the reconstruction is exact apart from the
    components)."""
    folds = np.arange(X.shape[0]) % 10
    expected = np.zeros(len(alphas))
    for j, alpha in enumerate(alphas):
        for f in range(10):
            est = FunctionalPCA(alpha=alpha, n_components=n_components, **kw)
            est.fit(X[folds != f])
            held = coef[folds == f] - est.mean_basis_coef_
            scores = held @ gram @ est.components_basis_coef_.T
            # None: every number of components up to the rank of the
            # training covariance (n_train - 1 when fewer curves than basis
            # functions; the refit keeps one more, of variance zero)
            rank = min(est.n_components_, int(np.sum(folds != f)) - 1)
            for k in [n_components] if n_components else range(1, rank + 1):
                resid = held - scores[:, :k] @ est.components_basis_coef_[:k]
                expected[j] += np.einsum("ia,ab,ib->", resid, gram, resid)
    return expected


@pytest.mark.parametrize("n_curves, n_components", [(33, 2), (33, None), (11, None)])
def test_cross_validation_equals_brute_force_refits(rng, n_curves, n_components):
    # Source: the definition of cross-validation over curves (Rice and
    # Silverman, 1991; Ramsay and Silverman, 2005, sec. 9.3.3), computed by
    # brute force (brute_force_cv) with the Gram matrix of scipy B-splines
    # (spline_gram_and_penalty). A criterion that centred held-out curves
    # at their own mean, forgot the fold offset, or used the smoothing of
    # the full data would differ. With 11 curves and 10 basis functions the
    # folds' training covariances have rank 8 (the fold of two curves) or 9,
    # so the number of components summed over differs between folds.
    t = np.linspace(0, 10, 60)
    basis, coef = spline_curves(rng, n_curves, (0, 10), 10, noise=0.3)
    X = coef @ basis.evaluate(t).T
    alphas = np.array([1e-6, 1e-4, 1e-3])
    kw = {"basis": "bspline", "n_basis": 10, "grid": t}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # a choice at an end is not checked here
        fitted = FunctionalPCA(alpha=alphas, n_components=n_components, **kw).fit(X)
        gram, _ = spline_gram_and_penalty(basis)
        expected = brute_force_cv(X, coef, gram, alphas, n_components, **kw)
    # 1e-6: the Gram matrix by the trapezoid rule on 20,001 points (error
    # ~1e-8 relative) against skfunc's exact one, through the eigenvectors
    np.testing.assert_allclose(fitted.criterion_path_, expected, rtol=1e-6)
    np.testing.assert_array_equal(fitted.alphas_path_, alphas)
    assert fitted.alpha_ == alphas[np.argmin(expected)]


def test_cross_validation_with_channels_equals_brute_force_refits(rng):
    # Source: as above, for two channels on their own domains (Happ and
    # Greven, 2018: the weighted inner product sum_c v_c <f_c, g_c>), with
    # fixed channel weights v so every refit uses the same inner product;
    # the L2 error of a fold is then integrated with diag(v_1 G_1, v_2 G_2)
    # of scipy B-splines. A criterion that ignored the weights in the
    # held-out error or penalized the channels on one scale would differ.
    t, s = np.linspace(0, 10, 60), np.linspace(0, 2, 35)
    basis_t, coef_t = spline_curves(rng, 33, (0, 10), 10, noise=0.3)
    basis_s, coef_s = spline_curves(rng, 33, (0, 2), 10, noise=0.3)
    X = np.hstack([coef_t @ basis_t.evaluate(t).T, coef_s @ basis_s.evaluate(s).T])
    weights = {"a": 0.7, "b": 2.0}
    alphas = np.array([1e-6, 1e-4, 1e-3])
    kw = {"basis": "bspline", "n_basis": 10, "grid": {"a": t, "b": s},
          "channel_weights": weights}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fitted = FunctionalPCA(alpha=alphas, n_components=2, **kw).fit(X)
        gram = scipy.linalg.block_diag(
            weights["a"] * spline_gram_and_penalty(basis_t)[0],
            weights["b"] * spline_gram_and_penalty(basis_s)[0])
        expected = brute_force_cv(X, np.hstack([coef_t, coef_s]), gram, alphas, 2,
                                  **kw)
    np.testing.assert_allclose(fitted.criterion_path_, expected, rtol=1e-6)
    assert fitted.alpha_ == alphas[np.argmin(expected)]


@pytest.mark.parametrize("alpha", [1e12, 1e20])
def test_large_alpha_gives_principal_components_among_straight_lines(rng, alpha):
    # Source: the limit of Silverman's constraint ||phi||^2 + alpha ||D^2
    # phi||^2 = 1 as alpha grows: phi is confined to the penalty's null space,
    # the straight lines, where the components are the eigenvectors of the
    # 2 x 2 covariance of <x, e_1>, <x, e_2> for an L2-orthonormal basis
    # e_1 = 1 / sqrt(L), e_2 = sqrt(12 / L^3) (t - mid) of the lines (closed
    # form), computed here with numpy. A null space penalized by the rounding
    # of the roughness matrix (eigenvalues of order 1e-12 times its largest)
    # drifts away from the lines at 1e20.
    t = np.linspace(0, 10, 80)
    basis, coef = spline_curves(rng, 50, (0, 10), 12)
    X = coef @ basis.evaluate(t).T
    fine = np.linspace(0, 10, 20001)
    values = BSpline(basis.knots, coef.T, basis.degree)(fine)  # (20001, n)
    lines = np.stack([np.full_like(fine, 1 / np.sqrt(10)),
                      np.sqrt(12 / 10**3) * (fine - 5)])
    inner = trapezoid(values[None] * lines[:, :, None], fine, axis=1).T  # (n, 2)
    _, vecs = np.linalg.eigh(np.cov(inner, rowvar=False))
    expected = vecs[:, ::-1].T @ lines  # leading first, on the fine grid
    fpca = FunctionalPCA(2, basis="bspline", n_basis=12, alpha=alpha, grid=t).fit(X)
    got = BSpline(basis.knots, fpca.components_basis_coef_.T, basis.degree)(fine).T
    np.testing.assert_allclose(align(got, expected), expected, atol=1e-7)


def test_automatic_alpha_smooths_noisy_components(rng):
    # Silverman (1996): noisy curves (white noise of sd 0.7 on 101 points
    # around two smooth modes) give rough unsmoothed components; the
    # cross-validated alpha lands inside the candidates and brings both
    # estimated components closer to the true ones in L2 (measured: errors
    # 0.013 and 0.016 against 0.024 and 0.040 unsmoothed at n = 100). A
    # criterion that ignored held-out curves (in-sample error) would choose
    # the smallest alpha and warn.
    t = np.linspace(0, 1, 101)
    truth = np.stack([np.sqrt(2) * np.sin(np.pi * t), np.sqrt(2) * np.sin(2 * np.pi * t)])
    X = rng.standard_normal((100, 2)) * [2, 1] @ truth + 0.7 * rng.standard_normal((100, 101))
    kw = {"basis": "bspline", "n_basis": 30, "grid": t, "n_components": 2}
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no AlphaAtEdgeWarning
        smooth = FunctionalPCA(**kw).fit(X)
    plain = FunctionalPCA(alpha=0, **kw).fit(X)

    def errors(fpca):
        diff = align(fpca.components_, truth) - truth
        return np.sqrt(trapezoid(diff**2, t, axis=1))

    assert smooth.alphas_path_[0] < smooth.alpha_ < smooth.alphas_path_[-1]
    assert np.all(errors(smooth) < errors(plain)), (errors(smooth), errors(plain))
    # the edf path runs from the basis size down to the null space (2 lines)
    assert 29 < smooth.edf_path_[0] < 30 and 2 < smooth.edf_path_[-1] < 2.1


# ------------------------------------------------------------ interface
def test_dataframe_grid_feature_names_and_pipeline(rng):
    pd = pytest.importorskip("pandas")
    minutes = np.arange(0, 600, 10.0)
    X = pd.DataFrame(low_rank_curves(rng, 30, minutes / 600), columns=minutes)
    fpca = FunctionalPCA(2).fit(X)
    np.testing.assert_array_equal(fpca.grid_, minutes)
    np.testing.assert_allclose(fpca.quadrature_weights_, quadrature_weights(minutes))
    assert list(fpca.get_feature_names_out()) == ["functionalpca0", "functionalpca1"]
    out = make_pipeline(FunctionalPCA(2), StandardScaler()).set_output(
        transform="pandas").fit_transform(X)
    assert list(out.columns) == ["functionalpca0", "functionalpca1"]


# ------------------------------------------------------------ bad input
def test_bad_input_messages(rng):
    t = np.linspace(0, 1, 10)
    X = low_rank_curves(rng, 8, t, noise=0.1)
    with pytest.raises(ValueError, match=r"n_components=9 exceeds .* min\(8, 10\)"):
        FunctionalPCA(9).fit(X)
    with pytest.raises(ValueError, match=r"n_components=7 .* basis functions"):
        FunctionalPCA(7, basis="legendre", n_basis=6).fit(X)
    for bad in (1.5, 0.0, -0.2):
        with pytest.raises(ValueError, match="n_components"):
            FunctionalPCA(bad).fit(X)
    with pytest.raises(ValueError, match="1 sample"):
        FunctionalPCA().fit(X[:1])
    with pytest.raises(ValueError, match="zero variance"):
        FunctionalPCA().fit(np.tile(X[0], (5, 1)))
    Xnan = X.copy()
    Xnan[2, 3] = np.nan
    nan_message = r"NaN \(first at row 2, column 3\).*CurveSmoother"
    with pytest.raises(ValueError, match=nan_message):
        FunctionalPCA().fit(Xnan)
    streamed = FunctionalPCA(2).partial_fit(X)
    with pytest.raises(ValueError, match="same grid"):
        streamed.partial_fit(X[:, :-1])
    with pytest.raises(ValueError, match="randomized"):
        FunctionalPCA(0.5, svd_solver="randomized").fit(X)
    with pytest.raises(ValueError, match="alpha > 0"):
        FunctionalPCA(2, basis="bspline", alpha=1.0, svd_solver="randomized").fit(X)
    with pytest.raises(ValueError, match="'auto' with a basis"):
        FunctionalPCA(2, basis="bspline", svd_solver="full").fit(X)
    for alpha in (1e-3, [1e-3, 1e-2]):  # a penalty needs a basis
        with pytest.raises(ValueError, match=r"alpha=.*describe\(s\) a basis"):
            FunctionalPCA(2, alpha=alpha).fit(X)
    with pytest.raises(ValueError, match="at least 3 curves"):
        FunctionalPCA(1, basis="bspline", n_basis=5).fit(X[:2])
    with pytest.raises(ValueError, match="alpha must be 'auto'"):
        FunctionalPCA(2, basis="bspline", alpha=[1e-3, -1.0]).fit(X)
    randomized = FunctionalPCA(2, svd_solver="randomized", random_state=0).fit(X)
    with pytest.raises(ValueError, match="cannot continue"):
        randomized.partial_fit(X)
    uneven = np.array([0.0, 1.0, 1.2, 1.4, 1.6])  # Simpson weight at 1.2 < 0
    with pytest.raises(ValueError, match="positive weights"):
        FunctionalPCA(quadrature="simpson", grid=uneven).fit(X[:, :5])
    with pytest.raises(ValueError, match="n_components_"):
        FunctionalPCA(2).fit(X).inverse_transform(np.zeros((1, 3)))


def test_blockwise_statistics_merged_in_a_tree_equal_fit(rng):
    # The contract a distributed fit relies on: _statistics per block,
    # merge_moments in any order, then _solve, as in fit (numpy stacking is
    # the reference).
    from skfunc._moments import merge_moments
    from skfunc._validation import validate_curves

    t = np.linspace(0, 1, 30)
    X = low_rank_curves(rng, 200, t, noise=0.05)
    est = FunctionalPCA(3, basis="fourier", n_basis=9, alpha=1e-6, grid=t)
    validate_curves(est, X[:2], reset=True)
    blocks = [est._statistics(b) for b in np.array_split(X, 4)]
    est._solve(merge_moments(merge_moments(*blocks[2:]), merge_moments(*blocks[:2])))
    fitted = FunctionalPCA(3, basis="fourier", n_basis=9, alpha=1e-6, grid=t).fit(X)
    np.testing.assert_allclose(est.components_, fitted.components_, atol=1e-10)
    np.testing.assert_allclose(est.transform(X), fitted.transform(X), atol=1e-10)


def test_inverse_transform_checks_the_number_of_scores():
    X = np.random.default_rng(0).normal(size=(20, 30))
    fpca = FunctionalPCA(n_components=3).fit(X)
    with pytest.raises(ValueError, match=r"Expected 3 scores per row \(n_components_\); got 4"):
        fpca.inverse_transform(np.ones((2, 4)))
