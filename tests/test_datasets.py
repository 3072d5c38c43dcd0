"""Tests of the data generators against outside facts (scipy quadrature,
statsmodels fits, the covariance and eigenvalues of Brownian motion)."""

import numpy as np
import pytest
import statsmodels.api as sm
from scipy.integrate import simpson

from skfunc.datasets import (
    make_brownian_paths,
    make_kiln_firing,
    make_smooth_regression,
)

FINE_MINUTES = np.linspace(0, 599, 2 * 599 * 2 + 1)  # quarter minutes


def test_kiln_shapes_and_fields():
    kiln = make_kiln_firing(40, random_state=0)
    assert kiln.data.shape == (40, 600)
    np.testing.assert_array_equal(kiln.grid, np.arange(600))
    assert kiln.settings.shape == (40, 4)
    assert kiln.settings_names == [
        "peak_setpoint_c", "ramp_rate_c_per_min", "soak_min", "load_mass_kg"
    ]
    for name in ("target", "strength", "cracked", "start_delay", "faulty"):
        assert kiln[name].shape == (40,)
    assert kiln.coef_function.shape == (600,)
    assert set(np.unique(kiln.cracked)) <= {0, 1}
    assert "invented" in kiln.DESCR.lower()
    assert "invented" in make_kiln_firing.__doc__.lower()


def test_kiln_profile_is_a_firing_cycle():
    kiln = make_kiln_firing(300, faulty_fraction=0.0, random_state=1)
    X, settings = kiln.true_curves, kiln.settings
    peak = X.max(axis=1)
    # the kiln soaks near its set-point (within the controller wander)
    np.testing.assert_array_less(np.abs(peak - settings[:, 0]), 40.0)
    assert np.all(X[:, 0] < 60) and np.all(X[:, -1] < 400)  # starts cold, cools
    assert np.all((settings[:, 0] >= 1150) & (settings[:, 0] <= 1250))


def test_kiln_late_starts_faults_and_dropouts():
    kiln = make_kiln_firing(
        400, late_start_fraction=0.3, faulty_fraction=0.1, dropout_fraction=0.2,
        random_state=2,
    )
    assert np.all(kiln.start_delay[kiln.late_start] >= 25)
    assert np.all(kiln.start_delay[~kiln.late_start] <= 15)
    faulty_peak = kiln.true_curves[kiln.faulty].max(axis=1)
    assert np.all(faulty_peak < kiln.settings[kiln.faulty, 0] - 100)
    missing = np.isnan(kiln.data)
    np.testing.assert_array_equal(missing.any(axis=1), kiln.has_dropout)
    assert 0.1 < kiln.has_dropout.mean() < 0.3
    # gaps are runs of consecutive minutes (3-15 min), never a whole curve
    assert missing.sum(axis=1).max() <= 3 * 16
    starts = np.diff(missing.astype(int), axis=1) == 1
    assert starts.sum() <= 3 * kiln.has_dropout.sum()
    observed = ~missing
    assert np.all(np.abs(kiln.data[observed] - kiln.true_curves[observed]) < 10)


def test_kiln_strength_follows_the_stated_functional_model():
    # The docstring's model, integrated with scipy's Simpson rule on a finer
    # grid than the generator's: strength = intercept + int beta T dt + noise.
    kiln = make_kiln_firing(30, grid=FINE_MINUTES, strength_noise=0.0,
                            random_state=3)
    integral = simpson(kiln.true_curves * kiln.coef_function, x=FINE_MINUTES)
    np.testing.assert_allclose(kiln.strength, kiln.intercept + integral, atol=1e-3)
    assert 30 < kiln.strength.mean() < 60  # MPa, plausible for stoneware


def test_kiln_noise_and_crack_models_with_statsmodels():
    minutes = np.linspace(0, 599, 300)
    kiln = make_kiln_firing(3000, grid=minutes, random_state=4)
    # OLS of strength on the true integral (statsmodels): slope 1, noise SD 1
    z = simpson(kiln.true_curves * kiln.coef_function, x=minutes)
    ols = sm.OLS(kiln.strength, sm.add_constant(z)).fit()
    assert abs(ols.params[1] - 1) < 4 * ols.bse[1]
    assert abs(np.sqrt(ols.scale) - 1.0) < 0.05
    # Logit of the crack flag on the true log-odds integral: slope 1, intercept
    g = simpson(kiln.true_curves * kiln.crack_coef_function, x=minutes)
    logit = sm.Logit(kiln.cracked, sm.add_constant(g)).fit(disp=0)
    assert abs(logit.params[1] - 1) < 4 * logit.bse[1]
    assert abs(logit.params[0] - kiln.crack_intercept) < 4 * logit.bse[0]
    assert 0.1 < kiln.cracked.mean() < 0.5


def test_kiln_same_runs_at_any_resolution():
    every_minute = make_kiln_firing(20, random_state=5)
    every_5 = make_kiln_firing(20, grid=np.arange(0, 600, 5), random_state=5)
    np.testing.assert_allclose(every_5.true_curves, every_minute.true_curves[:, ::5])
    np.testing.assert_allclose(every_5.strength, every_minute.strength)
    np.testing.assert_array_equal(every_5.cracked, every_minute.cracked)
    np.testing.assert_allclose(every_5.coef_function, every_minute.coef_function[::5])


def test_kiln_as_frame():
    pd = pytest.importorskip("pandas")
    kiln = make_kiln_firing(10, as_frame=True, random_state=0)
    assert isinstance(kiln.data, pd.DataFrame)
    assert list(kiln.data.columns[:3]) == [0, 1, 2]
    assert isinstance(kiln.target, pd.Series) and kiln.target.name == "strength"
    assert list(kiln.settings.columns) == kiln.settings_names
    half = make_kiln_firing(3, grid=[0, 0.5, 599], as_frame=True, random_state=0)
    assert list(half.data.columns) == [0, 0.5, 599]


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"grid": [0, 300, 700]}, "grid must lie within"),
        ({"grid": [0, 5, 5]}, "strictly increasing"),
        ({"n_samples": 0}, "n_samples"),
        ({"dropout_fraction": 1.5}, "dropout_fraction"),
        ({"strength_noise": -1}, "strength_noise"),
    ],
)
def test_kiln_bad_input(kwargs, match):
    with pytest.raises(ValueError, match=match):
        make_kiln_firing(**kwargs)


def test_smooth_regression_response_is_the_integral():
    # y = int X beta exactly; checked with scipy's Simpson rule on a fine grid
    t = np.linspace(0, 1, 2001)
    X, y, beta = make_smooth_regression(25, grid=t, noise=0.0, intercept=2.0,
                                        random_state=0)
    np.testing.assert_allclose(y, 2.0 + simpson(X * beta, x=t), atol=1e-8)


def test_smooth_regression_same_functions_on_any_grid():
    t_fine = np.linspace(0, 1, 401)
    t_uneven = np.sort(np.r_[0, 1, np.random.default_rng(0).uniform(0, 1, 50)])
    X1, y1, b1 = make_smooth_regression(10, grid=t_fine, random_state=7)
    X2, y2, b2 = make_smooth_regression(10, grid=t_uneven, random_state=7)
    np.testing.assert_array_equal(y1, y2)
    # the curves are the same functions: compare by linear interpolation
    interp = np.array([np.interp(t_uneven, t_fine, row) for row in X1])
    np.testing.assert_allclose(X2, interp, atol=5e-3)
    np.testing.assert_allclose(b2, np.interp(t_uneven, t_fine, b1), atol=5e-3)


def test_smooth_regression_domain_and_noise():
    t = np.linspace(10, 20, 301)
    X, y, beta = make_smooth_regression(2000, grid=t, noise=0.5, curve_noise=0.1,
                                        random_state=1)
    X0, y0, _ = make_smooth_regression(2000, grid=t, noise=0.0, random_state=1)
    assert abs(np.std(y - y0) - 0.5) < 0.03
    assert abs(np.std(X - X0) - 0.1) < 0.005
    # beta is L2-normed as documented: ||beta||^2 = sum_{k>=1} 4 / (1+k)^4
    k = np.arange(1, 11)
    np.testing.assert_allclose(simpson(beta**2, x=t), np.sum(4 / (1 + k) ** 4),
                               rtol=1e-6)


def test_brownian_covariance_is_min():
    # Cov(W(s), W(t)) = sigma^2 min(s, t) (common practice: definition of
    # Brownian motion)
    t = np.linspace(0, 1, 21)
    X = make_brownian_paths(20000, grid=t, sigma=2.0, random_state=0)
    cov = np.cov(X, rowvar=False)
    np.testing.assert_allclose(cov, 4 * np.minimum.outer(t, t), atol=0.12)


def test_brownian_karhunen_loeve_eigenvalues():
    # Eigenvalues of min(s, t) on [0, 1] are 1 / ((k - 1/2) pi)^2 (from memory:
    # Karhunen-Loeve expansion of Brownian motion, e.g. Ash and Gardner 1975).
    t = np.linspace(0, 1, 201)
    X = make_brownian_paths(4000, grid=t, random_state=1)
    w = np.full(t.size, t[1] - t[0])
    cov = np.cov(X, rowvar=False)
    sw = np.sqrt(w)
    eig = np.sort(np.linalg.eigvalsh(sw[:, None] * cov * sw[None, :]))[::-1][:3]
    expected = 1 / ((np.arange(1, 4) - 0.5) * np.pi) ** 2
    np.testing.assert_allclose(eig, expected, rtol=0.1)


def test_brownian_bad_input():
    with pytest.raises(ValueError, match="sigma"):
        make_brownian_paths(3, sigma=0)
    with pytest.raises(ValueError, match="grid"):
        make_brownian_paths(3, grid=[0, 1, 1])
