"""Display objects draw what they claim (Agg backend; the drawn data are
compared with numpy, scipy and scikit-learn computations)."""

import inspect
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
    ComponentScoreDisplay,
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
        fpca, n_components=2, n_sd=1.0, ax=axes
    )
    assert list(display.axes_) == list(axes)
    shift = np.sqrt(fpca.explained_variance_[1]) * fpca.components_[1]
    np.testing.assert_allclose(display.plus_lines_[1].get_ydata(), fpca.mean_ + shift)
    with pytest.raises(ValueError, match="one Axes per component"):
        ComponentPerturbationDisplay.from_estimator(fpca, n_components=3, ax=axes)
    with pytest.raises(ValueError, match="n_components must be an int from 1 to 4"):
        ComponentPerturbationDisplay.from_estimator(fpca, n_components=5)
    with pytest.raises(ValueError, match="n_sd"):
        ComponentPerturbationDisplay.from_estimator(fpca, n_sd=0)
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
    assert display.ax_.get_ylabel() == "leave-one-out error (lower is better)"
    assert display.ax_.get_title() == "leave-one-out over the candidate penalties"


def test_alpha_criterion_per_target_rows():
    alphas = np.logspace(-3, 3, 7)
    criterion = (np.log10(alphas)[None, :] - np.arange(4)[:, None] + 1) ** 2
    est = Fitted(alphas_path_=alphas, criterion_path_=criterion, alpha_=alphas[[2, 3, 4, 5]])
    display = AlphaCriterionDisplay.from_estimator(est, max_lines=3,
                                                   criterion_name="GCV")
    assert len(display.lines_) == 3
    assert [line.get_label() for line in display.lines_] == [
        "target 0", "target 1", "target 2"]
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


def test_curve_band_says_when_max_curves_left_curves_out():
    kiln = make_kiln_firing(61, random_state=0)
    display = CurveBandDisplay.from_data(kiln.data, grid=kiln.grid, max_curves=50)
    assert len(display.curve_lines_) == 50
    labels = display.ax_.get_legend_handles_labels()[1]
    assert "50 of 61 curves drawn" in labels
    assert display.ax_.get_title() == "61 curves: mean \u00b1 2 SD (50 drawn)"
    every = CurveBandDisplay.from_data(kiln.data, grid=kiln.grid, max_curves=100)
    assert "61 curves" in every.ax_.get_legend_handles_labels()[1]
    assert "drawn" not in every.ax_.get_title()


def _kiln_fpca_and_curves(n_runs=25):
    kiln = make_kiln_firing(n_runs, grid=np.arange(0, 600, 5), dropout_fraction=0.0,
                            random_state=0)
    fpca = skfunc.FunctionalPCA(n_components=3, grid=kiln.grid).fit(kiln.data)
    return kiln, fpca


def _every_display(kiln, fpca):
    """One display of each kind, drawn on figures the displays make."""
    ridge = skfunc.FunctionalRidgeCV(grid=kiln.grid).fit(kiln.data, kiln.strength)
    per_curve = skfunc.CurveSmoother(grid=kiln.grid, per_curve=True).fit(kiln.data)
    return {
        "band": CurveBandDisplay.from_data(kiln.data, grid=kiln.grid),
        "components": ComponentPerturbationDisplay.from_estimator(fpca),
        "scores": ComponentScoreDisplay.from_estimator(
            fpca, kiln.data, highlight=[0, 1], color=kiln.strength,
            color_label="strength (MPa)"),
        "coefficient": CoefficientFunctionDisplay.from_estimator(ridge),
        "criterion": AlphaCriterionDisplay.from_estimator(ridge),
        "per_curve": AlphaCriterionDisplay.from_estimator(per_curve, kiln.data[:12]),
    }


@pytest.mark.slow
def test_every_display_is_labelled_unclipped_and_keeps_legends_off_the_curves(
        tmp_path):
    kiln, fpca = _kiln_fpca_and_curves()
    for name, display in _every_display(kiln, fpca).items():
        figure = display.figure_
        # figures the displays make use constrained layout (matplotlib's engine
        # that keeps labels, titles and outside legends inside the figure)
        assert type(figure.get_layout_engine()).__name__ == "ConstrainedLayoutEngine"
        path = tmp_path / f"{name}.png"
        figure.savefig(path, dpi=40)  # the PNGs were looked at while writing this
        assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        figure.canvas.draw()
        renderer = figure.canvas.get_renderer()
        page = figure.bbox
        axes = getattr(display, "axes_", None)
        axes = [display.ax_] if axes is None else list(axes)
        for ax in axes:
            assert ax.get_title() and ax.get_xlabel(), (name, ax.get_title())
            texts = [ax.title, ax.xaxis.label, ax.yaxis.label]
            for text in texts:
                if text.get_text():
                    box = text.get_window_extent(renderer)
                    # nothing clipped: every label lies inside the saved page
                    assert page.x0 - 1 <= box.x0 and box.x1 <= page.x1 + 1, name
                    assert page.y0 - 1 <= box.y0 and box.y1 <= page.y1 + 1, name
        assert axes[0].get_ylabel(), name
        legends = [ax.get_legend() for ax in axes if ax.get_legend() is not None]
        assert legends, name
        for legend in legends:
            box = legend.get_window_extent(renderer)
            for ax in axes:
                # the legend sits beside the plotting areas, not over them
                assert not box.overlaps(ax.get_window_extent(renderer)), name
            assert box.x1 <= page.x1 + 1, name


def test_constructors_are_keyword_only_and_n_sd_is_the_one_name():
    displays = [CurveBandDisplay, ComponentPerturbationDisplay, ComponentScoreDisplay,
                CoefficientFunctionDisplay, AlphaCriterionDisplay]
    for cls in displays:
        params = list(inspect.signature(cls.__init__).parameters.values())[1:]
        assert all(p.kind is p.KEYWORD_ONLY for p in params), cls.__name__
    for cls in displays:
        for method in ("__init__", "from_data", "from_estimator"):
            if hasattr(cls, method):
                names = inspect.signature(getattr(cls, method)).parameters
                assert "factor" not in names, (cls.__name__, method)
    assert "n_sd" in inspect.signature(CurveBandDisplay.from_data).parameters
    assert "n_sd" in inspect.signature(
        ComponentPerturbationDisplay.from_estimator).parameters


def test_criterion_is_named_from_the_estimator():
    kiln = make_kiln_firing(15, random_state=0)
    smoother = skfunc.CurveSmoother(grid=kiln.grid).fit(kiln.data)
    display = AlphaCriterionDisplay.from_estimator(smoother)
    assert display.ax_.get_ylabel() == "GCV score (lower is better)"
    assert "GCV" in display.lines_[0].get_label()
    from skfunc.linear_model import FunctionOnScalarRidge

    fosr = FunctionOnScalarRidge(response_grid=kiln.grid).fit(
        kiln.settings, kiln.true_curves)
    assert AlphaCriterionDisplay.from_estimator(fosr).criterion_name == "GCV"
    reml = Fitted(alphas_path_=np.array([1.0, 2.0]), criterion_path_=np.array([2.0, 1.0]),
                  alpha_=2.0, criterion="reml")
    assert AlphaCriterionDisplay.from_estimator(reml).ax_.get_ylabel() == (
        "REML score (lower is better)")
    folds = skfunc.FunctionalRidgeCV(grid=kiln.grid, cv=3).fit(
        kiln.true_curves, kiln.strength)
    assert AlphaCriterionDisplay.from_estimator(folds).ax_.get_ylabel() == (
        "cross-validated error (lower is better)")


def test_per_curve_choices_are_drawn_as_their_distribution():
    kiln = make_kiln_firing(30, random_state=0)
    smoother = skfunc.CurveSmoother(grid=kiln.grid, per_curve=True).fit(kiln.data)
    chosen = smoother.choose_alphas(kiln.data)
    display = AlphaCriterionDisplay.from_estimator(smoother, kiln.data)
    heights = np.array([bar.get_height() for bar in display.bars_])
    # one bar per candidate; numpy counts how often each candidate was chosen
    expected = np.array([np.sum(np.isclose(chosen, a, rtol=1e-9, atol=0))
                         for a in smoother.alphas_path_])
    np.testing.assert_array_equal(heights, expected)
    assert heights.sum() == len(kiln.data)
    assert display.lines_ == []  # no pooled curve marked as "the" choice
    assert display.chosen_lines_[0].get_xdata()[0] == np.median(chosen)  # numpy
    with pytest.raises(ValueError, match="pass the curves X"):
        AlphaCriterionDisplay.from_estimator(smoother)


def test_score_display_draws_sklearn_pca_scores_and_labels_chosen_curves():
    fpca = _pca_like_fpca()
    t = fpca.grid_
    X, _, _ = make_smooth_regression(200, grid=t, random_state=0)
    h = t[1] - t[0]
    pca = PCA(n_components=4).fit(X)
    # rectangle-rule functional PCA scores are sklearn's scores times sqrt(h)
    # (common practice; see _pca_like_fpca)
    fpca.transform = lambda Z: pca.transform(Z) * np.sqrt(h)
    names = np.array([f"run {i}" for i in range(len(X))])
    display = ComponentScoreDisplay.from_estimator(
        fpca, X, components=(0, 2), labels=names, highlight=[5, 17])
    expected = pca.transform(X)[:, [0, 2]] * np.sqrt(h)
    np.testing.assert_allclose(display.points_.get_offsets(), expected)
    assert [a.get_text() for a in display.annotations_] == ["run 5", "run 17"]
    np.testing.assert_allclose([a.xy for a in display.annotations_], expected[[5, 17]])
    ratio = 100 * fpca.explained_variance_ratio_[2]
    assert display.ax_.get_ylabel() == f"component 3 score ({ratio:.1f}% of variance)"
    mask = np.zeros(len(X), dtype=bool)
    mask[[3, 4]] = True
    by_mask = ComponentScoreDisplay.from_estimator(fpca, X, highlight=mask)
    assert [a.get_text() for a in by_mask.annotations_] == ["3", "4"]
    with pytest.raises(ValueError, match="two different ints from 0 to 3"):
        ComponentScoreDisplay.from_estimator(fpca, X, components=(1, 1))
    with pytest.raises(ValueError, match="highlight"):
        ComponentScoreDisplay.from_estimator(fpca, X, highlight=[200])
    with pytest.raises(ValueError, match="labels"):
        ComponentScoreDisplay.from_estimator(fpca, X, labels=["a"])
    with pytest.raises(ValueError, match="color"):
        ComponentScoreDisplay.from_estimator(fpca, X, color=[1.0, 2.0])
