import warnings

import numpy as np
import pytest

from skfunc._alpha import (
    AUTO,
    AlphaAtEdgeWarning,
    best_index,
    candidate_alphas,
    check_alpha,
    choose_alpha,
    gcv_criterion,
    reml_criterion,
)
from skfunc._bases import BSplineBasis, default_n_basis
from skfunc._grid import quadrature_weights
from skfunc._penalized import SplitPath, engine_alpha, penalty_for, power_of_two_scale


def _smoothing_problem(rng, m=60, n=1, K=12, noise=0.2, weights="mean"):
    t = np.sort(np.concatenate([[0.0, 1.0], rng.uniform(0, 1, m - 2)]))
    basis = BSplineBasis((0.0, 1.0), K)
    phi = basis.evaluate(t)
    w = np.full(m, 1 / m) if weights == "mean" else quadrature_weights(t)
    y = np.sin(6 * t) + noise * rng.normal(size=(n, m))
    pen = penalty_for(basis, 2)
    path = SplitPath((phi * w[:, None]).T @ phi, pen)
    rotated = path.rotate(y @ (phi * w[:, None]))
    return t, phi, w, y, pen, path, rotated, (y**2) @ w


# -- validation --------------------------------------------------------------


def test_check_alpha_forms():
    assert check_alpha("auto") is AUTO
    assert check_alpha(0) == 0.0
    assert check_alpha(np.float32(2.5)) == 2.5
    np.testing.assert_array_equal(check_alpha([3.0, 1.0]), [1.0, 3.0])
    for bad in (-1.0, np.inf, np.nan, "gcv", [], [1.0, 0.0], [[1.0]], [1.0, np.nan]):
        with pytest.raises(ValueError, match="'auto' .* a number >= 0, or a non-empty"):
            check_alpha(bad)
    with pytest.raises(TypeError, match="alpha must be"):
        check_alpha(True)
    with pytest.raises(TypeError, match="smooth_alpha must be"):
        check_alpha(object(), name="smooth_alpha")


# -- candidates --------------------------------------------------------------


def test_candidates_span_the_degrees_of_freedom(rng):
    # Reference: effective degrees of freedom as the trace of the explicit hat
    # matrix Phi (G + lam P)^{-1} Phi' W (Craven & Wahba 1979), numpy dense.
    t, phi, w, y, pen, path, _, _ = _smoothing_problem(rng)
    alphas = candidate_alphas(path)
    G = (phi * w[:, None]).T @ phi

    def edf(alpha):
        lam = engine_alpha(alpha, G, pen)
        return np.trace(phi @ np.linalg.solve(G + lam * pen.matrix, (phi * w[:, None]).T))

    assert np.all(np.diff(alphas) > 0) and alphas.size == 25
    assert np.isclose(edf(alphas[-1]), 2 + 0.05, atol=1e-6)  # null space + a little
    assert np.isclose(edf(alphas[0]), 12 - 0.05, atol=1e-6)  # nearly the full basis


def test_candidates_do_not_depend_on_units(rng):
    # t -> a + c t and y -> s y leave the unit-free candidates unchanged
    # (change of variables; see test_penalized for the fit itself).
    t = np.linspace(0, 1, 50)
    out = []
    for a, c, s in [(0, 1, 1), (100, 600, 1e-5)]:
        basis = BSplineBasis((a, a + c), 10)
        phi = basis.evaluate(a + c * t)
        path = SplitPath(s * s * phi.T @ phi, penalty_for(basis, 2))
        out.append(candidate_alphas(path))
    np.testing.assert_allclose(out[1], out[0], rtol=1e-8)


# -- the best-index policy ---------------------------------------------------


def test_best_index_policy():
    alphas = np.array([1.0, 2.0, 3.0, 4.0, 5.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        # interior minimum: no warning
        assert best_index([3.0, 1.0, 2.0, 4.0, 5.0], alphas) == 1
        # ties go to the larger alpha (smoother)
        assert best_index([3.0, 1.0, 1.0, 4.0, 5.0], alphas) == 2
        # non-finite scores are skipped
        assert best_index([np.nan, 2.0, np.inf, 1.0, 3.0], alphas) == 3
        # a flat criterion: the largest alpha, silently
        assert best_index(np.ones(5), alphas) == 4
    # candidates in any order: position of the best, the edge by value
    with pytest.warns(AlphaAtEdgeWarning, match="largest candidate alpha \\(5\\)"):
        assert best_index([3.0, 2.0, 0.5, 4.0], np.array([2.0, 1.0, 5.0, 3.0])) == 2
    with pytest.warns(AlphaAtEdgeWarning, match="smallest candidate alpha"):
        assert best_index([0.1, 1.0, 2.0, 3.0, 4.0], alphas) == 0
    with pytest.raises(ValueError, match="No candidate alpha has a finite GCV score"):
        best_index([np.nan, np.inf, np.nan, np.inf, np.nan], alphas)
    # one choice per row, with a count in the edge warning
    scores = np.array([[3.0, 1.0, 2.0, 4.0, 5.0], [5.0, 4.0, 3.0, 2.0, 1.0]])
    with pytest.warns(AlphaAtEdgeWarning, match="1 of 2 rows"):
        np.testing.assert_array_equal(best_index(scores, alphas), [1, 4])
    with pytest.raises(ValueError, match="row\\(s\\) \\[1\\]"):
        best_index(np.array([[1.0, 2.0], [np.nan, np.nan]]), alphas[:2])


# -- criteria against brute force -------------------------------------------


def test_gcv_path_against_dense_solves(rng):
    # Craven & Wahba (1979): GCV = n RSS / (n - tr H)^2 (here / n, unit weights
    # 1/m so RSS is a mean); reference: dense numpy solves per alpha.
    t, phi, w, y, pen, path, rotated, yy = _smoothing_problem(rng, n=3)
    alphas = np.logspace(-9, 0, 10)
    got = gcv_criterion(path, rotated, yy, t.size, alphas, total_weight=1.0)
    pooled = gcv_criterion(path, rotated, yy, t.size, alphas, total_weight=1.0, pooled=True)
    G = (phi * w[:, None]).T @ phi
    m = t.size
    for j, alpha in enumerate(alphas):
        lam = engine_alpha(alpha, G, pen)
        H = phi @ np.linalg.solve(G + lam * pen.matrix, (phi * w[:, None]).T)
        res = y - y @ H.T
        rss = (res**2).sum(axis=1)
        ref = m * rss / (m - np.trace(H)) ** 2
        np.testing.assert_allclose(got[:, j], ref, rtol=1e-7)
        ref_pooled = 3 * m * rss.sum() / (3 * m - 3 * np.trace(H)) ** 2
        assert np.isclose(pooled[j], ref_pooled, rtol=1e-7)


def _dense_reml(y, Xf, Zr, lam):
    """-2 restricted log-likelihood of y = Xf a + Zr u + e, u ~ N(0, s2/lam I),
    e ~ N(0, s2 I), s2 profiled (Harville 1974; Patterson & Thompson 1971):
    (n - r) log(2 pi s2_hat) + log|V| + log|Xf' V^-1 Xf| + (n - r)."""
    n, r = Xf.shape
    V = np.eye(n) + Zr @ Zr.T / lam
    Vi = np.linalg.inv(V)
    A = Xf.T @ Vi @ Xf
    beta = np.linalg.solve(A, Xf.T @ Vi @ y)
    e = y - Xf @ beta
    s2 = e @ Vi @ e / (n - r)
    return ((n - r) * np.log(2 * np.pi * s2) + np.linalg.slogdet(V)[1]
            + np.linalg.slogdet(A)[1] + (n - r))


def test_reml_against_dense_restricted_likelihood(rng):
    # Reference: the restricted likelihood of the mixed-model form computed
    # densely with numpy (n x n covariance), up to a constant in alpha.
    t, phi, w, y, pen, path, rotated, yy = _smoothing_problem(rng, m=40, K=10)
    y = y[0]
    alphas = np.logspace(-8, 1, 10)
    # unit weights: rescale the mean data term (a constant factor cancels in
    # REML only through lam, so build the path for unit weights here)
    path = SplitPath(phi.T @ phi, pen)
    got = reml_criterion(path, path.rotate(phi.T @ y), y @ y, t.size, alphas)
    T, r = pen.transform, pen.n_null
    lams = alphas * path.scale
    ref = np.array([_dense_reml(y, phi @ T[:, :r], phi @ T[:, r:], lam) for lam in lams])
    diff = got - ref
    np.testing.assert_allclose(diff, diff[0], atol=1e-8 * np.abs(ref).max())


def test_reml_against_statsmodels_mixedlm(rng):
    # Reference: statsmodels MixedLM's restricted log-likelihood (reml=True,
    # profiled over the scale) of the same mixed model: fixed effects on the
    # penalty's null space, one variance component for the whitened complement
    # (variance ratio 1 / lam). Equal up to a constant in alpha; the REML
    # estimate of the ratio is then the REML choice of alpha.
    import statsmodels.regression.mixed_linear_model as sm_mixed

    t, phi, w, y, pen, _, _, _ = _smoothing_problem(rng, m=60, K=12)
    y = y[0]
    path = SplitPath(phi.T @ phi, pen)
    T, r = pen.transform, pen.n_null
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the dict variance-component format is deprecated
        model = sm_mixed.MixedLM(y, phi @ T[:, :r], groups=np.zeros(t.size),
                                 exog_re=np.zeros((t.size, 1)),
                                 exog_vc={"u": {0: phi @ T[:, r:]}})
    model.cov_pen = model.fe_pen = None  # set by MixedLM.fit; loglike reads them
    lams = np.logspace(-4, 3, 8)
    ref = []
    for lam in lams:
        params = sm_mixed.MixedLMParams.from_components(
            fe_params=np.zeros(r), cov_re=np.eye(1), vcomp=np.array([1 / lam]))
        ref.append(-2 * model.loglike(params, profile_fe=True))
    got = reml_criterion(path, path.rotate(phi.T @ y), y @ y, t.size, lams / path.scale)
    diff = got - np.array(ref)
    np.testing.assert_allclose(diff, diff[0], atol=1e-7 * np.abs(ref).max())


def test_choose_alpha_fixed_and_candidates(rng):
    t, phi, w, y, pen, path, rotated, yy = _smoothing_problem(rng, n=2)
    fixed = choose_alpha(path, rotated, yy, t.size, 0.5)
    assert fixed["alpha"] == 0.5 and fixed["criterion"] is None
    given = choose_alpha(path, rotated, yy, t.size, [1e-6, 1e-5, 1e-4, 1e-3, 1e-2],
                         total_weight=1.0, pooled=True, warn=False)
    assert given["alpha"] in given["alphas"]
    per_row = choose_alpha(path, rotated, yy, t.size, criterion="reml", warn=False)
    assert per_row["alpha"].shape == (2,) and per_row["criterion"].shape == (2, 25)
    with pytest.raises(ValueError, match="criterion must be one of"):
        choose_alpha(path, rotated, yy, t.size, criterion="aic")


# -- the smoother's data term against scipy ----------------------------------


@pytest.mark.parametrize("basis", ["default", "40", "every point"])
@pytest.mark.slow
def test_gcv_with_mean_data_term_matches_scipy_smoothing_spline(scipy_smoothing, basis):
    # Reference: scipy.interpolate.make_smoothing_spline with lam=None (its GCV,
    # Craven & Wahba 1979) on an uneven grid (70 points on [0, 0.3], 30 on
    # [0.3, 1]) with the same noise at every point, 50 replications. The mean
    # squared error to the truth of the engine's GCV smoother with the data term
    # sum (x_j - f(t_j))^2 / m is within 1.10x of scipy's (the tolerance the
    # package targets). The trapezoid-weighted data term fails this (about 3-5x
    # on these grids; checked below), which is what the test guards against.
    t, truth, X, mse_ref = scipy_smoothing
    m = t.size
    if basis == "default":
        b = BSplineBasis((0.0, 1.0), default_n_basis("bspline", m))
    elif basis == "40":
        b = BSplineBasis((0.0, 1.0), 40)
    else:
        b = BSplineBasis((0.0, 1.0), knots=t[1:-1])
    phi = b.evaluate(t)

    def mse(w):
        path = SplitPath((phi * w[:, None]).T @ phi, penalty_for(b, 2))
        rotated = path.rotate(X @ (phi * w[:, None]))
        chosen = choose_alpha(path, rotated, (X**2) @ w, m, total_weight=w.sum(), warn=False)
        fit = path.coef(rotated, chosen["alpha"]) @ phi.T
        return ((fit - truth) ** 2).mean()

    assert mse(np.full(m, 1 / m)) <= 1.10 * mse_ref
    if basis != "default":
        assert mse(quadrature_weights(t)) > 1.5 * mse_ref


# -- scale-safe criteria -------------------------------------------------------


@pytest.mark.parametrize("criterion", ["gcv", "reml"])
def test_criteria_are_scale_safe(rng, criterion):
    # Scaling the data by a power of two before squaring (IEEE 754: exact)
    # makes 1e300 and 1e-300 data choose exactly the alpha of unit data, with
    # finite criteria throughout.
    t, phi, w, y, pen, path, _, _ = _smoothing_problem(rng, n=4)
    chosen = []
    for s in (1.0, 1e300, 1e-300):
        k = power_of_two_scale(y * s)
        ys = y * s / k
        rotated = path.rotate(ys @ (phi * w[:, None]))
        out = choose_alpha(path, rotated, (ys**2) @ w, t.size, criterion=criterion,
                           pooled=True, total_weight=1.0, warn=False)
        assert np.all(np.isfinite(out["criterion"]))
        chosen.append(out["alpha"])
    assert chosen[0] == chosen[1] == chosen[2]


@pytest.mark.parametrize("criterion", ["gcv", "reml"])
def test_automatic_choice_does_not_depend_on_units(criterion):
    # Change of variables t -> a + c t, X -> s X (calculus): the automatic
    # choice and the predictions are the same (relative 1e-8) for a
    # scalar-outcome ridge on [0, 1], on minutes 0..600 and on a grid in
    # seconds with the curves in other units.
    out = []
    for a, c, s in [(0.0, 1.0, 1.0), (0.0, 600.0, 1.0), (3600.0, 36000.0, 1e-6)]:
        rng = np.random.default_rng(5)
        u = np.linspace(0, 1, 81)
        grid = a + c * u
        X = s * rng.normal(size=(70, 6)) @ np.sin(np.outer(np.arange(1, 7), np.pi * u))
        y = (X / s) @ (np.gradient(u) * np.sin(np.pi * u)) + 0.1 * rng.normal(size=70)
        basis = BSplineBasis((grid[0], grid[-1]), 15)
        Z = (X * np.gradient(grid)) @ basis.evaluate(grid)
        Zc, yc = Z - Z.mean(axis=0), y - y.mean()
        path = SplitPath(Zc.T @ Zc, penalty_for(basis, 2))
        r = path.rotate(Zc.T @ yc)
        chosen = choose_alpha(path, r, yc @ yc, 70, criterion=criterion, extra_edf=1, warn=False)
        out.append((chosen["alpha"], Zc @ path.coef(r, chosen["alpha"])))
    for alpha, pred in out[1:]:
        assert np.isclose(alpha, out[0][0], rtol=1e-8)
        np.testing.assert_allclose(pred, out[0][1], rtol=1e-8, atol=1e-10 * np.abs(out[0][1]).max())


def test_gcv_low_edge_advice_names_reml():
    # A GCV choice at the smallest candidate suggests REML (which on few
    # curves against the basis does not pick a near-interpolating fit: see
    # test_linear_model.py); a REML choice there does not suggest itself.
    scores = np.array([1.0, 2.0, 3.0])  # best at the smallest alpha
    alphas = np.array([1e-6, 1e-3, 1.0])
    with pytest.warns(AlphaAtEdgeWarning, match="criterion='reml'"):
        best_index(scores, alphas, criterion="GCV")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        best_index(scores, alphas, criterion="REML")
    assert caught and all("criterion='reml'" not in str(w.message) for w in caught)


def test_reml_is_flat_when_every_candidate_fits_exactly():
    # y is linear in the two grid values and a 2-point grid leaves a
    # second-derivative penalty nothing to penalize: every alpha gives the
    # same exact fit, so REML (whose profiled likelihood is unbounded at a
    # zero residual) must not refuse; the tie policy then takes the largest
    # alpha (the same data as scikit-learn's check_sample_weights_shape)
    X = np.repeat([[1.0, 3.0], [2.0, 1.0], [3.0, 3.0], [4.0, 1.0]], 4, axis=0)
    y = 2.5 - 0.5 * X[:, 1]  # exact: numpy arithmetic, outside the package
    from skfunc.linear_model import FunctionalRidge

    model = FunctionalRidge(criterion="reml").fit(X, y)
    np.testing.assert_allclose(model.predict(X), y, atol=1e-12)
    assert model.alpha_ == np.max(model.alphas_path_)
    assert np.all(model.criterion_path_ == 0.0)
