"""Tests of skfunc.metrics against scikit-learn, scipy and closed forms."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.integrate import simpson, trapezoid
from sklearn.dummy import DummyRegressor
from sklearn.metrics import r2_score
from sklearn.model_selection import GridSearchCV, cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from skfunc.linear_model import FunctionOnScalarRidge
from skfunc.metrics import (
    integrated_r2_score,
    integrated_r2_scorer,
    integrated_squared_error,
    make_curve_scorer,
    neg_integrated_squared_error_scorer,
    pointwise_r2_score,
)


@pytest.fixture
def curves(rng):
    t = np.sort(np.concatenate([[0, 1], rng.uniform(0, 1, 29)]))
    y_true = np.sin(2 * np.pi * t) + rng.normal(size=(12, t.size))
    y_pred = y_true + 0.5 * rng.normal(size=y_true.shape)
    return t, y_true, y_pred


def test_pointwise_r2_equals_sklearn_raw_values(curves, rng):
    # sklearn.metrics.r2_score(multioutput="raw_values"), with sample weights
    t, y_true, y_pred = curves
    w = rng.uniform(0.5, 2, y_true.shape[0])
    assert_allclose(pointwise_r2_score(y_true, y_pred),
                    r2_score(y_true, y_pred, multioutput="raw_values"))
    assert_allclose(pointwise_r2_score(y_true, y_pred, sample_weight=w),
                    r2_score(y_true, y_pred, multioutput="raw_values", sample_weight=w))


def test_pointwise_r2_constant_point_follows_sklearn(curves):
    # sklearn's r2_score convention (force_finite=True): a constant true
    # column scores 1 if predicted exactly, else 0.
    t, y_true, y_pred = curves
    y_true = y_true.copy()
    y_true[:, 0] = 3.0
    y_pred = y_pred.copy()
    y_pred[:, 0] = 3.0
    y_pred[:, 1] = y_true[:, 1]
    expected = r2_score(y_true, y_pred, multioutput="raw_values")
    assert_allclose(pointwise_r2_score(y_true, y_pred), expected)
    y_pred[:, 0] = 2.0
    assert pointwise_r2_score(y_true, y_pred)[0] == 0.0


@pytest.mark.parametrize(
    "rule, integrate", [("trapezoid", trapezoid), ("simpson", simpson)]
)
def test_integrated_scores_match_scipy_quadrature(curves, rng, rule, integrate):
    # 1 - int SSE(t) dt / int SST(t) dt and mean_i int (y - y_hat)^2 dt,
    # integrated with scipy.integrate.trapezoid / simpson on the uneven grid.
    t, y_true, y_pred = curves
    w = rng.uniform(0.5, 2, y_true.shape[0])
    mean = w @ y_true / w.sum()
    sse = integrate(w @ (y_true - y_pred) ** 2, x=t)
    sst = integrate(w @ (y_true - mean) ** 2, x=t)
    got = integrated_r2_score(y_true, y_pred, grid=t, quadrature=rule, sample_weight=w)
    assert_allclose(got, 1 - sse / sst, rtol=1e-10)
    ise = integrate((y_true - y_pred) ** 2, x=t, axis=1)
    assert_allclose(
        integrated_squared_error(y_true, y_pred, grid=t, quadrature=rule,
                                 sample_weight=w),
        w @ ise / w.sum(), rtol=1e-10,
    )


def test_integrated_r2_of_mean_curve_and_perfect_prediction(curves):
    # Definition of R^2 (as sklearn.metrics.r2_score): 1 for a perfect
    # prediction, 0 for the mean curve.
    t, y_true, _ = curves
    mean = np.tile(y_true.mean(axis=0), (y_true.shape[0], 1))
    assert integrated_r2_score(y_true, y_true, grid=t) == 1.0
    assert abs(integrated_r2_score(y_true, mean, grid=t)) < 1e-12
    flat = np.ones((3, 4))
    assert integrated_r2_score(flat, flat) == 1.0
    assert integrated_r2_score(flat, flat + 1) == 0.0


def test_integrated_squared_error_closed_form_and_resolution():
    # int_0^1 sin^2(2 pi t) dt = 1/2 (closed form, common practice); the same
    # value on 201, 1001 and uneven grids within the quadrature error.
    rng = np.random.default_rng(2)
    grids = [np.linspace(0, 1, 201), np.linspace(0, 1, 1001),
             np.sort(np.concatenate([[0, 1], rng.uniform(0, 1, 199)]))]
    for t in grids:
        diff = np.sin(2 * np.pi * t)[None]
        value = integrated_squared_error(diff, np.zeros_like(diff), grid=t)
        assert abs(value - 0.5) < 1e-3


def test_scorers_in_model_selection(rng):
    t = np.linspace(0, 10, 31)
    X = rng.normal(size=(40, 2))
    Y = np.sin(t / 3) + X @ np.vstack([np.cos(t / 5), t / 10]) + 0.1 * rng.normal(
        size=(40, 31))
    model = FunctionOnScalarRidge(alpha=1e-3, response_grid=t).fit(X, Y)
    # the scorer reads the grid from the fitted estimator (or a pipeline's last
    # step) and equals the estimator's own score
    assert_allclose(integrated_r2_scorer(model, X, Y), model.score(X, Y))
    pipe = make_pipeline(StandardScaler(), FunctionOnScalarRidge(response_grid=t))
    pipe.fit(X, Y)
    assert_allclose(
        neg_integrated_squared_error_scorer(pipe, X, Y),
        -integrated_squared_error(Y, pipe.predict(X), grid=t),
    )
    search = GridSearchCV(FunctionOnScalarRidge(response_grid=t),
                          {"alpha": [1e-4, 1e6]}, scoring=integrated_r2_scorer, cv=4)
    assert search.fit(X, Y).best_params_ == {"alpha": 1e-4}
    # works for any regressor predicting curves, grid given explicitly
    scorer = make_curve_scorer(integrated_r2_score, grid=t)
    dummy = cross_val_score(DummyRegressor(), X, Y, scoring=scorer, cv=4)
    assert np.all(dummy <= 0.0 + 1e-12)
    assert "greater_is_better=False" in repr(neg_integrated_squared_error_scorer)


def test_scorer_reads_dataframe_labels(rng):
    pd = pytest.importorskip("pandas")
    t = np.array([0.0, 0.1, 0.5, 2.0])
    y = pd.DataFrame(rng.normal(size=(6, 4)), columns=t)
    model = DummyRegressor().fit(np.zeros((6, 1)), y)
    pred = model.predict(np.zeros((6, 1)))
    expected = integrated_r2_score(y.to_numpy(), pred, grid=t)
    assert_allclose(integrated_r2_scorer(model, np.zeros((6, 1)), y), expected)


def test_bad_input(curves):
    t, y_true, y_pred = curves
    with pytest.raises(ValueError, match="same shape"):
        integrated_r2_score(y_true, y_pred[:, 1:])
    with pytest.raises(ValueError, match="grid has 5 points but y_true has"):
        integrated_squared_error(y_true, y_pred, grid=np.linspace(0, 1, 5))
    with pytest.raises(ValueError, match="Expected 2D array"):
        pointwise_r2_score(y_true[0], y_pred[0])
    with pytest.raises(ValueError, match="NaN"):
        integrated_r2_score(np.full_like(y_true, np.nan), y_pred)
    with pytest.raises(TypeError, match="score_func must be callable"):
        make_curve_scorer("r2")
