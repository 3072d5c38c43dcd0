"""Basis sizes per channel: ``n_basis`` and ``interior_knots`` given as a
mapping ``{channel: value}``. One channel equals the single-channel
estimator; fits with channels of different basis sizes equal independent
numpy / scipy / statsmodels computations on B-spline designs built with
scipy; bad mappings are errors that name the channel."""

import numpy as np
import pytest
import statsmodels.api as sm
from _channel_data import EXACT, T, U, two_channels  # noqa: F401
from _channel_data import close as _close
from _channel_data import curves as _curves
from scipy.integrate import trapezoid
from scipy.interpolate import BSpline
from scipy.linalg import block_diag, eigh
from sklearn.base import clone

from skfunc.decomposition import FunctionalPCA
from skfunc.linear_model import (
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
)
from skfunc.preprocessing import BasisFeatures, CurveSmoother

GRID = {"T": T, "O": U}
#: mixed sizes: a rich basis for the first channel, a small one for the second
SIZES = {"T": 9, "O": 6}
KNOTS = [0.2, 0.35, 0.5, 0.8]

def _two_channels(n=80, seed=0):
    return two_channels(n, seed, second_noise=0.05)


# ------------------------------------------------ independent references


def _knots(grid, n_basis, degree=3):
    """Clamped knots with evenly spaced interior knots (common practice; the
    placement BSplineBasis documents)."""
    a, b = grid[0], grid[-1]
    inner = np.linspace(a, b, n_basis - degree + 1)[1:-1]
    return np.concatenate([[a] * (degree + 1), inner, [b] * (degree + 1)])


def _design(grid, n_basis):
    """B-spline values (m, K) by scipy."""
    return BSpline.design_matrix(grid, _knots(grid, n_basis), 3).toarray()


def _gram(grid, n_basis):
    """Exact B-spline Gram matrix: Gauss-Legendre with 4 nodes on each knot
    interval (exact for the degree-6 products; numpy's leggauss)."""
    knots = _knots(grid, n_basis)
    nodes, weights = np.polynomial.legendre.leggauss(4)
    breaks = np.unique(knots)
    gram = np.zeros((n_basis, n_basis))
    for a, b in zip(breaks[:-1], breaks[1:]):
        t = (a + b) / 2 + (b - a) / 2 * nodes
        phi = BSpline.design_matrix(t, knots, 3).toarray()
        gram += (phi * (weights * (b - a) / 2)[:, None]).T @ phi
    return gram


def _trapezoid_weights(grid):
    """Quadrature weights of scipy's trapezoid rule (common practice)."""
    return trapezoid(np.eye(grid.size), grid, axis=1)


def _channel_parts(X):
    return X[:, : T.size], X[:, T.size:]


# -------------------------------------------------- one channel = itself


ONE_CHANNEL = [
    (BasisFeatures(alpha=0.0), "transform"),
    (CurveSmoother(), "transform"),
    (FunctionalPCA(3, basis="bspline", channel_weights="equal"), "transform"),
    (FunctionalRidge(), "predict"),
    (FunctionalRidgeCV(cv=4), "predict"),
    (FunctionalLogisticRegression(), "decision_function"),
]


@pytest.mark.parametrize("spelling", ["n_basis", "interior_knots"])
@pytest.mark.parametrize(("estimator", "method"), ONE_CHANNEL,
                         ids=lambda p: type(p).__name__ if not isinstance(p, str) else p)
def test_one_channel_mapping_equals_the_single_value(estimator, method, spelling):
    # Identity of definitions: {"T": value} for the one channel "T" is value.
    X, y = _curves()
    if isinstance(estimator, FunctionalLogisticRegression):
        y = (y > np.median(y)).astype(int)
    value = 9 if spelling == "n_basis" else KNOTS
    fit_y = None if method == "transform" else y
    single = clone(estimator).set_params(grid=T, **{spelling: value}).fit(X, fit_y)
    multi = clone(estimator).set_params(grid={"T": T}, **{spelling: {"T": value}})
    multi.fit(X, fit_y)
    # Newton stops at a tolerance (see tests/test_channels.py for the 1e-3)
    tol = 1e-3 if isinstance(estimator, FunctionalLogisticRegression) else EXACT
    _close(getattr(multi, method)(X), getattr(single, method)(X), tol)
    size = 9 if spelling == "n_basis" else len(KNOTS) + 4
    if hasattr(single, "n_basis_"):
        assert single.n_basis_ == multi.n_basis_ == size
    if hasattr(single, "components_basis_coef_"):
        assert multi.components_basis_coef_.shape[1] == size


# ------------------------------------------------ mixed sizes vs numpy


def test_ridge_with_mixed_sizes_equals_least_squares():
    # y = b0 + sum_c int x_c beta_c, beta_c = Phi_c theta_c, unpenalized
    # (alpha = 0): ordinary least squares on the integrated design
    # [X_c diag(w_c) Phi_c]_c (trapezoid weights w_c; common practice),
    # solved with numpy.
    X, y = _two_channels()
    model = FunctionalRidge(0.0, n_basis=SIZES, grid=GRID).fit(X, y)
    phis = [_design(T, SIZES["T"]), _design(U, SIZES["O"])]
    ws = [_trapezoid_weights(T), _trapezoid_weights(U)]
    Z = np.hstack([x @ (w[:, None] * p) for x, w, p in zip(_channel_parts(X), ws, phis)])
    theta, *_ = np.linalg.lstsq(np.column_stack([np.ones(len(y)), Z]), y, rcond=None)
    beta = np.concatenate([phis[0] @ theta[1 : 1 + SIZES["T"]],
                           phis[1] @ theta[1 + SIZES["T"]:]])
    assert model.n_basis_ == SIZES["T"] + SIZES["O"]
    _close(model.coef_function_, beta)
    _close(model.predict(X), np.column_stack([np.ones(len(y)), Z]) @ theta, 1e-10)


def test_logistic_with_mixed_sizes_equals_statsmodels():
    # Plain maximum likelihood (alpha = 0) on the integrated design of the
    # ridge test: statsmodels' Logit on the design built with numpy/scipy.
    X, y = _two_channels(150)
    # labels drawn from a logistic model in y, so that the classes overlap
    # (separable classes have no finite maximum likelihood)
    rng = np.random.default_rng(8)
    labels = (rng.random(len(y)) < 1 / (1 + np.exp(-(y - np.median(y)) / y.std()))
              ).astype(int)
    sizes = {"T": 5, "O": 4}
    clf = FunctionalLogisticRegression(0.0, n_basis=sizes, grid=GRID).fit(X, labels)
    phis = [_design(T, sizes["T"]), _design(U, sizes["O"])]
    ws = [_trapezoid_weights(T), _trapezoid_weights(U)]
    Z = np.hstack([x @ (w[:, None] * p) for x, w, p in zip(_channel_parts(X), ws, phis)])
    design = np.column_stack([np.ones(len(y)), Z])
    ref = sm.Logit(labels, design).fit(disp=0, method="newton", tol=1e-12, maxiter=100)
    # both are Newton's method run to convergence on the same likelihood
    # (quadratic near the optimum): measured 6e-14 apart; 1e-8 leaves room
    # for the optimum's conditioning on other machines
    _close(clf.decision_function(X), design @ ref.params, 1e-8)


def test_fpca_with_mixed_sizes_equals_the_generalized_eigenproblem():
    # Multivariate components of basis expansions (Happ & Greven, 2018;
    # Ramsay & Silverman, 2005, sec. 8.4.2 for one channel): with the
    # curves' least-squares coefficients c, fitted with trapezoid weights
    # (FunctionalPCA's documented fit of a curve), covariance S, and the weighted
    # Gram matrix K = blockdiag(v_c G_c), the components a solve
    # K S K a = mu K a with a' K a = 1 (scipy.linalg.eigh), mu the
    # variances.
    X, _ = _two_channels()
    weights = {"T": 1.0, "O": 0.5}
    fpca = FunctionalPCA(3, basis="bspline", n_basis=SIZES, alpha=0.0, grid=GRID,
                         channel_weights=weights).fit(X)
    phis = [_design(T, SIZES["T"]), _design(U, SIZES["O"])]
    roots = [np.sqrt(_trapezoid_weights(T)), np.sqrt(_trapezoid_weights(U))]
    coef = np.hstack([np.linalg.lstsq(p * r[:, None], (x * r).T, rcond=None)[0].T
                      for p, r, x in zip(phis, roots, _channel_parts(X))])
    K = block_diag(weights["T"] * _gram(T, SIZES["T"]), weights["O"] * _gram(U, SIZES["O"]))
    S = np.cov(coef, rowvar=False)
    mu, a = eigh(K @ S @ K, K)
    mu, a = mu[::-1][:3], a[:, ::-1][:, :3]
    values = np.hstack([a[: SIZES["T"]].T @ phis[0].T, a[SIZES["T"]:].T @ phis[1].T])
    signs = np.sign(np.sum(values * fpca.components_, axis=1))
    assert fpca.components_basis_coef_.shape == (3, SIZES["T"] + SIZES["O"])
    _close(fpca.explained_variance_, mu, 1e-9)
    _close(fpca.components_, values * signs[:, None], 1e-8)
    _close(fpca.components_basis_coef_, a.T * signs[:, None], 1e-8)


def test_basis_features_and_smoother_with_mixed_sizes():
    # Channel by channel, numpy least squares on scipy's B-spline values:
    # the smoother (alpha = 0, data_term="mean": ordinary least squares)
    # returns the fitted values; BasisFeatures' L2-orthonormal coordinates
    # have the inner products of the fitted functions, c_i' G c_j (exact
    # Gram matrix), whatever orthonormal basis they use.
    X, _ = _two_channels()
    smoother = CurveSmoother(0.0, data_term="mean", n_basis=SIZES, grid=GRID).fit(X)
    features = BasisFeatures(alpha=0.0, n_basis=SIZES, grid=GRID).fit(X)
    coords = features.transform(X)
    assert coords.shape == (len(X), SIZES["T"] + SIZES["O"])
    fitted, start = [], 0
    for (name, g), x in zip(GRID.items(), _channel_parts(X)):
        phi = _design(g, SIZES[name])
        c = np.linalg.lstsq(phi, x.T, rcond=None)[0].T
        fitted.append(c @ phi.T)
        block = coords[:, start : start + SIZES[name]]
        _close(block @ block.T, c @ _gram(g, SIZES[name]) @ c.T, 1e-9)
        start += SIZES[name]
    _close(smoother.transform(X), np.hstack(fitted), 1e-9)
    assert smoother.n_basis_ == features.n_basis_ == SIZES["T"] + SIZES["O"]


def test_mixed_knots_and_a_channel_left_out():
    # interior_knots for one channel only: the other takes the default
    # (evenly spaced knots for its n_basis), as the ridge fit on the
    # explicit knots of both shows (identity of definitions).
    X, y = _two_channels()
    inner_u = _knots(U, 6)[4:-4]
    a = FunctionalRidge(1e-3, n_basis={"O": 6}, interior_knots={"T": KNOTS},
                        grid=GRID).fit(X, y)
    b = FunctionalRidge(1e-3, interior_knots={"T": KNOTS, "O": inner_u},
                        grid=GRID).fit(X, y)
    assert a.n_basis_ == len(KNOTS) + 4 + 6
    _close(a.predict(X), b.predict(X))


# -------------------------------------------------------------- bad input


CHANNEL_ESTIMATORS = [
    BasisFeatures(), CurveSmoother(), FunctionalPCA(2, basis="bspline"),
    FunctionalRidge(), FunctionalLogisticRegression(),
]


@pytest.mark.parametrize("estimator", CHANNEL_ESTIMATORS, ids=lambda e: type(e).__name__)
def test_bad_per_channel_values_name_the_channel(estimator):
    X, y = _two_channels(40)
    y = (y > np.median(y)).astype(int)
    cases = [
        ({"n_basis": {"T": 8, "Q": 5}}, r"n_basis names channel\(s\) \['Q'\].*'T', 'O'"),
        ({"n_basis": {"O": "six"}}, r"n_basis\['O'\] must be an int >= 1 or None"),
        ({"n_basis": {"O": 0}}, r"n_basis\['O'\] must be an int >= 1"),
        ({"n_basis": {"O": True}}, r"n_basis\['O'\] must be an int"),
        ({"n_basis": {"O": 2}}, r"Channel 'O': A B-spline basis of degree 3 needs"),
        ({"interior_knots": {"O": [1.0, 6.0]}},
         r"Channel 'O': knots must be strictly increasing and strictly inside"),
        ({"interior_knots": {"R": [0.5]}}, r"interior_knots names channel\(s\) \['R'\]"),
    ]
    for params, message in cases:
        est = clone(estimator).set_params(grid=GRID, **params)
        with pytest.raises(ValueError, match=message):
            est.fit(X, y)
    # more basis functions than the channel's points, where the fit is
    # unpenalized (least squares on each curve)
    if isinstance(estimator, (FunctionalPCA, CurveSmoother)):
        est = clone(estimator).set_params(grid=GRID, n_basis={"O": 30}, alpha=0.0)
        with pytest.raises(ValueError, match=r"Channel 'O': n_basis=30 exceeds the 26"):
            est.fit(X, y)


@pytest.mark.parametrize("estimator", CHANNEL_ESTIMATORS, ids=lambda e: type(e).__name__)
def test_mapping_without_channels_is_refused(estimator):
    X, y = _curves(40)
    y = (y > np.median(y)).astype(int)
    for param, value in (("n_basis", {"T": 8}), ("interior_knots", {"T": KNOTS})):
        est = clone(estimator).set_params(grid=T, **{param: value})
        with pytest.raises(ValueError, match=f"{param} is a mapping by channel.*one curve"):
            est.fit(X, y)


def test_estimators_without_channels_refuse_a_mapping_n_basis():
    # scikit-learn's parameter validation: an int or None only
    from skfunc.linear_model import FunctionOnScalarRidge

    with pytest.raises(ValueError, match="'n_basis' parameter"):
        FunctionOnScalarRidge(n_basis={"T": 8}).fit(np.ones((5, 1)), np.ones((5, 4)))
