"""Tests of skfunc.metrics against scikit-learn, scipy and closed forms."""

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import simpson, trapezoid
from sklearn.dummy import DummyRegressor
from sklearn.metrics import r2_score
from sklearn.model_selection import GridSearchCV, cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from skfunc._weights import check_sample_weight
from skfunc.linear_model import FunctionOnScalarRidge
from skfunc.metrics import (
    integrated_r2_score,
    integrated_r2_scorer,
    integrated_squared_error,
    make_curve_scorer,
    neg_integrated_squared_error_scorer,
    pointwise_r2_score,
)


def jittered(m, rng):
    """Uneven grid on [0, 1]: interior points moved by up to 15% of the even
    spacing, so neighbouring spacings differ by less than a factor 2 and the
    uneven Simpson weights s/6 (2 - h1/h0) stay positive."""
    t = np.linspace(0, 1, m)
    t[1:-1] += rng.uniform(-0.15, 0.15, m - 2) / (m - 1)
    return t


@pytest.fixture
def curves(rng):
    t = jittered(31, rng)
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
    # rtol: the same rule in a different summation order (rounding only)
    assert_allclose(got, 1 - sse / sst, rtol=1e-10)
    ise = integrate((y_true - y_pred) ** 2, x=t, axis=1)
    assert_allclose(
        integrated_squared_error(y_true, y_pred, grid=t, quadrature=rule,
                                 sample_weight=w),
        w @ ise / w.sum(), rtol=1e-10,
    )


@pytest.mark.parametrize(
    "rule, integrate", [("trapezoid", trapezoid), ("simpson", simpson)]
)
def test_per_curve_values_match_scipy_quadrature(curves, rng, rule, integrate):
    # Per curve i: ISE_i = int (y_i - y_hat_i)^2 dt and
    # R^2_i = 1 - ISE_i / int (y_i - y_bar)^2 dt, y_bar the weighted mean curve,
    # integrated with scipy.integrate.trapezoid / simpson on the uneven grid.
    t, y_true, y_pred = curves
    w = rng.uniform(0.5, 2, y_true.shape[0])
    ise = integrate((y_true - y_pred) ** 2, x=t, axis=1)
    variance = integrate((y_true - np.average(y_true, axis=0, weights=w)) ** 2, x=t,
                         axis=1)
    kw = dict(grid=t, quadrature=rule, multioutput="raw_values")
    # rtol: the same rule in a different summation order (rounding only)
    raw_ise = integrated_squared_error(y_true, y_pred, sample_weight=w, **kw)
    assert raw_ise.shape == (y_true.shape[0],)
    assert_allclose(raw_ise, ise, rtol=1e-10)
    raw_r2 = integrated_r2_score(y_true, y_pred, sample_weight=w, **kw)
    assert_allclose(raw_r2, 1 - ise / variance, rtol=1e-10)
    # without weights the mean curve is the plain mean; this fails if the
    # weights were ignored in y_bar above (weights from 0.5 to 2 move it)
    variance = integrate((y_true - y_true.mean(axis=0)) ** 2, x=t, axis=1)
    assert_allclose(integrated_r2_score(y_true, y_pred, **kw), 1 - ise / variance,
                    rtol=1e-10)
    assert not np.allclose(raw_r2, 1 - ise / variance, rtol=1e-6)


def test_averages_of_per_curve_values_are_the_aggregates(curves, rng):
    # Definitions: the ISE aggregate is the (weighted) mean of the ISE_i; the
    # default R^2 is 1 - sum_i w_i ISE_i / sum_i w_i V_i, the mean of R^2_i
    # weighted by w_i V_i (as scikit-learn's "variance_weighted"), with V_i
    # computed here by scipy.integrate.trapezoid; "uniform_average" is the
    # (weighted) mean of R^2_i. rtol: rounding of sums of 12 x 31 terms.
    t, y_true, y_pred = curves
    w = rng.uniform(0.5, 2, y_true.shape[0])
    for sw in (None, w):
        weights = np.ones(len(y_true)) if sw is None else sw
        raw = integrated_squared_error(y_true, y_pred, grid=t, sample_weight=sw,
                                       multioutput="raw_values")
        assert_allclose(np.average(raw, weights=weights),
                        integrated_squared_error(y_true, y_pred, grid=t,
                                                 sample_weight=sw), rtol=1e-12)
        assert_allclose(
            integrated_squared_error(y_true, y_pred, grid=t, sample_weight=sw,
                                     multioutput="uniform_average"),
            integrated_squared_error(y_true, y_pred, grid=t, sample_weight=sw))
        r2 = integrated_r2_score(y_true, y_pred, grid=t, sample_weight=sw,
                                 multioutput="raw_values")
        variance = trapezoid(
            (y_true - np.average(y_true, axis=0, weights=weights)) ** 2, x=t, axis=1)
        default = integrated_r2_score(y_true, y_pred, grid=t, sample_weight=sw)
        assert_allclose(np.average(r2, weights=weights * variance), default,
                        rtol=1e-12)
        assert default == integrated_r2_score(y_true, y_pred, grid=t, sample_weight=sw,
                                              multioutput="variance_weighted")
        uniform = integrated_r2_score(y_true, y_pred, grid=t, sample_weight=sw,
                                      multioutput="uniform_average")
        assert_allclose(uniform, np.average(r2, weights=weights), rtol=1e-12)
        # the two averages differ here (curves of unequal variance), so
        # swapping them fails
        assert abs(uniform - default) > 1e-3


def test_per_curve_r2_conventions(rng):
    # Definition of R^2_i: the mean curve scores 0 for every curve, a perfect
    # prediction 1; a curve equal to the mean curve (V_i = 0) follows
    # scikit-learn's constant-target convention: 1 if exact, else 0.
    t = np.linspace(0, 1, 21)
    a = np.sin(2 * np.pi * t) + rng.normal(size=t.size)
    y_true = np.vstack([a, np.zeros_like(t), -a])  # mean curve 0, exactly
    raw = dict(grid=t, multioutput="raw_values")
    assert_allclose(integrated_r2_score(y_true, np.zeros_like(y_true), **raw),
                    [0.0, 1.0, 0.0])
    assert_allclose(integrated_r2_score(y_true, y_true, **raw), [1.0, 1.0, 1.0])
    assert_allclose(integrated_r2_score(y_true, y_true + 0.1, **raw)[1], 0.0)
    flat = np.full((3, 4), 0.1)  # a constant within rounding of its mean
    assert_allclose(integrated_r2_score(flat, flat + 0.1, multioutput="raw_values"),
                    [0.0, 0.0, 0.0])


@pytest.mark.parametrize("score", [integrated_r2_score, integrated_squared_error])
@pytest.mark.parametrize("bad", ["raw", "Raw_values", None, ["raw_values"],
                                 np.array(["raw_values"]), 1])
def test_bad_multioutput(curves, score, bad):
    t, y_true, y_pred = curves
    with pytest.raises(ValueError, match="multioutput must be one of .*'raw_values'"):
        score(y_true, y_pred, multioutput=bad)


def test_squared_error_has_no_variance_weighted_average(curves):
    # a variance-weighted mean of squared errors is not a defined average
    t, y_true, y_pred = curves
    with pytest.raises(ValueError, match=r"multioutput must be one of \('raw_values', "
                       r"'uniform_average'\); got 'variance_weighted'"):
        integrated_squared_error(y_true, y_pred, multioutput="variance_weighted")


def test_integrated_r2_of_mean_curve_and_perfect_prediction(curves):
    # Definition of R^2 (as sklearn.metrics.r2_score): 1 for a perfect
    # prediction, 0 for the mean curve.
    t, y_true, _ = curves
    mean = np.tile(y_true.mean(axis=0), (y_true.shape[0], 1))
    assert integrated_r2_score(y_true, y_true, grid=t) == 1.0
    # 1e-12: rounding of SSE and SST (sums of 12 x 31 terms of size 1)
    assert abs(integrated_r2_score(y_true, mean, grid=t)) < 1e-12
    flat = np.ones((3, 4))
    assert integrated_r2_score(flat, flat) == 1.0
    assert integrated_r2_score(flat, flat + 1) == 0.0


def test_integrated_squared_error_closed_form_and_resolution():
    # int_0^1 (e^t)^2 dt = (e^2 - 1)/2 (closed form). The integrand is 1 and e^2 at
    # the ends, so a wrong end weight (h instead of h/2: an error near
    # h (1 + e^2)/2 >= 4e-3 here) fails. Tolerance: the trapezoid error bound
    # (b - a) h_max^2 / 12 max|f''| with f'' = 4 e^2t <= 4 e^2 (Davis and
    # Rabinowitz 1984, sec. 2.1).
    rng = np.random.default_rng(2)
    grids = [np.linspace(0, 1, 201), np.linspace(0, 1, 1001),
             np.sort(np.concatenate([[0, 1], rng.uniform(0, 1, 199)]))]
    for t in grids:
        diff = np.exp(t)[None]
        value = integrated_squared_error(diff, np.zeros_like(diff), grid=t)
        bound = np.diff(t).max() ** 2 / 12 * 4 * np.exp(2)
        assert abs(value - (np.exp(2) - 1) / 2) <= bound
        assert bound < np.diff(t)[-1] * (1 + np.exp(2)) / 2


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
    # the training-fold mean cannot beat the test-fold mean (R^2 <= 0), up to
    # rounding of sums of about 10 x 31 terms (1e-12)
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
    with pytest.raises(ValueError, match="Expected 2D array for y_true"):
        pointwise_r2_score(y_true[0], y_pred[0])
    with pytest.raises(ValueError, match="NaN"):
        integrated_r2_score(np.full_like(y_true, np.nan), y_pred)
    with pytest.raises(TypeError, match="score_func must be callable"):
        make_curve_scorer("r2")
    with pytest.raises(TypeError, match="y_pred must hold real curve values"):
        integrated_r2_score(y_true, y_pred + 1j)
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        integrated_squared_error(y_true, y_pred, grid=t + 0j)
    with pytest.raises(TypeError, match="sample_weight must hold real numbers"):
        integrated_squared_error(y_true, y_pred, sample_weight=["a"] * len(y_true))


@pytest.mark.parametrize("score", [integrated_r2_score, integrated_squared_error,
                                   pointwise_r2_score])
@pytest.mark.parametrize("weights, message", [
    ("negative", "sample_weight must be non-negative"),
    ("zeros", "sample_weight is zero for every row"),
    ("short", "sample_weight has 11 values but y_true has 12 rows"),
    ("nan", "sample_weight must be finite"),
])
def test_sample_weight_rule(curves, score, weights, message):
    # One rule for every weight in skfunc (skfunc._weights.check_sample_weight):
    # negative weights gave inf/NaN scores before, all-zero weights NaN.
    t, y_true, y_pred = curves
    w = {"negative": -np.ones(len(y_true)), "zeros": np.zeros(len(y_true)),
         "short": np.ones(len(y_true) - 1),
         "nan": np.r_[np.nan, np.ones(len(y_true) - 1)]}[weights]
    with pytest.raises(ValueError, match=message):
        score(y_true, y_pred, sample_weight=w)


def test_sample_weight_message_is_the_shared_one(curves):
    t, y_true, y_pred = curves
    w = -np.ones(len(y_true))
    with pytest.raises(ValueError) as from_metric:
        integrated_r2_score(y_true, y_pred, sample_weight=w)
    with pytest.raises(ValueError) as from_rule:
        check_sample_weight(w, y_true, data_name="y_true")
    assert str(from_metric.value) == str(from_rule.value)


def test_simpson_refused_where_its_weights_are_negative():
    # the composite Simpson weights on this grid include -1.02
    g = np.array([0, .0276, .1442, .3118, .4092, .4233, .5118, .5496, .8277, .9486,
                  .9505, 1])
    y = np.vstack([np.sin(3 * g), np.cos(g)])
    with pytest.raises(ValueError, match="negative weight.*quadrature='trapezoid'"):
        integrated_squared_error(y, 0 * y, grid=g, quadrature="simpson")
    assert integrated_squared_error(y, 0 * y, grid=g) > 0


@pytest.mark.parametrize("scale", [1e160, 1e-200])
def test_scores_at_extreme_scales(curves, scale):
    # R^2 is scale-free (definition); at 1e160 the squared values overflow to inf,
    # at 1e-200 they underflow to 0, unless the values are scaled first.
    # rtol: a few rounding steps.
    t, y_true, y_pred = curves
    assert_allclose(integrated_r2_score(scale * y_true, scale * y_pred, grid=t),
                    integrated_r2_score(y_true, y_pred, grid=t), rtol=1e-12)
    assert_allclose(pointwise_r2_score(scale * y_true, scale * y_pred),
                    r2_score(y_true, y_pred, multioutput="raw_values"), rtol=1e-12)
    assert_allclose(
        integrated_r2_score(scale * y_true, scale * y_pred, grid=t,
                            multioutput="raw_values"),
        integrated_r2_score(y_true, y_pred, grid=t, multioutput="raw_values"),
        rtol=1e-12)


def test_squared_error_at_large_scale(curves):
    # the squared error scales with s^2 (definition) and is representable at
    # s = 1e150 (about 1e300); reference scipy.integrate.trapezoid at scale 1
    t, y_true, y_pred = curves
    assert_allclose(
        integrated_squared_error(1e150 * y_true, 1e150 * y_pred, grid=t) / 1e300,
        trapezoid((y_true - y_pred) ** 2, x=t, axis=1).mean(), rtol=1e-12)


def test_pointwise_r2_of_one_column(rng):
    # a one-point "curve" needs no grid; reference sklearn.metrics.r2_score
    y_true, y_pred = rng.normal(size=(8, 1)), rng.normal(size=(8, 1))
    assert_allclose(pointwise_r2_score(y_true, y_pred),
                    r2_score(y_true, y_pred, multioutput="raw_values"))


def test_constant_column_within_rounding_scores_by_the_convention():
    # The weighted mean of three 0.1s is 0.1 + 1.4e-17, so scikit-learn's r2_score
    # sees SST = 6e-34 and returns -5.2e31; the documented convention for a
    # constant true column (0 unless predicted exactly, 1 if so) applies instead.
    y_true = np.array([[0.1, 1.0], [0.1, 2.0], [0.1, 4.0]])
    y_pred = np.array([[0.2, 1.0], [0.2, 2.0], [0.2, 4.0]])
    assert r2_score(y_true[:, :1], y_pred[:, :1]) < -1e30  # what scikit-learn gives
    assert_allclose(pointwise_r2_score(y_true, y_pred), [0.0, 1.0])
    y_exact = y_pred.copy()
    y_exact[:, 0] = 0.1
    assert_allclose(pointwise_r2_score(y_true, y_exact, sample_weight=[0.3, 0.3, 0.7]),
                    [1.0, 1.0])
    flat = np.full((3, 4), 0.1)
    assert integrated_r2_score(flat, flat + 0.1) == 0.0


ROWS = st.integers(2, 6)


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), counts=st.lists(st.integers(0, 3), min_size=2,
                                                        max_size=6))
@pytest.mark.slow
def test_weight_two_equals_a_duplicated_row(seed, counts):
    # scikit-learn's meaning of sample weights (frequencies): integer weight k
    # gives the score of the data with that row repeated k times (0: dropped).
    assume(sum(c > 0 for c in counts) >= 2)
    rng = np.random.default_rng(seed)
    t = jittered(9, rng)
    y_true = rng.normal(size=(len(counts), t.size))
    y_pred = y_true + rng.normal(size=y_true.shape)
    rows = np.repeat(np.arange(len(counts)), counts)
    first = np.unique(rows, return_index=True)[1]  # a copy of each kept row
    kept = np.asarray(counts) > 0
    for score in (integrated_r2_score, integrated_squared_error):
        for rule in ("trapezoid", "simpson"):
            # rtol: sums of at most 18 rows in a different order
            assert_allclose(
                score(y_true, y_pred, grid=t, quadrature=rule, sample_weight=counts),
                score(y_true[rows], y_pred[rows], grid=t, quadrature=rule), rtol=1e-10)
            assert_allclose(
                score(y_true, y_pred, grid=t, quadrature=rule, sample_weight=counts,
                      multioutput="uniform_average"),
                score(y_true[rows], y_pred[rows], grid=t, quadrature=rule,
                      multioutput="uniform_average"), rtol=1e-10)
            # raw values: one per row, the repeated rows' values unchanged
            assert_allclose(
                score(y_true, y_pred, grid=t, quadrature=rule, sample_weight=counts,
                      multioutput="raw_values")[kept],
                score(y_true[rows], y_pred[rows], grid=t, quadrature=rule,
                      multioutput="raw_values")[first], rtol=1e-10)
    assert_allclose(pointwise_r2_score(y_true, y_pred, sample_weight=counts),
                    pointwise_r2_score(y_true[rows], y_pred[rows]), rtol=1e-10,
                    atol=1e-12)
