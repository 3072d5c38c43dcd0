"""Display objects draw what they claim (Agg backend; the drawn data are
compared with numpy, scipy and scikit-learn computations)."""

import sys

import matplotlib
import numpy as np
import pytest
from scipy.stats import norm
from sklearn.decomposition import PCA
from sklearn.linear_model import RidgeCV

import skfunc
from skfunc.datasets import make_kiln_firing, make_smooth_regression
from skfunc.plotting import (
    AlphaCriterionDisplay,
    CoefficientFunctionDisplay,
    ComponentPerturbationDisplay,
    CurveBandDisplay,
)

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


class Fitted:
    """A stand-in fitted estimator holding the attributes a display reads."""

    def __init__(self, **attributes):
        vars(self).update(attributes)


def _vertices(collection):
    return np.vstack([p.vertices for p in collection.get_paths()])


def _contains_points(vertices, x, y):
    pts = np.column_stack([x, y])
    return all(np.any(np.all(np.isclose(vertices, p), axis=1)) for p in pts)


def test_curve_band_draws_numpy_mean_and_two_sd():
    kiln = make_kiln_firing(40, dropout_fraction=0.5, random_state=0)
    X = kiln.data[:, ::10]
    grid = kiln.grid[::10]
    display = CurveBandDisplay.from_data(X, grid=grid, max_curves=5)
    mean, sd = np.nanmean(X, axis=0), np.nanstd(X, axis=0, ddof=1)  # numpy
    assert len(display.curve_lines_) == 5
    np.testing.assert_allclose(display.mean_line_.get_xdata(), grid)
    np.testing.assert_allclose(display.mean_line_.get_ydata(), mean)
    vertices = _vertices(display.band_)
    assert _contains_points(vertices, grid, mean + 2 * sd)
    assert _contains_points(vertices, grid, mean - 2 * sd)
    assert display.ax_.get_legend() is not None
    assert "2 SD" in display.band_.get_label()


def test_curve_band_reads_the_grid_from_dataframe_labels():
    pytest.importorskip("pandas")
    kiln = make_kiln_firing(10, grid=np.arange(0, 600, 30), as_frame=True,
                            random_state=1)
    _, ax = plt.subplots()
    display = CurveBandDisplay.from_data(kiln.data, ax=ax, n_sd=1)
    assert display.ax_ is ax
    np.testing.assert_allclose(display.mean_line_.get_xdata(), np.arange(0, 600, 30))


def test_curve_band_bad_input():
    X = np.ones((1, 5))
    with pytest.raises(ValueError, match="at least 2 curves"):
        CurveBandDisplay.from_data(X)
    X = np.ones((3, 5))
    X[:2, 1] = np.nan
    with pytest.raises(ValueError, match="column 1"):
        CurveBandDisplay.from_data(X)
    with pytest.raises(ValueError, match="max_curves"):
        CurveBandDisplay.from_data(np.ones((3, 5)), max_curves=-1)
    with pytest.raises(ValueError, match="grid"):
        CurveBandDisplay.from_data(np.ones((3, 5)), grid=[0, 1, 2])


def _pca_like_fpca():
    # On an even grid with spacing h, functional PCA with rectangle-rule
    # weights is sklearn's PCA rescaled: eigenfunctions pca.components_ / sqrt(h),
    # variances pca.explained_variance_ * h (common practice).
    t = np.linspace(0, 1, 101)
    X, _, _ = make_smooth_regression(200, grid=t, random_state=0)
    h = t[1] - t[0]
    pca = PCA(n_components=4).fit(X)
    return Fitted(grid_=t, mean_=pca.mean_, components_=pca.components_ / np.sqrt(h),
                  explained_variance_=pca.explained_variance_ * h,
                  explained_variance_ratio_=pca.explained_variance_ratio_)


def test_component_perturbations_are_mean_plus_minus_two_sd():
    fpca = _pca_like_fpca()
    display = ComponentPerturbationDisplay.from_estimator(fpca)
    assert len(display.axes_) == 3  # default: up to 3 components
    for j in range(3):
        shift = 2 * np.sqrt(fpca.explained_variance_[j]) * fpca.components_[j]
        np.testing.assert_allclose(display.mean_lines_[j].get_ydata(), fpca.mean_)
        np.testing.assert_allclose(display.plus_lines_[j].get_ydata(),
                                   fpca.mean_ + shift)
        np.testing.assert_allclose(display.minus_lines_[j].get_ydata(),
                                   fpca.mean_ - shift)
        ratio = 100 * fpca.explained_variance_ratio_[j]
        title = f"Component {j + 1} ({ratio:.1f}% of variance)"
        assert display.axes_[j].get_title() == title


def test_component_perturbations_on_given_axes_and_errors():
    fpca = _pca_like_fpca()
    _, axes = plt.subplots(2, 1)
    display = ComponentPerturbationDisplay.from_estimator(
        fpca, n_components=2, factor=1.0, ax=axes
    )
    assert list(display.axes_) == list(axes)
    shift = np.sqrt(fpca.explained_variance_[1]) * fpca.components_[1]
    np.testing.assert_allclose(display.plus_lines_[1].get_ydata(), fpca.mean_ + shift)
    with pytest.raises(ValueError, match="one Axes per component"):
        ComponentPerturbationDisplay.from_estimator(fpca, n_components=3, ax=axes)
    with pytest.raises(ValueError, match="n_components must be an int from 1 to 4"):
        ComponentPerturbationDisplay.from_estimator(fpca, n_components=5)
    with pytest.raises(ValueError, match="factor"):
        ComponentPerturbationDisplay.from_estimator(fpca, factor=0)
    with pytest.raises(ValueError, match="components_"):
        ComponentPerturbationDisplay.from_estimator(Fitted(grid_=[0, 1]))


def _coef_estimator(n_targets=None):
    t = np.linspace(0, 10, 51)
    coef = np.sin(t) if n_targets is None else np.array([np.sin(t), np.cos(t)])
    se = 0.1 + 0.01 * t

    def confidence_band(level=0.95):
        z = norm.ppf(0.5 + level / 2)  # scipy: two-sided normal quantile
        return coef - z * se, coef + z * se

    return Fitted(grid_=t, coef_function_=coef, confidence_band=confidence_band), se


def test_coefficient_function_with_band_and_reference():
    est, se = _coef_estimator()
    t = est.grid_
    display = CoefficientFunctionDisplay.from_estimator(est, level=0.9,
                                                        reference=np.sin(t) * 1.1)
    np.testing.assert_allclose(display.line_.get_ydata(), np.sin(t))
    z = 1.6448536269514722  # 95th percentile of N(0, 1), from memory
    vertices = _vertices(display.band_)
    assert _contains_points(vertices, t, np.sin(t) + z * se)
    assert _contains_points(vertices, t, np.sin(t) - z * se)
    assert display.band_.get_label() == "90% confidence band"
    np.testing.assert_allclose(display.reference_line_.get_ydata(), 1.1 * np.sin(t))


def test_coefficient_function_picks_a_target_and_checks_input():
    est, _ = _coef_estimator(n_targets=2)
    display = CoefficientFunctionDisplay.from_estimator(est, target=1)
    np.testing.assert_allclose(display.line_.get_ydata(), np.cos(est.grid_))
    assert display.reference_line_ is None
    with pytest.raises(ValueError, match="target must be an int from 0 to 1"):
        CoefficientFunctionDisplay.from_estimator(est, target=2)
    with pytest.raises(ValueError, match="level"):
        CoefficientFunctionDisplay.from_estimator(est, level=1.5)
    with pytest.raises(ValueError, match="one value per grid point"):
        CoefficientFunctionDisplay.from_estimator(est, reference=[1, 2, 3])
    no_band = Fitted(grid_=est.grid_, coef_function_=est.coef_function_)
    with pytest.raises(ValueError, match="confidence_band"):
        CoefficientFunctionDisplay.from_estimator(no_band)


def test_alpha_criterion_matches_sklearn_ridgecv_choice():
    # scikit-learn's RidgeCV picks the alpha with the smallest mean
    # leave-one-out squared error; the display must mark that alpha at the
    # minimum of the drawn curve.
    X, y, _ = make_smooth_regression(60, grid=30, noise=0.3, random_state=0)
    alphas = np.logspace(-4, 2, 13)
    ridge = RidgeCV(alphas=alphas, store_cv_results=True).fit(X, y)
    loo = ridge.cv_results_.mean(axis=0)
    est = Fitted(alphas_path_=alphas, criterion_path_=loo, alpha_=ridge.alpha_,
                 criterion="loo")
    display = AlphaCriterionDisplay.from_estimator(est)
    line = display.lines_[0]
    np.testing.assert_allclose(line.get_xdata(), alphas)
    np.testing.assert_allclose(line.get_ydata(), loo)
    chosen = display.chosen_lines_[0].get_xdata()[0]
    assert chosen == ridge.alpha_ == alphas[np.argmin(line.get_ydata())]
    assert display.ax_.get_xscale() == "log"
    assert display.ax_.get_ylabel() == "LOO (lower is better)"


def test_alpha_criterion_per_curve_rows():
    alphas = np.logspace(-3, 3, 7)
    criterion = (np.log10(alphas)[None, :] - np.arange(4)[:, None] + 1) ** 2
    est = Fitted(alphas_path_=alphas, criterion_path_=criterion, alpha_=alphas[[2, 3, 4, 5]])
    display = AlphaCriterionDisplay.from_estimator(est, max_lines=3,
                                                   criterion_name="GCV")
    assert len(display.lines_) == 3
    np.testing.assert_allclose([c.get_xdata()[0] for c in display.chosen_lines_],
                               alphas[[2, 3, 4]])
    bad = Fitted(alphas_path_=alphas, criterion_path_=criterion[:, :3], alpha_=1.0)
    with pytest.raises(ValueError, match="one value per alpha"):
        AlphaCriterionDisplay.from_estimator(bad)


def test_missing_matplotlib_gives_install_hint(monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    monkeypatch.setitem(sys.modules, "matplotlib.pyplot", None)
    with pytest.raises(ImportError, match="pip install matplotlib"):
        CurveBandDisplay.from_data(np.ones((3, 4)))


def test_real_functional_pca_if_available():
    fpca_cls = getattr(skfunc, "FunctionalPCA", None)
    if fpca_cls is None:
        pytest.skip("FunctionalPCA is not exported yet")
    X, _, _ = make_smooth_regression(80, grid=51, random_state=0)
    fpca = fpca_cls(n_components=2).fit(X)
    display = ComponentPerturbationDisplay.from_estimator(fpca)
    shift = 2 * np.sqrt(fpca.explained_variance_[0]) * fpca.components_[0]
    np.testing.assert_allclose(display.plus_lines_[0].get_ydata(), fpca.mean_ + shift)


def test_function_on_scalar_coefficients_on_the_response_grid():
    from skfunc.linear_model import FunctionOnScalarRidge

    kiln = make_kiln_firing(60, grid=np.arange(0, 600, 10), random_state=0)
    est = FunctionOnScalarRidge(response_grid=kiln.grid).fit(
        kiln.settings, kiln.true_curves
    )
    display = CoefficientFunctionDisplay.from_estimator(est, target=3, level=0.9)
    np.testing.assert_allclose(display.line_.get_xdata(), kiln.grid)
    np.testing.assert_allclose(display.line_.get_ydata(), est.coef_function_[3])
    lower, upper = est.confidence_band(0.9)
    assert _contains_points(_vertices(display.band_), kiln.grid, upper[3])
    with pytest.raises(ValueError, match="grid_ or response_grid_"):
        CoefficientFunctionDisplay.from_estimator(
            Fitted(coef_function_=np.ones(3), confidence_band=lambda level: (0, 0))
        )


def test_real_coefficient_estimators_if_available():
    names = ["FunctionalRidge", "FunctionalRidgeCV"]
    classes = [getattr(skfunc, n) for n in names if hasattr(skfunc, n)]
    if not classes:
        pytest.skip("no functional regression estimator is exported yet")
    X, y, beta = make_smooth_regression(100, grid=51, random_state=0)
    for cls in classes:
        est = cls().fit(X, y)
        display = CoefficientFunctionDisplay.from_estimator(est, reference=beta)
        np.testing.assert_allclose(display.line_.get_ydata(), est.coef_function_)
        if getattr(est, "criterion_path_", None) is not None:
            AlphaCriterionDisplay.from_estimator(est)
