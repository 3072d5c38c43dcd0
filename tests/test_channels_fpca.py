"""Smoothed multivariate functional principal components (FunctionalPCA with
several channels and a roughness penalty): one channel equals the
single-channel fit, identical channels scale as Happ & Greven's definitions
imply, channel weights make the fit unit-free, the large-alpha limit is the
multivariate PCA of straight lines computed with numpy, and the components
are orthonormal in the weighted inner product (scipy quadrature)."""

import numpy as np
import pytest
from _channel_data import EXACT, T, U  # noqa: F401
from _channel_data import close as _close
from numpy.polynomial import Polynomial
from scipy.integrate import quad
from scipy.interpolate import BSpline

from skfunc import _channels
from skfunc.datasets import make_smooth_regression
from skfunc.decomposition import FunctionalPCA


def _noisy(n=80, seed=0):
    """Smooth random curves with noise on T (noise makes smoothing matter)."""
    X, _, _ = make_smooth_regression(n, grid=T, noise=0.0, random_state=seed)
    return X + np.random.default_rng(seed + 10).normal(0, 0.3, X.shape)


def _two_channels(n=80, seed=0):
    """Noisy curves on T and a second channel on U, partly related."""
    X = _noisy(n, seed)
    other, _, _ = make_smooth_regression(n, grid=np.linspace(0, 1, U.size),
                                         noise=0.0, random_state=seed + 5)
    second = 0.5 * X[:, ::-1][:, : U.size] + other
    second += np.random.default_rng(seed + 11).normal(0, 0.2, second.shape)
    return np.hstack([X, second])


# -------------------------------------------------- one channel = itself


@pytest.mark.parametrize("params", [
    {"basis": "bspline"},  # alpha="auto", by cross-validation over curves
    {"basis": "bspline", "n_basis": 15, "alpha": 1e-3},
    {"basis": "fourier", "n_basis": 11, "alpha": 1e-4, "penalty_order": 3},
    {"basis": "bspline", "n_components": None},  # CV summed over all k
], ids=lambda p: ",".join(f"{k}={v}" for k, v in p.items()))
def test_one_channel_equals_single_channel_fpca(params):
    # Identity of definitions: one channel with weight 1 is the single curve,
    # and its penalty on its own scale is the single-channel penalty.
    X = _noisy()
    params = {"n_components": 3, **params}
    single = FunctionalPCA(grid=T, **params).fit(X)
    one = FunctionalPCA(grid={"T": T}, channel_weights="equal", **params).fit(X)
    assert single.alpha_ > 0
    _close(one.alpha_, single.alpha_)
    _close(one.alphas_path_, single.alphas_path_)
    if single.criterion_path_ is not None:
        _close(one.criterion_path_, single.criterion_path_)
    for attr in ("components_", "explained_variance_", "explained_variance_ratio_",
                 "mean_", "components_basis_coef_", "edf_path_"):
        _close(getattr(one, attr), getattr(single, attr))
    _close(one.transform(X), single.transform(X))


def test_one_channel_with_inverse_variance_weight():
    # Happ & Greven (2018, sec. 2): weight v multiplies the covariance
    # operator by v and the weighted norm by v. The smoothed problem
    # max v Var<x, phi> s.t. v (||phi||^2 + alpha PEN(phi)) = 1 has the same
    # directions as v = 1, rescaled: psi = phi / sqrt(v), eigenvalues
    # v lambda, scores sqrt(v) xi; the cross-validated errors are v times
    # those of v = 1, so the same alpha is chosen.
    X = _noisy()
    single = FunctionalPCA(3, basis="bspline", grid=T).fit(X)
    one = FunctionalPCA(3, basis="bspline", grid={"T": T}).fit(X)
    v = one.channel_weights_[0]
    _close(one.alpha_, single.alpha_)
    _close(one.criterion_path_, v * single.criterion_path_)
    _close(one.explained_variance_, v * single.explained_variance_)
    _close(one.components_, single.components_ / np.sqrt(v))
    _close(one.transform(X), np.sqrt(v) * single.transform(X))


# ---------------------------------------------- identical channels, scaled


@pytest.mark.parametrize("p", [2, 3])
def test_identical_channels_scale_as_happ_greven(p):
    # Happ & Greven (2018, sec. 2): <<f, g>> = sum_c v_c <f_c, g_c>, here
    # with unit weights (channel_weights="equal"). For X = (X1, ..., X1),
    # p copies on one grid, Silverman's smoothed problem
    #   max Var <<x, psi>>  s.t.  sum_c (||psi_c||^2 + alpha PEN(psi_c)) = 1
    # is solved by psi = (phi, ..., phi) / sqrt(p) with phi the single-channel
    # solution (derivation: a difference between the psi_c adds norm and
    # penalty but no variance, so the optimum has equal parts; with equal
    # parts the constraint is p times the single one): eigenvalues
    # p lambda_k, components phi_k / sqrt(p) in every channel, scores
    # <<x - mu, psi_k>> = p <x1 - mu1, phi_k> / sqrt(p) = sqrt(p) xi_k. The
    # cross-validated errors are p times the single ones, so among the same
    # candidates the same alpha wins.
    X = _noisy()
    single = FunctionalPCA(3, basis="bspline", grid=T).fit(X)
    grid = {f"c{c}": T for c in range(p)}
    both = FunctionalPCA(3, basis="bspline", alpha=single.alphas_path_, grid=grid,
                         channel_weights="equal").fit(np.tile(X, p))
    _close(both.alpha_, single.alpha_)
    _close(both.criterion_path_, p * single.criterion_path_)
    _close(both.explained_variance_, p * single.explained_variance_)
    _close(both.explained_variance_ratio_, single.explained_variance_ratio_)
    _close(both.components_, np.tile(single.components_ / np.sqrt(p), p))
    _close(both.transform(np.tile(X, p)), np.sqrt(p) * single.transform(X))
    # at a fixed alpha too
    fixed = FunctionalPCA(3, basis="bspline", alpha=1e-2, grid=T).fit(X)
    multi = FunctionalPCA(3, basis="bspline", alpha=1e-2, grid=grid,
                          channel_weights="equal").fit(np.tile(X, p))
    _close(multi.explained_variance_, p * fixed.explained_variance_)
    _close(multi.components_, np.tile(fixed.components_ / np.sqrt(p), p))


# ------------------------------------------------------- units of a channel


def _fit(X, grid, **kwargs):
    return FunctionalPCA(3, basis="bspline", grid=grid, **kwargs).fit(X)


def test_inverse_variance_weights_make_smoothed_fpca_unit_free():
    # Happ & Greven (2018, sec. 3): with v_c = 1 / int Var x_c, a change of
    # units of channel c (values times a, or its time axis times b)
    # multiplies <f_c, g_c> by a^2 (or b) and v_c by the inverse, so the
    # weighted covariance and norm are unchanged; each channel's roughness
    # is measured against its own norm on its domain mapped to [0, 1], so the
    # penalty is unchanged too: the same alpha, scores and variances.
    X = _two_channels()
    grid = {"T": T, "O": U}
    ref = _fit(X, grid)
    assert 0 < ref.alpha_ and ref.criterion_path_ is not None
    values = X.copy()
    values[:, T.size:] *= 1e3  # oxygen in other units
    minutes = {"T": T, "O": 60 * U}  # oxygen's clock in minutes
    for data, g, factor in ((values, grid, 1e3), (X, minutes, 1.0)):
        fit = _fit(data, g)
        _close(fit.alpha_, ref.alpha_, 1e-9)
        # the cross-validated errors are in the weighted norm: unit-free too
        _close(fit.criterion_path_, ref.criterion_path_, 1e-9)
        _close(fit.transform(data), ref.transform(X), 1e-9)
        _close(fit.explained_variance_, ref.explained_variance_, 1e-9)
        _close(fit.components_[:, T.size:], factor * ref.components_[:, T.size:], 1e-9)
        _close(fit.components_[:, : T.size], ref.components_[:, : T.size], 1e-9)


def test_unit_free_fit_can_fail():
    # The check above can fail: equal weights follow one channel's units,
    # and one penalty scale shared by all channels (the single-channel rule
    # applied to the whole composite basis: the longest domain's) follows
    # one channel's clock.
    X = _two_channels()
    grid = {"T": T, "O": U}
    values = X.copy()
    values[:, T.size:] *= 1e3
    a = _fit(X, grid, channel_weights="equal", alpha=1e-3)
    b = _fit(values, grid, channel_weights="equal", alpha=1e-3)
    assert not np.allclose(b.explained_variance_ratio_, a.explained_variance_ratio_,
                           rtol=1e-2)
    ref = _fit(X, grid, alpha=1e-3)
    shared = pytest.MonkeyPatch()
    shared.setattr("skfunc._fpca.channel_penalty",
                   lambda basis, order, gram: _channels.penalty_for(basis, order))
    try:
        clock = _fit(X, {"T": T, "O": 60 * U}, alpha=1e-3)
    finally:
        shared.undo()
    gap = np.abs(np.abs(clock.transform(X)) - np.abs(ref.transform(X))).max()
    assert gap > 1e-3 * np.abs(ref.transform(X)).max()


# --------------------------------------------------- the large-alpha limit


def _cubics(n, domain, scales, rng):
    """n random cubic polynomials on ``domain`` (coefficients of the powers
    of ``(t - a) / L`` with the given standard deviations), as numpy
    Polynomials in t."""
    a, b = domain
    coef = rng.normal(size=(n, 4)) * scales
    unit = Polynomial([-a / (b - a), 1 / (b - a)])  # (t - a) / L
    return [sum(c * unit**j for j, c in enumerate(row)) for row in coef]


def _line_basis(domain):
    """An L2-orthonormal basis of straight lines on [a, b] (shifted Legendre
    polynomials P0, P1, normalised: common practice)."""
    a, b = domain
    L = b - a
    return [Polynomial([1 / np.sqrt(L)]),
            np.sqrt(3 / L) * Polynomial([-(a + b) / L, 2 / L])]


def test_large_alpha_limit_is_multivariate_pca_of_straight_lines():
    # As alpha grows, Silverman's smoothed components tend to the
    # components within the penalty's null space (Silverman, 1996; Ramsay &
    # Silverman, 2005, sec. 9.3): for penalty_order=2, straight lines in each
    # channel. Computed independently with numpy: each curve's L2 projection
    # on the lines of its channel (exact integrals of polynomials), the
    # coordinates times sqrt(v_c), and the eigendecomposition of their
    # covariance (Happ & Greven, 2018: the weighted inner product). Cubic
    # curves are exact in cubic B-splines, so the basis adds no error.
    rng = np.random.default_rng(3)
    n, weights = 60, {"T": 1.0, "O": 0.2}
    domains = {"T": (0.0, 1.0), "O": (0.0, 5.0)}
    curves = {"T": _cubics(n, domains["T"], [0.5, 1.0, 4.0, 3.0], rng),
              "O": _cubics(n, domains["O"], [0.5, 1.0, 3.0, 4.0], rng)}
    grids = {"T": T, "O": U}
    X = np.hstack([np.array([p(grids[c]) for p in curves[c]]) for c in grids])
    fpca = FunctionalPCA(3, basis="bspline", n_basis=8, alpha=1e9, grid=grids,
                         channel_weights=weights).fit(X)
    coords, lines, total = [], [], 0.0
    for c, (a, b) in domains.items():
        e = _line_basis((a, b))
        z = np.array([[(p * ek).integ()(b) - (p * ek).integ()(a) for ek in e]
                      for p in curves[c]])
        coords.append(np.sqrt(weights[c]) * z)
        lines.append(np.array([ek(grids[c]) for ek in e]) / np.sqrt(weights[c]))
        # int Var x_c: from the curves' deviations from their mean polynomial
        mean = sum(curves[c], Polynomial([0.0])) / n
        total += weights[c] * sum(
            ((p - mean) ** 2).integ()(b) - ((p - mean) ** 2).integ()(a)
            for p in curves[c]) / (n - 1)
    Z = np.hstack(coords)
    values, vectors = np.linalg.eigh(np.cov(Z, rowvar=False))
    values, vectors = values[::-1][:3], vectors[:, ::-1][:, :3]
    components = np.hstack([vectors[:2].T @ lines[0], vectors[2:].T @ lines[1]])
    signs = np.sign(np.sum(components * fpca.components_, axis=1))
    # the deviation from the limit falls as 1 / alpha: measured (components)
    # 6e-4 at alpha = 1, 6e-7 at 1e3, 6e-13 at 1e9 (rounding); 0.4 without
    # smoothing (alpha = 0). 1e-9 leaves room for rounding only.
    _close(fpca.explained_variance_, values, 1e-9)
    _close(fpca.components_, components * signs[:, None], 1e-9)
    _close(fpca.explained_variance_ratio_, values / total, 1e-9)


# ------------------------------------------ weighted L2 orthonormality


def _quad_gram(spline, g, inner):
    """int_a^b f_j f_k for the k functions of a vector-valued BSpline, by
    scipy.integrate.quad between the knots."""
    k = spline.c.shape[1]
    gram = np.zeros((k, k))
    for j in range(k):
        for i in range(j, k):
            def product(t, j=j, i=i):
                values = spline(t)
                return values[j] * values[i]
            gram[j, i] = gram[i, j] = quad(product, g[0], g[-1], points=inner,
                                           epsabs=1e-13, epsrel=1e-12)[0]
    return gram


def test_components_orthonormal_in_the_weighted_inner_product():
    # Happ & Greven (2018, sec. 2): the components are orthonormal in
    # <<f, g>> = sum_c v_c int f_c g_c. The components' B-spline
    # coefficients, rebuilt as scipy BSplines on the known knots (clamped
    # cubic, the interior knots given per channel), integrated with
    # scipy.integrate.quad between the knots.
    X = _two_channels()
    knots = {"T": [0.15, 0.3, 0.45, 0.6, 0.75, 0.9], "O": [1.0, 2.5, 4.0]}
    grid = {"T": T, "O": U}
    fpca = FunctionalPCA(4, basis="bspline", interior_knots=knots, grid=grid).fit(X)
    assert fpca.alpha_ > 0
    sizes = [len(knots["T"]) + 4, len(knots["O"]) + 4]
    assert fpca.components_basis_coef_.shape == (4, sum(sizes))
    coef = np.split(fpca.components_basis_coef_, [sizes[0]], axis=1)
    splines = []
    for c, (name, g) in enumerate(grid.items()):
        full = np.concatenate([[g[0]] * 4, knots[name], [g[-1]] * 4])
        spline = BSpline(full, coef[c].T, 3)
        # the coefficients are those of the fitted components on the grid
        part = fpca.components_[:, : T.size] if c == 0 else fpca.components_[:, T.size:]
        _close(spline(g).T, part)
        splines.append((spline, g, knots[name]))
    gram = sum(v * _quad_gram(*part) for v, part in zip(fpca.channel_weights_, splines))
    # quad on piecewise polynomials between knots: exact up to rounding
    np.testing.assert_allclose(gram, np.eye(4), atol=1e-9)
    # the unweighted L2 Gram matrix is not the identity (the check can fail)
    plain = sum(_quad_gram(*part) for part in splines)
    assert np.abs(plain - np.eye(4)).max() > 0.1


def test_partial_fit_with_smoothed_channels_equals_fit():
    # Fits are sums over rows (fold moments merged exactly, Chan et al., 1979)
    X = _two_channels()
    grid = {"T": T, "O": U}
    whole = _fit(X, grid)
    parts = FunctionalPCA(3, basis="bspline", grid=grid)
    for rows in (slice(0, 37), slice(37, None)):
        parts.partial_fit(X[rows])
    _close(parts.alpha_, whole.alpha_, 1e-9)
    _close(parts.transform(X), whole.transform(X), 1e-9)
