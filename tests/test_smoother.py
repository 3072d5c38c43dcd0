"""Tests for CurveSmoother.

External references: ``scipy.interpolate.make_smoothing_spline`` (the cubic
smoothing spline, with and without its own GCV), the GCV formula of Craven
and Wahba (1979) evaluated with explicit hat matrices, and calculus.
"""

import pickle
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.interpolate import make_smoothing_spline

from skfunc._alpha import AlphaAtEdgeWarning
from skfunc._grid import quadrature_weights
from skfunc._penalized import merge
from skfunc.preprocessing import CurveSmoother


def _curves(t, n, seed=0):
    """Smooth curves with varying amplitude, phase and a bump."""
    rng = np.random.default_rng(seed)
    amp = rng.uniform(0.5, 2.0, (n, 1))
    phase = rng.uniform(0, 2 * np.pi, (n, 1))
    bump = np.exp(-(((t - 0.6) / 0.15) ** 2))
    return amp * (np.sin(2 * np.pi * t + phase) + bump)


def _relative(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


def _spline_smoother(t, alpha, **kw):
    """Cubic B-splines with a knot at every interior grid point and a
    second-derivative penalty: the cubic smoothing spline's setting, with
    the quadrature-weighted data term scipy's weights ``w`` give."""
    kw.setdefault("data_term", "integral")
    return CurveSmoother(interior_knots=t[1:-1], degree=3, penalty_order=2, alpha=alpha,
                         grid=t, **kw)


def _alpha_for(t, lam):
    """The unit-free alpha equal to scipy's ``lam`` for the trapezoid data
    weights, by the smoother's definition of alpha: the objective
    ``(1 / sum w) ||x - f||_W^2 + alpha int_0^1 f''(u)^2 du`` with
    ``int_0^1 f''(u)^2 du = L^3 int f''(t)^2 dt`` (change of variables), so
    ``lam = alpha * sum(w) * L^3``."""
    length = t[-1] - t[0]
    return np.asarray(lam) / (quadrature_weights(t).sum() * length**3)


# -- external checks -----------------------------------------------------------


@pytest.mark.parametrize("uneven", [False, True])
@pytest.mark.parametrize("lam", [1e-6, 1e-3, 1e-1])
def test_matches_scipy_smoothing_spline(uneven, lam, rng):
    # Source: scipy.interpolate.make_smoothing_spline minimises
    # sum_i w_i (y_i - f(x_i))^2 + lam int f''^2 (its docstring); with w the
    # trapezoid weights this is CurveSmoother's criterion with
    # data_term="integral" and alpha = _alpha_for(lam).
    t = np.sort(rng.uniform(0, 2, 40)) if uneven else np.linspace(0, 2, 40)
    X = np.sin(3 * t) + rng.normal(scale=0.2, size=(3, t.size))
    w = quadrature_weights(t, "trapezoid")
    ours = _spline_smoother(t, float(_alpha_for(t, lam))).fit(X).transform(X)
    ref = make_smoothing_spline(t, X.T, w=w, lam=lam)(t).T
    assert _relative(ours, ref) < 1e-6


def test_derivative_and_resampling_match_scipy(rng):
    # Source: scipy.interpolate.make_smoothing_spline and BSpline.derivative.
    t = np.linspace(0, 1, 30)
    X = np.cos(4 * t) + rng.normal(scale=0.1, size=(2, t.size))
    w = quadrature_weights(t, "trapezoid")
    out = np.linspace(0.05, 0.95, 17)
    spline = make_smoothing_spline(t, X.T, w=w, lam=1e-4)
    for k in (0, 1, 2):
        ours = _spline_smoother(t, float(_alpha_for(t, 1e-4)), derivative=k,
                                eval_points=out).fit(X)
        assert _relative(ours.transform(X), spline.derivative(k)(out).T) < 1e-6


def test_missing_values_match_scipy_on_observed_points(rng):
    # Source: scipy.interpolate.make_smoothing_spline on the observed points
    # only, with their trapezoid weights from the full grid: a NaN has zero
    # weight, and the smoothing spline of the observed points (knots there)
    # lies in the spline space with knots at every grid point.
    t = np.linspace(0, 1, 35)
    X = np.sin(5 * t) + rng.normal(scale=0.1, size=(4, t.size))
    X[1, 10:14] = np.nan
    X[2, [3, 20]] = np.nan
    X[3, 10:14] = np.nan  # same pattern as row 1
    w = quadrature_weights(t, "trapezoid")
    ours = _spline_smoother(t, float(_alpha_for(t, 1e-4))).fit(X).transform(X)
    for i, x in enumerate(X):
        seen = ~np.isnan(x)
        ref = make_smoothing_spline(t[seen], x[seen], w=w[seen], lam=1e-4)(t)
        assert _relative(ours[i], ref) < 1e-6


def _brute_force_gcv(t, X, alphas):
    """Craven and Wahba's (1979) GCV, m RSS / (m - tr S)^2 in its weighted
    form (RSS weighted by w), with the hat matrix S built column by column
    from scipy's smoothing spline of unit vectors. Returns (curves, alphas)."""
    m = t.size
    w = quadrature_weights(t, "trapezoid")
    scores = []
    for a in alphas:
        S = make_smoothing_spline(t, np.eye(m), w=w, lam=a)(t)  # column j: fit of e_j
        resid = X - X @ S.T
        scores.append(m * (resid**2 @ w) / (m - np.trace(S)) ** 2)
    return np.array(scores).T


def test_gcv_matches_brute_force_hat_matrices(rng):
    t = np.linspace(0, 1, 25)
    X = _curves(t, 6, seed=3) + rng.normal(scale=0.3, size=(6, t.size))
    lams = np.logspace(-8, -1, 15)
    smoother = _spline_smoother(t, _alpha_for(t, lams)).fit(X)
    brute = _brute_force_gcv(t, X, lams)
    # pooled over curves: n m sum RSS / (n m - n tr S)^2 = mean over curves of
    # m RSS_i / (m - tr S)^2; CurveSmoother's score is (RSS/sum w)/(1-edf/m)^2,
    # the same up to the constant m / sum w.
    w_total = quadrature_weights(t).sum()
    assert_allclose(smoother.criterion_path_, brute.mean(axis=0) * t.size / w_total,
                    rtol=1e-6)
    assert smoother.alpha_ == smoother.alphas_path_[np.argmin(brute.mean(axis=0))]
    # one alpha per curve: the brute-force minimiser for each row
    chosen = smoother.choose_alphas(X)
    assert_allclose(chosen, smoother.alphas_path_[np.argmin(brute, axis=1)])
    assert np.unique(chosen).size > 1  # the curves do differ
    # and the per-curve smooth is scipy's smoothing spline at that alpha
    per_curve = _spline_smoother(t, smoother.alphas_path_, per_curve=True)
    ours = per_curve.fit(X).transform(X)
    w = quadrature_weights(t)
    for i, x in enumerate(X):
        ref = make_smoothing_spline(t, x, w=w, lam=lams[np.argmin(brute[i])])(t)
        assert _relative(ours[i], ref) < 1e-6


def test_derivative_of_noiseless_sine():
    # Calculus (common practice): d/dt sin(2 pi t) = 2 pi cos(2 pi t).
    t = np.linspace(0, 1, 201)
    X = np.sin(2 * np.pi * t)[None]
    rate = CurveSmoother(alpha=1e-10, derivative=1).fit(X).transform(X)[0]
    truth = 2 * np.pi * np.cos(2 * np.pi * t)
    inner = (t >= 0.05) & (t <= 0.95)
    assert np.abs(rate - truth)[inner].max() / np.abs(truth).max() < 1e-3


@pytest.mark.parametrize(
    "basis, curve",
    [
        # calculus (common practice): derivatives of a trigonometric and a
        # polynomial curve, which these bases represent exactly
        ("fourier", lambda t: (np.cos(2 * np.pi * t),
                               -2 * np.pi * np.sin(2 * np.pi * t))),
        ("legendre", lambda t: (t**3 - t, 3 * t**2 - 1)),
    ],
)
def test_other_bases_differentiate_exactly(basis, curve):
    t = np.linspace(0, 1, 101)
    x, dx = curve(t)
    # period 1: the grid closes the cycle (its ends are one point)
    smoother = CurveSmoother(basis=basis, n_basis=5, alpha=1e-12, derivative=1, period=1.0)
    assert _relative(smoother.fit(x[None]).transform(x[None])[0], dx) < 1e-4


def test_accuracy_against_scipy_gcv():
    # Source: scipy.interpolate.make_smoothing_spline with lam=None chooses lam
    # by GCV per curve; CurveSmoother's per-curve GCV must be as accurate
    # (mean squared error to the truth at most 1.1 times scipy's).
    rng = np.random.default_rng(2)
    t = np.linspace(0, 1, 61)
    amp = rng.uniform(0.5, 2, (16, 1))
    phase = rng.uniform(0, 2 * np.pi, (16, 1))
    truth = amp * np.sin(2 * np.pi * t + phase) + 0.5 * np.cos(5 * np.pi * t * amp)
    X = truth + rng.normal(scale=0.3, size=truth.shape)
    ref = np.array([make_smoothing_spline(t, x)(t) for x in X])
    ours = CurveSmoother(per_curve=True).fit(X).transform(X)
    assert np.mean((ours - truth) ** 2) <= 1.1 * np.mean((ref - truth) ** 2)


# -- resolution invariance -----------------------------------------------------


def _samplings():
    u = np.linspace(0, 1, 201)
    jitter = np.random.default_rng(5).uniform(-0.4, 0.4, 199) * u[1]
    return {
        "1001": np.linspace(0, 1, 1001),
        "201": u,
        "uneven 201": np.r_[0.0, u[1:-1] + jitter, 1.0],
        "51": np.linspace(0, 1, 51),
    }


def test_resolution_invariance_gcv_alpha():
    # Noise of a continuous white-noise record averaged over each point's
    # cell has variance sigma^2 / w_j: the integral data term's model. With
    # it the best alpha does not depend on the sampling, and the GCV choice
    # must not either (within one step of the candidates, which follow the
    # data's effective degrees of freedom and so move slightly with the
    # sampling and the default number of basis functions).
    chosen, steps = [], []
    for t in _samplings().values():
        rng = np.random.default_rng(11)
        w = quadrature_weights(t)
        X = _curves(t, 30) + rng.normal(size=(30, t.size)) * 0.1 / np.sqrt(w)
        smoother = CurveSmoother(grid=t, data_term="integral").fit(X)
        chosen.append(smoother.alpha_)
        steps.append(smoother.alphas_path_[1] / smoother.alphas_path_[0])
    assert max(chosen) / min(chosen) <= max(steps), chosen


# -- behaviour -----------------------------------------------------------------


def test_fitted_attributes_and_gcv_curve(rng):
    t = np.linspace(0, 1, 80)
    X = _curves(t, 10) + rng.normal(scale=0.2, size=(10, t.size))
    smoother = CurveSmoother().fit(X)
    assert smoother.alphas_path_.shape == smoother.criterion_path_.shape == (25,)
    assert np.all(np.diff(smoother.alphas_path_) > 0)
    assert smoother.alpha_ == smoother.alphas_path_[np.argmin(smoother.criterion_path_)]
    assert 2 < smoother.edf_ < smoother.n_basis_
    # the GCV curve has an interior minimum for noisy smooth curves
    assert 0 < np.argmin(smoother.criterion_path_) < 24
    fixed = CurveSmoother(alpha=0.01).fit(X)
    assert fixed.alphas_path_.tolist() == [0.01] and fixed.alpha_ == 0.01
    assert fixed.criterion_path_ is None
    # candidates span the effective degrees of freedom from the straight
    # lines (2, the null space of a second-derivative penalty: common
    # practice) to the full basis
    assert 2 < smoother.edf_path_[-1] < 2.1
    assert smoother.n_basis_ - 0.1 < smoother.edf_path_[0] < smoother.n_basis_
    # a huge penalty leaves the straight lines, 2 degrees of freedom
    assert_allclose(CurveSmoother(alpha=1e12).fit(X).edf_, 2, atol=1e-9)


def test_statistics_are_sums_over_rows(rng):
    # fits are sums: statistics of two chunks merged give the fit on all rows
    t = np.linspace(0, 1, 40)
    X = _curves(t, 12) + rng.normal(scale=0.2, size=(12, t.size))
    X[3, 5:9] = np.nan
    X[9, 20] = np.nan
    whole = CurveSmoother().fit(X)
    parts = CurveSmoother().fit(X[:6])
    parts._solve(merge(parts._statistics(X[:6]), parts._statistics(X[6:])))
    assert_allclose(parts.criterion_path_, whole.criterion_path_, rtol=1e-10)
    assert parts.alpha_ == whole.alpha_
    assert_allclose(parts.transform(X), whole.transform(X))


def test_missing_rows_match_fixed_alpha_and_per_curve(rng):
    t = np.linspace(0, 1, 50)
    X = _curves(t, 5) + rng.normal(scale=0.2, size=(5, t.size))
    X_gap = X.copy()
    X_gap[2, 10:20] = np.nan
    smoother = CurveSmoother(alpha=1e-4).fit(X)
    full, gap = smoother.transform(X), smoother.transform(X_gap)
    assert np.all(np.isfinite(gap))
    keep = np.arange(5) != 2
    assert_allclose(gap[keep], full[keep])  # other rows untouched
    assert_allclose(smoother.transform(X_gap[2:3])[0], gap[2])
    assert _relative(gap[2], full[2]) < 0.1  # a short gap changes little
    per_curve = CurveSmoother(per_curve=True).fit(X)
    assert np.all(np.isfinite(per_curve.transform(X_gap)))
    assert_allclose(per_curve.transform(X_gap)[keep], per_curve.transform(X)[keep])


def test_gcv_undefined_rows_get_the_largest_alpha(rng):
    # two observations fit any straight line exactly: GCV's denominator
    # (1 - edf / n)^2 vanishes for every candidate, so the smoothest is used,
    # and the smooth is (nearly) the line through the two points
    t = np.linspace(0, 1, 30)
    X = _curves(t, 3) + rng.normal(scale=0.1, size=(3, t.size))
    X[1] = np.nan
    X[1, [5, 20]] = [1.0, 4.0]
    smoother = CurveSmoother(per_curve=True).fit(X)
    assert smoother.choose_alphas(X)[1] == smoother.alphas_path_.max()
    line = 1.0 + 3.0 * (t - t[5]) / (t[20] - t[5])
    assert_allclose(smoother.transform(X)[1], line, atol=1e-3)


def test_tunable_in_grid_search(rng):
    from sklearn.linear_model import Ridge
    from sklearn.model_selection import GridSearchCV
    from sklearn.pipeline import make_pipeline

    t = np.linspace(0, 1, 40)
    truth = _curves(t, 60)
    X = truth + rng.normal(scale=0.3, size=truth.shape)
    y = truth[:, 20] - truth[:, 5]  # a feature the noise hides, smoothing reveals
    pipe = make_pipeline(CurveSmoother(alpha=1e-3), Ridge(alpha=1e-3))
    search = GridSearchCV(pipe, {"curvesmoother__alpha": [1e-5, 10.0]}, cv=3)
    search.fit(X, y)
    scores = search.cv_results_["mean_test_score"]
    assert scores[0] > scores[1] + 0.1  # a straight line loses the feature
    assert search.best_estimator_[0].alpha_ == 1e-5


def test_pickle_with_missing_values_and_plain_state(rng):
    t = np.linspace(0, 1, 30)
    X = _curves(t, 6) + rng.normal(scale=0.2, size=(6, t.size))
    X[1, 4:7] = np.nan
    smoother = CurveSmoother(per_curve=True, derivative=1).fit(X)
    restored = pickle.loads(pickle.dumps(smoother))
    assert_allclose(restored.transform(X), smoother.transform(X))
    for name, value in vars(smoother).items():
        if name.endswith("_"):
            assert isinstance(value, (np.ndarray, int, float, str)), name


def test_dataframe_output_carries_the_grid():
    pd = pytest.importorskip("pandas")
    t = np.linspace(0, 10, 41)
    X = pd.DataFrame(_curves(t / 10, 3), columns=t)
    out = np.linspace(1, 9, 9)
    smoother = CurveSmoother(alpha=1e-3, eval_points=out).set_output(transform="pandas")
    Z = smoother.fit_transform(X)
    assert_allclose(smoother.grid_, t)
    assert_allclose(Z.columns.astype(float), out)
    # a second smoother reads the resampled grid from the column labels
    again = CurveSmoother(alpha=1e-3).fit(Z)
    assert_allclose(again.grid_, out)


def test_float32_input(rng):
    t = np.linspace(0, 1, 30)
    X = _curves(t, 4) + rng.normal(scale=0.1, size=(4, t.size))
    smoother = CurveSmoother(alpha=1e-4).fit(X)
    assert_allclose(smoother.transform(X.astype(np.float32)), smoother.transform(X),
                    atol=1e-5)


# -- bad input -----------------------------------------------------------------


@pytest.mark.parametrize(
    "params, match",
    [
        ({"derivative": 4}, "derivative=4 exceeds"),
        ({"eval_points": [0.5, 1.5]}, "eval_points must lie inside"),
        ({"eval_points": [0.5, 0.2]}, "eval_points must be strictly increasing"),
        ({"alpha": [1e-3, 0.0]}, "candidates > 0"),
        ({"alpha": [-1.0]}, "candidates > 0"),
        ({"alpha": []}, "non-empty"),
        ({"alpha": [[1.0, 2.0]]}, "1-D array"),
        ({"per_curve": True, "alpha": 0.1}, 'per_curve=True .* needs alpha="auto"'),
        ({"alpha": -1.0}, "'alpha' parameter"),
        ({"alpha": "gcv"}, "'alpha' parameter"),
        ({"criterion": "loo"}, "'criterion' parameter"),
        ({"data_term": "sum"}, "'data_term' parameter"),
        ({"penalty_order": 4}, "penalty_order=4 exceeds"),
        ({"alpha": 0.0, "n_basis": 40}, "n_basis=40 exceeds the 30 grid points"),
        ({"grid": [0.0, 1.0, 2.0]}, "grid has 3 points but X has 30 columns"),
        ({"grid": np.r_[0.0, 0.0, np.arange(1.0, 29.0)]}, "strictly increasing"),
    ],
)
def test_bad_parameters(params, match, rng):
    X = rng.normal(size=(3, 30))
    with pytest.raises(ValueError, match=match):
        CurveSmoother(**params).fit(X)


def test_empty_row_found_beyond_the_first_piece(rng):
    # rows starting with NaN are scanned in cache-sized pieces: an empty row
    # in a later piece is found and named, the first of two
    from skfunc._blocks import cache_rows

    n = 3 * cache_rows(30) + 17
    X = rng.normal(size=(n, 30))
    X[::2, 0] = np.nan  # half the rows start with NaN, still observed
    X[n - 10] = np.nan
    X[n - 4] = np.nan
    with pytest.raises(ValueError, match=f"Row {n - 10} of X is entirely NaN"):
        CurveSmoother().fit(X)


def test_bad_rows(rng):
    X = rng.normal(size=(5, 30))
    X_empty = X.copy()
    X_empty[2] = np.nan
    with pytest.raises(ValueError, match="Row 2 of X is entirely NaN"):
        CurveSmoother().fit(X_empty)
    X_one = X.copy()
    X_one[3, 1:] = np.nan  # one value cannot fix a straight line: a constant
    with pytest.warns(UserWarning, match=r"Row\(s\) \[3\] of X have 1 observed"):
        smooth = CurveSmoother().fit(X_one).transform(X_one)
    # the constant through the one value (the fit that value determines)
    assert_allclose(smooth[3], X_one[3, 0], rtol=1e-10)
    fitted = CurveSmoother(alpha=0.0, n_basis=10).fit(X)
    X_few = X.copy()
    X_few[4, :22] = np.nan  # 8 values for 10 unpenalized coefficients
    with pytest.raises(ValueError, match="Row 4 of X has 8 observed value"):
        fitted.transform(X_few)
    with pytest.raises(ValueError, match="a curve needs at least 2 grid points"):
        CurveSmoother().fit(X[:, :1])
    with pytest.raises(ValueError, match="X has 29 features"):
        fitted.transform(X[:, :-1])
    X_inf = np.where(X > 1, np.inf, X)
    with pytest.raises(ValueError, match="contains infinity"):
        fitted.transform(X_inf)
    per_curve = CurveSmoother(per_curve=True).fit(X)
    for method in (per_curve.transform, per_curve.choose_alphas):
        with pytest.raises(ValueError, match="contains infinity"):
            method(X_inf)
    with pytest.raises(ValueError, match="contains infinity"):
        CurveSmoother().fit(X_inf)


@pytest.mark.slow
def test_gcv_on_uneven_grid_as_accurate_as_scipy(scipy_smoothing):
    # Source: scipy.interpolate.make_smoothing_spline with lam=None (GCV per
    # curve) on an uneven grid (70 points on [0, 0.3], 30 on [0.3, 1]) with the
    # same noise at every point, 50 replications: CurveSmoother's per-curve
    # GCV with its default data term (the mean over observed points) has mean
    # squared error to the truth within 1.10x of scipy's (the package's
    # target). The trapezoid-weighted data term fails this (checked below).
    t, truth, X, mse_ref = scipy_smoothing
    for kw in ({}, {"n_basis": 40}):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AlphaAtEdgeWarning)
            ours = CurveSmoother(grid=t, per_curve=True, **kw).fit(X).transform(X)
            integral = CurveSmoother(grid=t, per_curve=True, data_term="integral", **kw)
            worse = integral.fit(X).transform(X)
        assert ((ours - truth) ** 2).mean() <= 1.10 * mse_ref
        assert ((worse - truth) ** 2).mean() > 1.10 * mse_ref
