"""A battery of bad inputs: every one must end in skfunc's own words.

Each case is a call that must either

* raise ``ValueError`` or ``TypeError`` (or one of skfunc's subclasses, or an
  ``OSError`` for file cases) whose message names the argument at fault, or
* where the input is valid but extreme (values near 1e300 or 1e-170), return
  only finite results.

:func:`classify` sorts what happened into one of the outcomes below; a case
passes only with the outcome it expects. Third-party error types and
messages (numpy's ``LinAlgError``, ``MemoryError``, broadcasting or
"setting an array element" messages) and non-finite results handed back
without an error never pass.

The functions' table covers :mod:`skfunc.hilbert`, :mod:`skfunc.metrics` and
:mod:`skfunc.persistence`; the estimators' table runs over
``skfunc.utils.all_estimators()`` with each estimator's data factory from
``tests/conftest.py``, so a new estimator is covered when it is exported.
Known failures are listed in ``KNOWN_ESTIMATOR_FAILURES`` with the reason;
they are strict expected failures, so a fix makes them fail until removed.
"""

import inspect
import warnings

import joblib
import numpy as np
import pytest
from conftest import make_case
from sklearn.base import clone
from sklearn.linear_model import Ridge

from skfunc import hilbert, metrics, outliers
from skfunc._alpha import AlphaAtEdgeWarning
from skfunc.persistence import load_model, save_model
from skfunc.utils import all_estimators

CLEAR = "clear error naming the argument"
UNNAMED = "error of the right type whose message does not name the argument"
OBSCURE = "third-party error type or message"
NONFINITE = "non-finite result without an error"
ACCEPTED = "accepted with finite results"

#: messages that come from numpy/scipy internals rather than from skfunc
FOREIGN_MESSAGES = (
    "could not be broadcast",
    "setting an array element with a sequence",
    "Unable to allocate",
    "did not converge",
    "Singular matrix",
    "not positive definite",
    "could not convert",
    "unsupported operand",
    "object of type",
    "has no attribute",
    "index out of bounds",
    "not supported between instances",
)
CLEAR_TYPES = (ValueError, TypeError, OSError)
FOREIGN_TYPES = (np.linalg.LinAlgError, MemoryError, FloatingPointError,
                 IndexError, KeyError, AttributeError, ZeroDivisionError)


def _finite(result):
    """True when every number in ``result`` (nested tuples/lists/dicts of
    arrays and scalars, or an estimator's fitted float arrays) is finite."""
    if isinstance(result, dict):
        return all(_finite(v) for v in result.values())
    if isinstance(result, (tuple, list)):
        return all(_finite(v) for v in result)
    if hasattr(result, "get_params"):  # a fitted estimator: its fitted state
        return _finite({k: v for k, v in vars(result).items() if k.endswith("_")})
    arr = np.asarray(result) if np.isscalar(result) or isinstance(result, np.ndarray) \
        else None
    if arr is None or arr.dtype.kind not in "fc":
        return True
    return bool(np.all(np.isfinite(arr)))


def classify(call, names):
    """Run ``call()`` and say what happened (one of the outcomes above).

    ``names`` are the words of which at least one must appear in an error
    message (the argument's name, or the thing at fault).
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # warnings alone are not an outcome
        try:
            result = call()
        except Exception as exc:  # the point is to sort every exception
            return _classify_error(exc, names), exc
    return (ACCEPTED if _finite(result) else NONFINITE), result


def _classify_error(exc, names):
    message = str(exc)
    if isinstance(exc, FOREIGN_TYPES) or any(m in message for m in FOREIGN_MESSAGES):
        return OBSCURE
    if not isinstance(exc, CLEAR_TYPES):
        return OBSCURE
    if not any(name in message for name in names):
        return UNNAMED
    return CLEAR


def _check(call, names, expected=CLEAR):
    outcome, detail = classify(call, names)
    assert outcome == expected, (
        f"expected: {expected}; got: {outcome} "
        f"({type(detail).__name__}: {detail})"[:600]
    )


# --------------------------------------------------------------- functions
T = np.linspace(0, 1, 30)
X1 = np.sin(2 * np.pi * T) + T
XS = np.vstack([X1, X1**2, np.cos(T), T, 1 - T])
BAD_SIMPSON_GRID = [0, .0276, .1442, .3118, .4092, .4233, .5118, .5496, .8277, .9486,
                    .9505, 1]


def _model_file(tmp_path, content, name="data.joblib"):
    path = tmp_path / name
    joblib.dump(content, path)
    return path


# (id, call(tmp_path), names that the message must contain one of)
FUNCTION_CASES = [
    # hilbert
    ("inner_product-complex-x", lambda p: hilbert.inner_product(X1 + 1j, X1), ["x"]),
    ("inner_product-rows-differ", lambda p: hilbert.inner_product(XS, XS[:3]),
     ["x has 5 curves and y has 3"]),
    ("inner_product-grid-lengths", lambda p: hilbert.inner_product(X1, X1[:-1]),
     ["same grid"]),
    ("inner_product-3d", lambda p: hilbert.inner_product(np.ones((2, 2, 3)), np.ones(3)),
     ["x must be"]),
    ("inner_product-strings", lambda p: hilbert.inner_product(["a", "b"], [1, 2]),
     ["x"]),
    ("norm-nan", lambda p: hilbert.norm(np.r_[X1[:-1], np.nan]), ["x"]),
    ("norm-inf", lambda p: hilbert.norm(np.r_[X1[:-1], np.inf]), ["x"]),
    ("norm-empty", lambda p: hilbert.norm(np.array([])), ["x"]),
    ("norm-one-point", lambda p: hilbert.norm([1.0]), ["grid", "at least 2"]),
    ("norm-complex-grid", lambda p: hilbert.norm(X1, grid=T + 0j), ["grid"]),
    ("norm-grid-length", lambda p: hilbert.norm(X1, grid=T[:-1]), ["grid"]),
    ("norm-grid-nan", lambda p: hilbert.norm(X1, grid=np.r_[T[:-1], np.nan]), ["grid"]),
    ("norm-grid-decreasing", lambda p: hilbert.norm(X1, grid=T[::-1]), ["grid"]),
    ("norm-grid-2d", lambda p: hilbert.norm(X1, grid=T[None]), ["grid"]),
    ("norm-negative-simpson", lambda p: hilbert.norm(
        np.ones(12), grid=BAD_SIMPSON_GRID, quadrature="simpson"), ["quadrature"]),
    ("norm-bad-quadrature", lambda p: hilbert.norm(X1, quadrature="gauss"),
     ["quadrature"]),
    ("l2_distance-complex-Y", lambda p: hilbert.l2_distance(XS, XS + 1j), ["Y"]),
    ("l2_distance-grid-lengths", lambda p: hilbert.l2_distance(XS, XS[:, 1:]),
     ["same grid"]),
    ("mean_value-complex", lambda p: hilbert.mean_value(X1 * 1j), ["x"]),
    ("variance_function-one-curve", lambda p: hilbert.variance_function(X1),
     ["curves"]),
    ("covariance_function-one-curve", lambda p: hilbert.covariance_function(X1),
     ["curves"]),
    ("correlation-constant-x", lambda p: hilbert.correlation(np.full(30, 3.0), X1),
     ["constant x"]),
    ("correlation-constant-y", lambda p: hilbert.correlation(X1, np.full(30, 0.1)),
     ["constant y"]),
    ("correlation-rows-differ", lambda p: hilbert.correlation(XS, XS[:2]), ["curves"]),
    ("simple_regression-constant-x",
     lambda p: hilbert.simple_regression(np.full(30, 3.0), T), ["constant x"]),
    # depth: the one message of a curve with fewer than 2 grid points, naming
    # the array
    ("depth-one-point", lambda p: outliers.modified_band_depth(XS[:, :1]),
     ["X has 1 feature(s) (grid points); a curve needs at least 2 grid points"]),
    ("depth-reference-one-point", lambda p: outliers.integrated_depth(
        XS[:, :1], reference=XS[:, :1]),
     ["X has 1 feature(s) (grid points); a curve needs at least 2 grid points"]),
    ("depth-reference-one-point-only", lambda p: outliers.band_depth(
        XS, reference=XS[:, :1]),
     ["reference has 1 feature(s) (grid points); a curve needs at least 2 grid points"]),
    # metrics
    ("r2-negative-weights", lambda p: metrics.integrated_r2_score(
        XS, XS + 0.1, sample_weight=-np.ones(5)), ["sample_weight"]),
    ("r2-zero-weights", lambda p: metrics.integrated_r2_score(
        XS, XS + 0.1, sample_weight=np.zeros(5)), ["sample_weight"]),
    ("r2-weights-length", lambda p: metrics.integrated_r2_score(
        XS, XS + 0.1, sample_weight=np.ones(4)), ["sample_weight"]),
    ("r2-weights-complex", lambda p: metrics.integrated_r2_score(
        XS, XS + 0.1, sample_weight=np.ones(5) + 0j), ["sample_weight"]),
    ("r2-weights-2d", lambda p: metrics.integrated_r2_score(
        XS, XS + 0.1, sample_weight=np.ones((5, 1))), ["sample_weight"]),
    ("ise-weights-inf", lambda p: metrics.integrated_squared_error(
        XS, XS + 0.1, sample_weight=np.r_[np.inf, np.ones(4)]), ["sample_weight"]),
    ("ise-complex-y_true", lambda p: metrics.integrated_squared_error(XS + 1j, XS),
     ["y_true"]),
    ("ise-shapes", lambda p: metrics.integrated_squared_error(XS, XS[:, 1:]),
     ["y_true and y_pred"]),
    ("ise-rows", lambda p: metrics.integrated_squared_error(XS, XS[1:]),
     ["samples"]),
    ("ise-1d", lambda p: metrics.integrated_squared_error(X1, X1), ["y_true"]),
    ("ise-nan", lambda p: metrics.integrated_squared_error(XS, XS * np.nan),
     ["y_pred"]),
    ("ise-grid-length", lambda p: metrics.integrated_squared_error(XS, XS, grid=T[1:]),
     ["grid"]),
    ("ise-complex-grid", lambda p: metrics.integrated_squared_error(XS, XS, grid=T + 0j),
     ["grid"]),
    ("ise-negative-simpson", lambda p: metrics.integrated_squared_error(
        np.ones((2, 12)), np.zeros((2, 12)), grid=BAD_SIMPSON_GRID,
        quadrature="simpson"), ["quadrature"]),
    ("pointwise-negative-weights", lambda p: metrics.pointwise_r2_score(
        XS, XS, sample_weight=[1, 1, -1, 1, 1]), ["sample_weight"]),
    ("scorer-not-callable", lambda p: metrics.make_curve_scorer("r2"), ["score_func"]),
    # persistence
    ("save-compress", lambda p: save_model(Ridge(), p / "m.joblib", compress=0),
     ["compress"]),
    ("save-folder", lambda p: save_model(Ridge(), p), ["folder"]),
    ("save-missing-folder", lambda p: save_model(Ridge(), p / "no" / "m.joblib"),
     ["does not exist"]),
    ("save-existing", lambda p: save_model(Ridge(), _model_file(p, Ridge())),
     ["already exists"]),
    ("load-missing", lambda p: load_model(p / "none.joblib"), ["No model file"]),
    ("load-dict", lambda p: load_model(_model_file(p, {"a": 1})), ["not a model"]),
    ("load-array", lambda p: load_model(_model_file(p, np.ones(3))), ["not a model"]),
    ("load-trusted-string", lambda p: load_model(_model_file(p, Ridge()),
                                                 trusted="pkg.Type"), ["trusted"]),
    ("load-text", lambda p: load_model(_text_file(p)), ["truncated, corrupted"]),
]


def _text_file(tmp_path):
    path = tmp_path / "m.joblib"
    path.write_text("not a model")
    return path


@pytest.mark.parametrize("call, names", [c[1:] for c in FUNCTION_CASES],
                         ids=[c[0] for c in FUNCTION_CASES])
def test_function_bad_inputs(call, names, tmp_path):
    _check(lambda: call(tmp_path), names)


# Valid but extreme inputs: the results must be finite (and right, which the
# modules' own tests check against references).
EXTREME_CASES = [
    ("norm-1e155", lambda: hilbert.norm(X1 * 1e155)),
    ("correlation-1e155", lambda: hilbert.correlation(X1 * 1e155, T * 1e155)),
    ("correlation-1e-200", lambda: hilbert.correlation(X1 * 1e-200, T)),
    ("l2_distance-1e155", lambda: hilbert.l2_distance(XS * 1e155)),
    ("simple_regression-1e155", lambda: hilbert.simple_regression(X1 * 1e155, T)),
    ("r2-1e155", lambda: metrics.integrated_r2_score(XS * 1e155, XS * 1.1e155)),
    ("r2-1e-200", lambda: metrics.pointwise_r2_score(XS * 1e-200, XS * 1.1e-200)),
]


@pytest.mark.parametrize("call", [c[1] for c in EXTREME_CASES],
                         ids=[c[0] for c in EXTREME_CASES])
def test_function_extreme_inputs(call):
    _check(call, [], expected=ACCEPTED)


# -------------------------------------------------------------- estimators
def _accepts_sample_weight(estimator):
    return "sample_weight" in inspect.signature(estimator.fit).parameters


def _fit(estimator, X, y, **kwargs):
    if y is None:
        return estimator.fit(X, **kwargs)
    return estimator.fit(X, y, **kwargs)


def _fit_and_use(estimator, X, y, **kwargs):
    """Fit, then run every output method on the training curves."""
    _fit(estimator, X, y, **kwargs)
    out = {"fitted": estimator}
    for name in ("predict", "transform", "predict_proba"):
        if hasattr(estimator, name):
            out[name] = getattr(estimator, name)(X)
    return out


def _grid_case(transform_grid):
    """A case that sets a bad ``grid`` (or ``response_grid`` for scalar
    inputs) on the estimator."""
    def case(est, X, y):
        key = "grid" if "grid" in est.get_params() else "response_grid"
        width = X.shape[1] if key == "grid" else y.shape[1]
        est.set_params(**{key: transform_grid(np.linspace(0, 1, width))})
        return lambda: _fit(est, X, y), [key]
    return case


#: scikit-learn's own validation messages (``validate_data``/``check_array``),
#: clear to its users although some do not spell out the argument
SKLEARN_X_MESSAGES = ["Expected 2D array", "Found array with dim",
                      "Complex data not supported", "Found array with 0 sample(s)"]


def _x_case(transform):
    def case(est, X, y):
        return lambda: _fit(est, transform(X), y), ["X", *SKLEARN_X_MESSAGES]
    return case


def _weight_case(weights):
    def case(est, X, y):
        return lambda: _fit(est, X, y, sample_weight=weights(len(X))), ["sample_weight"]
    return case


def _y_case(transform):
    def case(est, X, y):
        return lambda: _fit(est, X, transform(y)), [
            "y", "Complex data not supported", "inconsistent numbers of samples"]
    return case


def _sparse_y(est, X, y):
    from scipy import sparse

    y2 = np.asarray(y, dtype=float).reshape(len(y), -1)
    return lambda: _fit(est, X, sparse.csr_matrix(y2)), ["y", "sparse"]


def _duplicated_labels(est, X, y):
    import pandas as pd

    labels = np.linspace(0, 1, X.shape[1])
    labels[1] = labels[0]
    return lambda: _fit(est, pd.DataFrame(X, columns=labels), y), [
        "column", "label", "grid"]


def _band_level_string(est, X, y):
    def call():
        _fit(est, X, y)
        return est.confidence_band(level="95%")
    return call, ["level"]


def _n_basis_huge(est, X, y):
    est.set_params(n_basis=10**6)
    return lambda: _fit(est, X, y), ["n_basis"]


def _scaled(factor, defaults=False):
    """Valid data scaled by ``factor``: expected to fit with finite results
    (with the estimator's default hyperparameters, grids aside, if
    ``defaults``)."""
    def case(est, X, y):
        if defaults:
            est = type(est)(**{k: v for k, v in est.get_params().items()
                               if k in ("grid", "response_grid")})
        if y is not None and np.issubdtype(np.asarray(y).dtype, np.floating):
            y = y * factor
        return lambda: _fit_and_use(est, X * factor, y), None
    return case


def _with_inf(X):
    X = X.copy()
    X[1, 2] = np.inf
    return X


BAD_ESTIMATOR_INPUTS = {
    "X-complex": _x_case(lambda X: X + 1j),
    "X-inf": _x_case(_with_inf),
    "X-1d": _x_case(lambda X: X[0]),
    "X-3d": _x_case(lambda X: X[None]),
    "X-strings": _x_case(lambda X: X.astype(str).astype(object) + "a"),
    "X-no-rows": _x_case(lambda X: X[:0]),
    "grid-complex": _grid_case(lambda g: g + 0j),
    "grid-length": _grid_case(lambda g: g[:-1]),
    "grid-nan": _grid_case(lambda g: np.r_[g[:-1], np.nan]),
    "grid-decreasing": _grid_case(lambda g: g[::-1]),
    "sample_weight-negative": _weight_case(lambda n: -np.ones(n)),
    "sample_weight-zeros": _weight_case(np.zeros),
    "sample_weight-length": _weight_case(lambda n: np.ones(n - 1)),
    "sample_weight-nan": _weight_case(lambda n: np.r_[np.nan, np.ones(n - 1)]),
    "y-nan": _y_case(lambda y: np.where(np.arange(len(y)).reshape(
        (-1,) + (1,) * (np.ndim(y) - 1)) == 0, np.nan, y)),
    "y-length": _y_case(lambda y: y[1:]),
    "y-complex": _y_case(lambda y: y + 1j),
    "y-sparse": _sparse_y,
    "X-duplicated-labels": _duplicated_labels,
    "confidence_band-level-string": _band_level_string,
    "n_basis-huge": _n_basis_huge,
    "scaled-1e150": _scaled(1e150),
    "scaled-1e150-defaults": _scaled(1e150, defaults=True),
    "scaled-1e-170": _scaled(1e-170),
}

#: (estimator, case) -> why it fails today. Strict expected failures: remove an
#: entry when the estimator is fixed.
_ALL = [name for name, _ in all_estimators()]
KNOWN_ESTIMATOR_FAILURES: dict = {}


#: (estimator, case) -> words of the clear error expected where valid but
#: extreme data have no representable answer: the principal components'
#: variances of curves near 1e-170 are near 1e-340, below float64's smallest
#: number (numpy.finfo: 4.9e-324), so explained_variance_ cannot be stored
#: (SparseFunctionalPCA's scores, which divide by the noise variance, were
#: NaN without a word)
UNREPRESENTABLE = {(name, "scaled-1e-170"): ["Rescale X"]
                   for name in ("FunctionalPCA", "SparseFunctionalPCA")}


#: (estimator, case) whose coefficient covariance has no float64 value in
#: the data's units while the fit has: the classifier's labels are not scaled
#: with X, so its coefficients scale by 1 / factor and their covariance by
#: 1 / factor**2 (about 1e340 at 1e-170, beyond float64's 1.8e308). The fit
#: stores inf there with a RuntimeWarning, the policy for any variance that
#: overflows in the data's units (skfunc._fit.check_finite_fit); everything
#: else must be finite
UNCERTAINTY_OVERFLOW = {("FunctionalLogisticRegression", "scaled-1e-170")}


#: the grid of the battery's curves
GRID = np.linspace(0, 1, 41)


def _applies(name, case):
    """False for cases about inputs the estimator does not take (weights for
    a transformer, a y for an unsupervised one)."""
    estimator, _, y, _ = make_case(name, GRID)
    if case.startswith("sample_weight"):
        return _accepts_sample_weight(estimator)
    if case.startswith("y-"):
        return y is not None
    if case.startswith("confidence_band"):
        return hasattr(estimator, "confidence_band")
    if case == "n_basis-huge":
        return "n_basis" in estimator.get_params()
    return True


def _estimator_params():
    params = []
    for name in _ALL:
        for case in BAD_ESTIMATOR_INPUTS:
            if not _applies(name, case):
                continue
            reason = KNOWN_ESTIMATOR_FAILURES.get((name, case))
            marks = [pytest.mark.xfail(strict=True, reason=reason)] if reason else []
            params.append(pytest.param(name, case, marks=marks, id=f"{name}-{case}"))
    return params


@pytest.mark.parametrize("name, case", _estimator_params())
def test_estimator_bad_inputs(name, case):
    estimator, X, y, _ = make_case(name, GRID)
    call, names = BAD_ESTIMATOR_INPUTS[case](clone(estimator), X, y)
    if (name, case) in UNCERTAINTY_OVERFLOW:
        with pytest.warns(RuntimeWarning, match="coef_covariance_ overflow"):
            out = call()
        fitted = vars(out.pop("fitted"))
        assert np.isinf(fitted.pop("coef_covariance_")).any()
        assert _finite(out) and _finite({k: v for k, v in fitted.items() if k.endswith("_")})
        return
    names = UNREPRESENTABLE.get((name, case), names)
    _check(call, names or [], expected=ACCEPTED if names is None else CLEAR)


def test_classify_sorts_outcomes():
    # the classifier itself: each outcome from a call made to produce it
    def broadcast():
        return np.ones(3) + np.ones(4)

    def linalg():
        raise np.linalg.LinAlgError("Eigenvalues did not converge")

    def unnamed():
        raise ValueError("something is wrong")

    def named():
        raise ValueError("x must be finite")

    assert classify(broadcast, ["x"])[0] == OBSCURE
    assert classify(linalg, ["x"])[0] == OBSCURE
    assert classify(unnamed, ["x"])[0] == UNNAMED
    assert classify(named, ["x"])[0] == CLEAR
    assert classify(lambda: np.array([1.0, np.nan]), [])[0] == NONFINITE
    assert classify(lambda: {"a": (1.0, np.inf)}, [])[0] == NONFINITE
    assert classify(lambda: np.ones(2), [])[0] == ACCEPTED


# ----------------------------------------- non-finite results at fit time
@pytest.mark.parametrize("name", ["FunctionOnScalarRidge", "FunctionOnFunctionRidge"])
def test_one_training_curve_is_refused_by_name(name):
    # one curve leaves no residual degrees of freedom: the noise variance
    # (and so the band) is undefined, and the unpenalized intercept and slope
    # functions are not determined; the fit must say so rather than hand back
    # an all-NaN band
    estimator, X, y, _ = make_case(name, GRID)
    with pytest.raises(ValueError, match="n_samples >= 2"):
        estimator.fit(X[:1], y[:1])


#: the regressors whose statistics are formed from X and y divided by powers
#: of two (skfunc._penalized.scaled_statistics)
SCALED_REGRESSORS = ["FunctionalRidge", "FunctionalRidgeCV", "FunctionOnScalarRidge",
                     "FunctionOnFunctionRidge", "ConcurrentFunctionRidge"]

#: (X factor, y factor): squares of 1e150 times a few dozen rows and grid
#: weights overflow float64's 1.8e308 and squares of 1e-170 underflow its
#: smallest normal 2.2e-308 (numpy.finfo(float)); 1e300 and 1e-300 are the
#: extremes the statistics must take
#: (automatic alpha, for time, at three of them)
EXTREME_SCALES = [
    *[(False, f) for f in [(1e150, 1e150), (1e-170, 1e-170), (1e300, 1e300), (1e150, 1.0)]],
    *[(True, f) for f in [(1e150, 1e150), (1e-300, 1e-300), (1.0, 1e-300)]],
]


def _defaults(estimator):
    """The estimator with default hyperparameters (alpha="auto"), grids kept."""
    return type(estimator)(**{k: v for k, v in estimator.get_params().items()
                              if k in ("grid", "response_grid")})


@pytest.mark.parametrize("defaults, factors", EXTREME_SCALES,
                         ids=lambda v: ("auto" if v else "fixed") if isinstance(v, bool)
                         else str(v))
@pytest.mark.parametrize("name", SCALED_REGRESSORS)
def test_extreme_scales_give_the_unit_scale_fit(name, defaults, factors):
    # Alpha is unit-free, so in exact arithmetic the fit on (a X, b y) is the
    # fit on (X, y) with coefficients times b / a and predictions times b.
    # The statistics divide X and y by powers of two before squaring (exact
    # in binary floating point), so the scaled fit must reproduce the unit
    # one to rounding: 1e-8 relative is a few hundred ulps through the
    # decompositions (the two fits see different digits, as a and b are not
    # powers of two). It used to raise NotIdentifiableError, a foreign-
    # looking overflow error, or (FunctionalRidge with alpha="auto" at
    # 1e150) return predictions off by 18%.
    a, b = factors
    estimator, X, y, _ = make_case(name, GRID)
    if defaults:
        estimator = _defaults(estimator)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AlphaAtEdgeWarning)
        unit = clone(estimator).fit(X, y)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", RuntimeWarning)
            big = clone(estimator).fit(X * a, y * b)
    reference = unit.predict(X)
    np.testing.assert_allclose(big.predict(X * a) / b, reference,
                               rtol=1e-8, atol=1e-8 * np.abs(reference).max())
    assert big.alpha_ == pytest.approx(unit.alpha_, rel=1e-8)
    np.testing.assert_allclose(big.coef_function_ * (a / b), unit.coef_function_,
                               rtol=1e-8, atol=1e-8 * np.abs(unit.coef_function_).max())
    # a number that does not fit in float64 in the data's units (a variance
    # of y near 1e300 is near 1e600, of y near 1e-300 near 1e-600) is inf or
    # 0, and the fit says so, naming it
    said = " ".join(str(w.message) for w in caught)
    for attribute in ("noise_variance_", "coef_covariance_", "criterion_path_"):
        value, reference = getattr(big, attribute, None), getattr(unit, attribute, None)
        if value is None or reference is None:
            continue
        value, reference = np.asarray(value), np.asarray(reference)
        if not np.all(np.isfinite(value)):
            assert "overflow" in said and attribute in said, attribute
        if np.any((value == 0) & (reference != 0)):
            assert "underflows" in said and attribute in said, attribute


@pytest.mark.filterwarnings("ignore::skfunc._alpha.AlphaAtEdgeWarning")
@pytest.mark.filterwarnings("ignore:.*underflows float64:RuntimeWarning")
@pytest.mark.parametrize("factors", [(1e150, 1e150), (1e-170, 1e-300)], ids=str)
@pytest.mark.parametrize("params", [{"criterion": "loo"}, {"cv": 3}], ids=["loo", "kfold"])
def test_cross_validation_criteria_at_extreme_scales(params, factors):
    # FunctionalRidgeCV's in-memory criteria (leave-one-out, K-fold) read
    # the design row by row; they work on the same powers of two as the
    # statistics, so the choice and the fit are the unit-scale ones (1e-8,
    # as above) and the criterion path is in y's units (times b^2: a mean
    # squared error; 1e-300^2 underflows to 0, with a warning, so only the
    # 1e150 path is compared: (1e150)^2 = 1e300 is still finite)
    a, b = factors
    estimator, X, y, _ = make_case("FunctionalRidgeCV", GRID)
    estimator.set_params(**params)
    unit = clone(estimator).fit(X, y)
    big = clone(estimator).fit(X * a, y * b)
    assert big.alpha_ == unit.alpha_
    np.testing.assert_allclose(big.predict(X * a) / b, unit.predict(X), rtol=1e-8)
    if b > 1:
        np.testing.assert_allclose(big.criterion_path_ / b**2, unit.criterion_path_,
                                   rtol=1e-8)


@pytest.mark.filterwarnings("ignore::skfunc._alpha.AlphaAtEdgeWarning")
@pytest.mark.parametrize("name", SCALED_REGRESSORS[:4])
def test_partial_fit_merges_batches_of_different_scales(name):
    # two batches whose values differ by 2^-10 or so (1e-3) and a first batch
    # near 1e150: each batch's statistics carry their own power of two and
    # the merge brings them to one scale by powers of two, so partial_fit
    # equals fit on the stacked rows (up to the rounding of the merge;
    # 1e-10 relative, as for batches of one scale)
    estimator, X, y, _ = make_case(name, GRID)
    X, y = X * 1e150, y * 1e150
    X[12:] *= 1e-3
    y[12:] *= 1e-3
    whole = clone(estimator).fit(X, y)
    batches = clone(estimator).partial_fit(X[:12], y[:12]).partial_fit(X[12:], y[12:])
    expected = whole.predict(X)
    np.testing.assert_allclose(batches.predict(X), expected, rtol=1e-10,
                               atol=1e-10 * np.abs(expected).max())


def test_interpolating_fit_is_refused_by_gcv():
    # 8 curves, 30 basis functions and alpha=1e-16: the fit interpolates
    # (effective degrees of freedom = 8 = n, to rounding), so GCV (Craven and
    # Wahba 1979) is undefined at the only candidate and so is the noise
    # variance; both used to be handed back as inf/NaN without a word, and the
    # alpha choice now refuses a candidate list with no finite score
    estimator, X, y, _ = make_case("FunctionalRidgeCV", GRID)
    estimator.set_params(alpha=[1e-16], n_basis=30)
    with pytest.raises(ValueError, match="No candidate alpha has a finite GCV score"):
        estimator.fit(X[:8], y[:8])


@pytest.mark.parametrize("name", ["FunctionalRidge", "FunctionalRidgeCV"])
def test_covariates_in_other_units_than_the_curves(name):
    # Covariates are unpenalized, so in exact arithmetic their units do not
    # change the fit: a covariate c s gets the coefficient gamma / c and the
    # same predictions. Each covariate is divided by its own power of two, so
    # curves near 1e150 beside covariates near 1e-100 (a ratio of 1e250) fit
    # as the unit data do, to rounding (1e-8 relative); a common scale lost
    # the covariates' digits and called the coefficients not determined
    # (already at a ratio of 1e7). Batches whose covariates differ by 2^-10
    # merge exactly (partial_fit = fit, 1e-10).
    estimator, X, y, _ = make_case(name, GRID)
    rng = np.random.default_rng(0)
    S = rng.normal(size=(len(y), 2))
    y = y + S @ [0.5, -1.0]
    estimator.set_params(n_covariates=2)
    unit = clone(estimator).fit(np.hstack([X, S]), y)
    scaled = np.hstack([X * 1e150, S * [1e-100, 1.0]])
    big = clone(estimator).fit(scaled, y)
    reference = unit.predict(np.hstack([X, S]))
    np.testing.assert_allclose(big.predict(scaled), reference, rtol=1e-8)
    np.testing.assert_allclose(big.covariate_coef_ * [1e-100, 1.0], unit.covariate_coef_,
                               rtol=1e-8)
    if name == "FunctionalRidge":
        scaled[12:, -2] *= 1e-3
        whole = clone(estimator).fit(scaled, y)
        batches = clone(estimator).partial_fit(scaled[:12], y[:12]).partial_fit(
            scaled[12:], y[12:])
        np.testing.assert_allclose(batches.predict(scaled), whole.predict(scaled),
                                   rtol=1e-10)


# ------------------------------------ overflow in the data's units, said aloud
def test_variances_and_criteria_that_overflow_are_said_to():
    # y near 1e300: the fit is exact (above), but a variance of y is near
    # 1e600, beyond float64's 1.8e308 (numpy.finfo): noise_variance_ and the
    # GCV path are inf in y's units, and the fit says so instead of handing
    # them back silently (they used to be NaN without a word)
    estimator, X, y, _ = make_case("FunctionalRidge", GRID)
    estimator.set_params(alpha="auto", criterion="gcv")  # (REML: the next test)
    with pytest.warns(RuntimeWarning, match="overflow") as caught:
        big = clone(estimator).fit(X, y * 1e300)
    messages = " ".join(str(w.message) for w in caught)
    assert "noise_variance_" in messages and "criterion_path_" in messages
    assert np.isinf(big.noise_variance_) and np.isinf(big.criterion_path_).all()


@pytest.mark.filterwarnings("ignore:.*overflow float64:RuntimeWarning")
def test_reml_path_is_in_the_data_units_at_any_scale():
    # REML (Wood 2011) profiles the noise variance: for responses c y the
    # penalized residual sum of squares is c^2 D_p, so -2 l_R grows by exactly
    # dof log(c^2) with dof = n - (null space + intercept) = n - 3 here
    # (penalty order 2: two unpenalized functions). Computed in the log
    # domain, it stays finite at c = 1e300 where c^2 D_p is not.
    estimator, X, y, _ = make_case("FunctionalRidge", GRID)
    estimator.set_params(alpha="auto", criterion="reml")
    unit = clone(estimator).fit(X, y)
    big = clone(estimator).fit(X, y * 1e300)
    dof = len(y) - 3
    np.testing.assert_allclose(big.criterion_path_ - unit.criterion_path_,
                               dof * 2 * np.log(1e300), rtol=1e-9)
    assert big.alpha_ == pytest.approx(unit.alpha_, rel=1e-8)


# ------------------------------- identifiability: advice that fits the case
NO_PENALTY_ADVICE = ("alpha > 0", "positive alpha", "alpha='auto'")


def _advice(call):
    with pytest.raises(ValueError) as info:
        call()
    return str(info.value)


@pytest.mark.slow
def test_smoother_null_space_advice_is_penalty_order_not_alpha():
    # alpha > 0 already: three observed values 1e-4 apart cannot fix the
    # quadratics a third-derivative penalty leaves free (the message used to
    # advise "a smaller n_basis or a positive alpha"); with alpha = 0 every
    # basis function needs the data, and there n_basis or a penalty helps
    from skfunc.preprocessing import CurveSmoother

    t = np.linspace(0, 1, 10001)
    X = np.vstack([np.sin(6 * t), np.full(t.size, np.nan)])
    X[1, 5000:5003] = [1.0, 2.0, 4.0]
    message = _advice(lambda: CurveSmoother(alpha=1e-3, penalty_order=3).fit(X))
    assert "penalty_order" in message
    assert not any(a in message for a in NO_PENALTY_ADVICE)
    t = np.linspace(0, 1, 30)
    X = np.vstack([np.sin(6 * t), np.sin(6 * t)])
    X[1, 5:25] = np.nan
    message = _advice(lambda: CurveSmoother(alpha=0.0, n_basis=20).fit(X))
    assert "n_basis" in message and "alpha > 0" in message


def test_curve_response_advice_fits_the_case():
    from skfunc.exceptions import UndeterminedCoefficientsWarning
    from skfunc.linear_model import (
        ConcurrentFunctionRidge,
        FunctionOnFunctionRidge,
        FunctionOnScalarRidge,
    )

    rng = np.random.default_rng(0)
    Y = rng.normal(size=(6, 30))

    def penalty_order_case(message):
        assert "penalty_order" in message
        assert not any(a in message for a in NO_PENALTY_ADVICE)

    # the penalty's null space is not determined: no alpha helps
    # - two response points cannot fix the quadratics of a third-order penalty
    S = rng.normal(size=(6, 1))
    penalty_order_case(_advice(lambda: FunctionOnScalarRidge(
        alpha=1e-3, n_basis=8, penalty_order=3).fit(S, Y[:, :2])))
    # rows that do not determine the design's unpenalized part give the
    # minimum-norm fit with a warning (as numpy.linalg.lstsq and scikit-learn's
    # LinearRegression do), and the warning's advice is not "add a penalty":
    # - collinear covariates: unpenalized in the functions of t with D^2 = 0
    # - two input curves cannot fix the straight lines in s and the intercept
    for call in (
        lambda: FunctionOnScalarRidge(alpha=1e-3).fit(np.hstack([S, 2 * S]), Y),
        lambda: FunctionOnFunctionRidge(alpha=1e-3).fit(rng.normal(size=(2, 30)),
                                                        Y[:2]),
    ):
        with pytest.warns(UndeterminedCoefficientsWarning) as record:
            call()
        message = " ".join(str(w.message) for w in record
                           if isinstance(w.message, UndeterminedCoefficientsWarning))
        assert "collinear" in message and not any(a in message for a in NO_PENALTY_ADVICE)
    # - identical constant inputs cannot tell beta_1's straight lines from beta_0
    penalty_order_case(_advice(lambda: ConcurrentFunctionRidge(alpha=1e-3).fit(
        np.ones((6, 30)), Y)))
    # an unpenalized basis larger than the grid: n_basis, not alpha
    message = _advice(lambda: ConcurrentFunctionRidge(alpha=1e-3, n_basis=12).fit(
        rng.normal(size=(6, 30)), Y[:, :8]))
    assert "n_basis" in message and not any(a in message for a in NO_PENALTY_ADVICE)
