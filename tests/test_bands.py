"""Simultaneous confidence bands (``confidence_band(simultaneous=True)``).

The critical value is the ``level`` quantile of ``max_j |f~_j - f_hat_j| /
sd_j`` over draws from the coefficients' normal distribution (Ruppert, Wand
and Carroll, 2003, section 6.5). Checked against closed forms where the
maximum has one (one point: the normal quantile; perfectly correlated points:
the normal quantile; independent points: the Sidak value), against draws
made here with numpy from ``coef_covariance_`` for the curve-response
regressors, and by a coverage simulation.

Monte Carlo tolerances: the sample ``p``-quantile of ``N`` draws has standard
error ``sqrt(p (1 - p) / N) / f(c)``, ``f`` the density of the maximum at the
quantile ``c`` (asymptotic normality of sample quantiles, common practice);
four standard errors leave a false alarm about once in 16,000 runs.
"""

import numpy as np
import pytest
from scipy.interpolate import BSpline
from scipy.stats import norm

from skfunc._bands import critical_value
from skfunc.linear_model import (
    ConcurrentFunctionRidge,
    FunctionalRidge,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)

N_DRAWS = 20000


def _quantile_se(level, density, n=N_DRAWS):
    """Standard error of a sample ``level``-quantile of ``n`` draws."""
    return np.sqrt(level * (1 - level) / n) / density


@pytest.mark.parametrize("level", [0.8, 0.95, 0.99])
def test_one_point_gives_the_normal_quantile(level):
    # One point: max |e| / sd = |Z|, whose level quantile is z_{(1+level)/2}
    # (closed form). The density of |Z| at c is 2 phi(c). A one-sided
    # maximum (z_level) or the level-quantile of Z itself are far outside.
    c = critical_value(level, simultaneous=True, covariance=np.array([[4.0]]),
                       evaluate=lambda e: e, sd=np.array([2.0]), n_draws=N_DRAWS,
                       random_state=0)
    expected = norm.ppf((1 + level) / 2)
    assert abs(c - expected) < 4 * _quantile_se(level, 2 * norm.pdf(expected))
    # the pointwise value is the quantile exactly
    assert critical_value(level) == pytest.approx(expected, rel=1e-15)


def test_perfectly_correlated_points_give_the_normal_quantile():
    # f_j = a_j e with one scalar e: |f_j| / sd_j = |e| / sqrt(v) at every
    # point, so the maximum is |Z| again, however many points and whatever
    # the signs of a_j (closed form). Treating the points as independent
    # (the Sidak value for 30 points, 3.14) fails.
    a = np.linspace(-2, 3, 30)
    a = a[a != 0]
    v = 0.3
    c = critical_value(0.95, simultaneous=True, covariance=np.array([[v]]),
                       evaluate=lambda e: e * a, sd=np.abs(a) * np.sqrt(v),
                       n_draws=N_DRAWS, random_state=1)
    expected = norm.ppf(0.975)
    assert abs(c - expected) < 4 * _quantile_se(0.95, 2 * norm.pdf(expected))


@pytest.mark.parametrize("m", [2, 10, 50])
def test_independent_points_give_the_sidak_value(m):
    # m independent points: P(max |Z_j| <= c) = (2 Phi(c) - 1)^m = level,
    # so c = z_{(1 + level^(1/m)) / 2} (Sidak 1967; closed form); the
    # density of the maximum at c is m (2 Phi(c) - 1)^(m-1) 2 phi(c). The
    # points have different variances (sd divides them out); a maximum of
    # |e| without dividing by sd, or of e without the absolute value
    # (c = z_{level^(1/m)}), fails.
    level = 0.95
    variances = np.linspace(0.5, 3.0, m)
    c = critical_value(level, simultaneous=True, covariance=np.diag(variances),
                       evaluate=lambda e: e, sd=np.sqrt(variances), n_draws=N_DRAWS,
                       random_state=2)
    expected = norm.ppf((1 + level ** (1 / m)) / 2)
    density = m * (2 * norm.cdf(expected) - 1) ** (m - 1) * 2 * norm.pdf(expected)
    assert abs(c - expected) < 4 * _quantile_se(level, density)


def test_points_without_variance_are_left_out():
    # a point with sd = 0 (a fixed value: no uncertainty) would divide 0 by
    # 0; it does not enter the maximum, so two independent points and a
    # fixed third give the two-point Sidak value
    cov = np.diag([1.0, 1.0, 0.0])
    c = critical_value(0.95, simultaneous=True, covariance=cov, evaluate=lambda e: e,
                       sd=np.array([1.0, 1.0, 0.0]), n_draws=N_DRAWS, random_state=3)
    expected = norm.ppf((1 + 0.95 ** 0.5) / 2)
    density = 2 * (2 * norm.cdf(expected) - 1) * 2 * norm.pdf(expected)
    assert abs(c - expected) < 4 * _quantile_se(0.95, density)


def _bspline_values(t, n_basis, degree=3):
    """Clamped B-splines with evenly spaced interior knots on [0, 1] (the
    package's documented default basis), evaluated by scipy."""
    inner = np.linspace(0, 1, n_basis - degree + 1)
    knots = np.r_[[0.0] * degree, inner, [1.0] * degree]
    return BSpline.design_matrix(t, knots, degree).toarray()


def _reference_band(model, phi, rows, level, rng, n_draws=N_DRAWS):
    """Band of ``rows @ basis_coef_ @ phi'`` from ``coef_covariance_`` with
    numpy's own multivariate normal draws (SVD factor) and the empirical
    quantile; returns the estimate, sd, and the order statistics of the
    maximum at ranks ``N level -/+ 4 sqrt(2 N level (1 - level))``: a
    distribution-free interval (binomial count below the quantile) wide
    enough for the spread of both the reference and the package's estimate
    (independent draws, so variances add)."""
    p1, K = model.basis_coef_.shape
    cov = model.coef_covariance_
    E = np.kron(rows, phi)  # vec(rows B phi') = kron(rows, phi) vec(B), row-major
    estimate = E @ model.basis_coef_.ravel()
    sd = np.sqrt(np.einsum("ij,jk,ik->i", E, cov, E))
    draws = rng.multivariate_normal(np.zeros(p1 * K), cov, size=n_draws, method="svd")
    worst = np.sort(np.max(np.abs(draws @ E.T) / sd, axis=1))
    half = 4 * np.sqrt(2 * n_draws * level * (1 - level))
    ranks = np.clip(np.round(n_draws * level + np.array([-half, half])).astype(int), 0,
                    n_draws - 1)
    return estimate, sd, worst[ranks]


@pytest.mark.slow
def test_function_on_scalar_band_against_numpy_draws():
    # Each coefficient function of a function-on-scalar model has its own
    # simultaneous band: beta_j(t) = B_j phi(t), with phi from scipy's
    # B-splines, the covariance block of row j of basis_coef_, and draws made
    # here. The pointwise band is estimate -/+ z sd to rounding; the
    # simultaneous one is estimate -/+ c sd with c inside the reference's
    # quantile interval. One critical value shared by all coefficient
    # functions (the maximum over all of them) would be too large for each.
    rng = np.random.default_rng(11)
    t = np.linspace(0, 1, 41)
    X = rng.normal(size=(80, 3))
    beta = np.vstack([np.sin(2 * np.pi * t), t ** 2, np.cos(np.pi * t)])
    Y = 1 + X @ beta + 0.3 * rng.normal(size=(80, t.size))
    model = FunctionOnScalarRidge(alpha=1e-6, n_basis=10, response_grid=t).fit(X, Y)
    phi = _bspline_values(t, 10)
    np.testing.assert_allclose(model.basis_coef_[1:] @ phi.T, model.coef_function_,
                               rtol=1e-12, atol=1e-12)  # scipy's basis is the model's
    lower, upper = model.confidence_band(0.95)
    s_lower, s_upper = model.confidence_band(0.95, simultaneous=True, n_draws=N_DRAWS,
                                             random_state=0)
    for j in range(3):
        rows = np.eye(4)[[j + 1]]
        estimate, sd, (q_low, q_high) = _reference_band(model, phi, rows, 0.95, rng)
        z = norm.ppf(0.975)
        np.testing.assert_allclose(lower[j], estimate - z * sd, rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose(upper[j], estimate + z * sd, rtol=1e-9, atol=1e-12)
        c = (s_upper[j] - s_lower[j]) / (2 * sd)
        np.testing.assert_allclose(c, c[0], rtol=1e-9)  # one value per function
        assert q_low <= c[0] <= q_high, (j, c[0], q_low, q_high)
    # the intercept function has a band of its own too
    i_lower, i_upper = model.confidence_band(0.95, intercept=True, simultaneous=True,
                                             n_draws=N_DRAWS, random_state=0)
    estimate, sd, (q_low, q_high) = _reference_band(model, phi, np.eye(4)[[0]], 0.95, rng)
    assert q_low <= ((i_upper - i_lower) / (2 * sd))[0] <= q_high


@pytest.mark.slow
def test_function_on_function_band_covers_the_whole_surface():
    # A coefficient surface beta(s, t) = sum_ab B_ab psi_a(s) phi_b(t) gets
    # one critical value for the whole surface: the maximum over all
    # (s, t), against numpy's draws of the surface; per-row values (as for
    # separate coefficient functions) are smaller and fall below the
    # reference interval.
    rng = np.random.default_rng(12)
    s = np.linspace(0, 1, 21)
    X = np.cumsum(rng.normal(size=(70, s.size)), axis=1) / 5
    surface = np.exp(-((s[:, None] - s[None, :]) ** 2) / 0.05)
    Y = X @ surface / 20 + 0.1 * rng.normal(size=(70, s.size))
    model = FunctionOnFunctionRidge(alpha=1e-4, n_basis=6, grid=s, response_grid=s)
    model.fit(X, Y)
    phi = _bspline_values(s, 6)
    psi = np.column_stack([np.zeros(s.size), phi])  # the input basis, same size
    np.testing.assert_allclose(psi @ model.basis_coef_ @ phi.T, model.coef_function_,
                               rtol=1e-10, atol=1e-12)
    estimate, sd, (q_low, q_high) = _reference_band(model, phi, psi, 0.95, rng)
    lower, upper = model.confidence_band(0.95, simultaneous=True, n_draws=N_DRAWS,
                                         random_state=0)
    c = (upper - lower).ravel() / (2 * sd)
    np.testing.assert_allclose(c, c[0], rtol=1e-9)
    assert q_low <= c[0] <= q_high, (c[0], q_low, q_high)


def test_concurrent_band_is_simultaneous_over_the_response_grid():
    # beta_1(t) of the concurrent model: between the pointwise quantile and
    # the Bonferroni bound z_{1 - 0.025/m} over its m grid points (common
    # practice: union bound), and seeded
    rng = np.random.default_rng(13)
    t = np.linspace(0, 1, 31)
    X = np.cumsum(rng.normal(size=(60, t.size)), axis=1) / 4
    Y = np.sin(np.pi * t) + X * (1 + t) + 0.2 * rng.normal(size=X.shape)
    model = ConcurrentFunctionRidge(alpha=1e-6, n_basis=8, grid=t).fit(X, Y)
    lower, upper = model.confidence_band(0.95)
    s_lower, s_upper = model.confidence_band(0.95, simultaneous=True, random_state=5)
    c = (s_upper - s_lower) / (upper - lower) * norm.ppf(0.975)
    assert np.all(c > norm.ppf(0.975)) and np.all(c < norm.ppf(1 - 0.025 / t.size))
    again = model.confidence_band(0.95, simultaneous=True, random_state=5)
    np.testing.assert_array_equal(again[0], s_lower)


@pytest.mark.parametrize("n_draws", [10, 99, 2.5e3, True, "4000"])
def test_bad_n_draws_is_one_error_everywhere(n_draws):
    # the same check and message for the scalar-outcome and curve-response bands
    rng = np.random.default_rng(0)
    X = np.cumsum(rng.normal(size=(30, 21)), axis=1)
    models = [FunctionalRidge(alpha=1e-4, n_basis=8).fit(X, rng.normal(size=30)),
              FunctionOnScalarRidge(alpha=1e-6, n_basis=8).fit(X[:, :2], X)]
    for model in models:
        with pytest.raises(ValueError, match=r"n_draws must be an integer >= 100"):
            model.confidence_band(0.95, simultaneous=True, n_draws=n_draws)


def test_one_point_response_simultaneous_equals_pointwise():
    # A response of one grid point: the band has one point, so the
    # simultaneous critical value is the normal quantile (closed form), within
    # the Monte Carlo tolerance of the first test.
    rng = np.random.default_rng(14)
    X = rng.normal(size=(50, 2))
    y = X @ [1.0, -2.0] + rng.normal(size=50)
    model = FunctionOnScalarRidge().fit(X, y[:, None])
    lower, upper = model.confidence_band(0.9)
    s_lower, s_upper = model.confidence_band(0.9, simultaneous=True, n_draws=N_DRAWS,
                                             random_state=0)
    z = norm.ppf(0.95)
    ratio = (s_upper - s_lower) / (upper - lower)
    assert np.all(np.abs(ratio * z - z) < 4 * _quantile_se(0.9, 2 * norm.pdf(z)))


@pytest.mark.slow
def test_simultaneous_coverage_of_a_function_on_scalar_model():
    # 400 replications of y_i(t) = b0(t) + x_i beta(t) + white noise (sd 0.5
    # on 41 points), 200 curves, a smooth beta and a small fixed alpha (the
    # smoothing bias is negligible, so coverage measures the spread). The
    # pointwise band covers beta at about 95% of points but the whole curve
    # in far fewer replications (measured 39%); the simultaneous band
    # covers the whole curve in 95% of them, within three binomial standard
    # errors, sqrt(0.95 * 0.05 / 400) = 0.011 (measured 0.935: with a
    # plug-in residual covariance the maximum is slightly heavier-tailed
    # than under the normal distribution the draws come from).
    from threadpoolctl import threadpool_limits

    rng = np.random.default_rng(2003)
    t = np.linspace(0, 1, 41)
    x = rng.normal(size=(200, 1))
    beta = np.sin(2 * np.pi * t) + 0.5 * t
    b0 = np.cos(np.pi * t)
    point, whole, simultaneous = [], [], []
    with threadpool_limits(1):  # 400 small fits: threads only add overhead
        for r in range(400):
            _replicate(r, rng, t, x, b0, beta, point, whole, simultaneous)
    se = np.sqrt(0.95 * 0.05 / 400)
    assert abs(np.mean(point) - 0.95) < 3 * se, np.mean(point)
    assert np.mean(whole) < 0.95 - 10 * se, np.mean(whole)
    assert abs(np.mean(simultaneous) - 0.95) < 3 * se, np.mean(simultaneous)


def _replicate(r, rng, t, x, b0, beta, point, whole, simultaneous):
    Y = b0 + x * beta + 0.5 * rng.normal(size=(x.shape[0], t.size))
    model = FunctionOnScalarRidge(alpha=1e-6, n_basis=12, response_grid=t).fit(x, Y)
    lower, upper = model.confidence_band(0.95)
    inside = (lower[0] <= beta) & (beta <= upper[0])
    point.append(inside.mean())
    whole.append(inside.all())
    lower, upper = model.confidence_band(0.95, simultaneous=True, n_draws=2000,
                                         random_state=r)
    simultaneous.append(np.all((lower[0] <= beta) & (beta <= upper[0])))
