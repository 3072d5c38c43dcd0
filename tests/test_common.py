"""Behaviour every public estimator shares, run over
:func:`skfunc.utils.all_estimators` with the data factories of
``tests/conftest.py`` (``ESTIMATOR_CASES``).

* resolution invariance: the same functions sampled on 201 even, 201 uneven
  and 1001 points give the same results (up to the quadrature's error);
* ``partial_fit`` over batches equals ``fit`` on all rows;
* a fit on Dask arrays equals the in-memory fit (estimators with
  ``_accepts_dask``);
* grids and DataFrame labels that disagree with the fitted grid, and bad
  grid parameters, are clear errors;
* the fitted model round-trips through joblib and skops with identical
  outputs.
"""

import numpy as np
import pandas as pd
import pytest
from conftest import ESTIMATOR_CASES, make_case

from skfunc.persistence import load_model, save_model, skfunc_types
from skfunc.utils import all_estimators

NAMES = [name for name, _ in all_estimators()]
#: the same names, with the estimators whose fits take seconds here (the
#: elastic aligner's dynamic program) kept for the full run
NAMES_SLOW_MARKED = [pytest.param(name, marks=pytest.mark.slow)
                    if name == "ElasticAligner" else name for name in NAMES]

#: the reference sampling and two coarser ones of [0, 1]
FINE = np.linspace(0, 1, 1001)
EVEN = np.linspace(0, 1, 201)
UNEVEN = (1 - np.cos(np.pi * EVEN)) / 2  # dense at the ends


def _relative(a, b):
    return np.linalg.norm(np.asarray(a) - np.asarray(b)) / np.linalg.norm(b)


def test_every_estimator_has_a_case():
    assert sorted(ESTIMATOR_CASES) == sorted(NAMES)


def _fit(name, grid, **extra):
    estimator, X, y, output = make_case(name, grid)
    estimator.set_params(**extra)
    return estimator.fit(X, y), X, y, output


@pytest.mark.parametrize("name", NAMES_SLOW_MARKED)
def test_resolution_invariance(name):
    # Integrals replace sums, so results on 201 points (even or uneven)
    # agree with those on 1001 points within the composite trapezoid rule's
    # error, O(h^2) (common practice): with h = 1/200 and the data's smooth
    # Fourier curves (11 terms, derivatives up to about (10 pi)^2 ~ 1e3 times
    # the values, damped by their 1/(1+k) scores), h^2/12 times that is about
    # 2e-4; 1e-3 leaves room. A sum over grid points instead of an integral
    # changes by the ratio of the point counts (5x) and fails.
    rtol = ESTIMATOR_CASES[name].get("resolution_rtol", 1e-3)
    ref_est, X_ref, _, output = _fit(name, FINE)
    reference = output(ref_est, X_ref)
    # a case may restrict the check to even grids or widen the tolerance,
    # with its reason beside the case in conftest.py
    case = ESTIMATOR_CASES[name]
    grids = (EVEN,) if case.get("even_grids_only") else (EVEN, UNEVEN)
    for grid in grids:
        est, X, _, _ = _fit(name, grid)
        assert _relative(output(est, X), reference) < rtol, grid.size


@pytest.mark.parametrize("name", [n for n in NAMES if hasattr(dict(all_estimators())[n],
                                                             "partial_fit")])
def test_partial_fit_equals_fit(name):
    # The fit reads additive statistics only, so three batches give the fit
    # on all rows up to rounding (1e-8 relative: sums in another order); a
    # case's partial_fit_params set what of fit partial_fit does.
    whole, X, y, output = _fit(name, EVEN, **ESTIMATOR_CASES[name].get("partial_fit_params", {}))
    streamed = make_case(name, EVEN)[0]
    for rows in np.array_split(np.arange(X.shape[0]), 3):
        streamed.partial_fit(X[rows], None if y is None else y[rows])
    assert streamed.n_samples_seen_ == whole.n_samples_seen_ == X.shape[0]
    assert _relative(output(streamed, X), output(whole, X)) < 1e-8


#: the estimators that fit on Dask arrays (``_accepts_dask``)
DASK_NAMES = [n for n in NAMES if getattr(dict(all_estimators())[n], "_accepts_dask", False)]


# (the automatic choice doubles the fits: kept for the full run; only for
# the estimators with a penalty, not the aligners)
@pytest.mark.parametrize("name, alpha", [(name, "case") for name in DASK_NAMES] + [
    pytest.param(name, "auto", marks=pytest.mark.slow) for name in DASK_NAMES
    if "alpha" in dict(all_estimators())[name]().get_params()])
def test_dask_fit_equals_in_memory_fit(name, alpha):
    da = pytest.importorskip("dask.array")
    import dask

    # the case's fixed alpha, and the automatic choice (its criterion from
    # statistics pooled over the blocks)
    extra = {} if alpha == "case" else {"alpha": "auto"}
    in_memory, X, y, output = _fit(name, EVEN, **extra)
    estimator = make_case(name, EVEN)[0].set_params(**extra)
    Xd = da.from_array(X, chunks=(17, -1))
    yd = None if y is None else da.from_array(y, chunks=(17,) + y.shape[1:])
    with dask.config.set(scheduler="sync"):
        estimator.fit(Xd, yd)
    # statistics of blocks merged in a tree: the in-memory sums in another
    # order (1e-8 relative); a dropped or doubled block moves them by percents
    assert _relative(output(estimator, X), output(in_memory, X)) < 1e-8
    for key in ("alpha_", "criterion_path_"):
        if getattr(in_memory, key, None) is not None:
            assert _relative(getattr(estimator, key), getattr(in_memory, key)) < 1e-8, key


def _frame(values, labels):
    return pd.DataFrame(values, columns=[float(v) for v in labels])


@pytest.mark.parametrize("name", NAMES)
def test_grid_and_label_mismatches_are_errors(name):
    case = ESTIMATOR_CASES[name]
    grid = np.linspace(0, 1, 41)
    estimator, X, y, _ = make_case(name, grid)
    estimator.set_params(**{"grid" if case["curve_input"] else "response_grid": None})
    shifted = grid + 0.5
    if case["curve_input"]:
        estimator.fit(_frame(X, grid), y)
        np.testing.assert_array_equal(estimator.grid_, grid)  # read from labels
        apply = getattr(estimator, "transform", None) or estimator.predict
        with pytest.raises(ValueError, match="differs"):
            apply(_frame(X, shifted))
        with pytest.raises(ValueError, match="features"):
            apply(X[:, :-1])
    else:
        estimator.fit(X, _frame(y, grid))
        np.testing.assert_array_equal(estimator.response_grid_, grid)
        with pytest.raises(ValueError, match="differs"):
            estimator.score(X, _frame(y, shifted))
        with pytest.raises(ValueError, match="columns"):
            estimator.score(X, y[:, :-1])


@pytest.mark.parametrize("name", NAMES)
def test_bad_grids_are_errors(name):
    case = ESTIMATOR_CASES[name]
    key = "grid" if case["curve_input"] else "response_grid"
    grid = np.linspace(0, 1, 41)
    estimator, X, y, _ = make_case(name, grid)
    for bad, match in [(grid[::-1], "increasing"), (grid[:-3], "points"),
                       (np.where(grid == grid[5], np.nan, grid), "finite")]:
        with pytest.raises(ValueError, match=match):
            estimator.set_params(**{key: bad}).fit(X, y)


@pytest.mark.parametrize("name", NAMES)
@pytest.mark.parametrize("suffix", [".joblib", ".skops"])
def test_persistence_round_trip(name, suffix, tmp_path):
    sio = pytest.importorskip("skops.io")
    estimator, X, _, output = _fit(name, np.linspace(0, 1, 41))
    path = save_model(estimator, tmp_path / f"model{suffix}")
    if suffix == ".skops":
        # the fitted state holds only arrays and plain values: the one type
        # skops does not trust by default is the estimator class itself
        cls = type(estimator)
        assert sio.get_untrusted_types(file=path) == [f"{cls.__module__}.{cls.__name__}"]
        loaded = sio.load(path, trusted=skfunc_types(path))
    else:
        loaded = load_model(path)
    assert type(loaded) is type(estimator)
    fitted = {k: v for k, v in vars(estimator).items() if k.endswith("_")}
    np.testing.assert_equal({k: getattr(loaded, k) for k in fitted}, fitted)
    np.testing.assert_array_equal(output(loaded, X), output(estimator, X))


@pytest.mark.parametrize("name", NAMES)
def test_docstring_documents_every_parameter(name):
    # numpydoc convention (common practice): the Parameters section lists the
    # constructor's parameters, no more and no fewer
    import re

    cls = dict(all_estimators())[name]
    doc = cls.__doc__
    section = doc[doc.index("Parameters\n"):doc.index("Attributes\n")]
    documented = re.findall(r"^    (\w+) : ", section, re.MULTILINE)
    assert sorted(documented) == sorted(cls().get_params()), name


@pytest.mark.parametrize("name", NAMES)
def test_repr_of_a_pipeline_shows_every_step(name):
    # scikit-learn cuts a repr of more than 700 non-blank characters
    # (BaseEstimator.__repr__, N_CHAR_MAX) in the middle; a 600-point grid
    # printed in full (about 7000 characters) would hide the other steps.
    from sklearn.linear_model import Ridge
    from sklearn.pipeline import make_pipeline

    key = "grid" if ESTIMATOR_CASES[name]["curve_input"] else "response_grid"
    estimator = dict(all_estimators())[name](**{key: np.linspace(0, 1, 600)})
    text = repr(make_pipeline(estimator, Ridge()))
    assert len("".join(text.split())) < 700
    assert "shape=(600,)" in text and "('ridge', Ridge())" in text
    assert np.get_printoptions()["threshold"] == 1000  # numpy's default kept


#: grid unit and origin (t -> A + C t), data scales of X and of curve responses
UNIT_SHIFT, UNIT_STRETCH, X_SCALE, Y_SCALE = -3.0, 250.0, 1e3, 1e-2

#: curve-valued responses are scaled with X (their predictions by Y_SCALE)
_CURVE_RESPONSE = ("FunctionOnScalarRidge", "FunctionOnFunctionRidge",
                   "ConcurrentFunctionRidge")


def _fitted_values(name, est, X):
    """What must not depend on units, in the data's units: smoothed curves,
    reconstructions, predictions."""
    if name == "CurveSmoother" or name.endswith("Aligner"):
        return est.transform(X)  # smoothed or aligned curves
    if hasattr(est, "inverse_transform"):
        return est.inverse_transform(est.transform(X))
    if hasattr(est, "predict_proba"):
        return est.predict_proba(X)
    return est.predict(X)


def _unit_case(name, alpha, moved):
    estimator, X, y, _ = make_case(name, EVEN)
    params = {}
    if moved:
        new = UNIT_SHIFT + UNIT_STRETCH * EVEN
        for key in ("grid", "response_grid"):
            if key in estimator.get_params():
                params[key] = new
        if name == "CurveSmoother":
            params["eval_points"] = None
        X = X * X_SCALE
        template = estimator.get_params().get("template")
        if template is not None:  # a template curve is data: in X's units
            params["template"] = np.asarray(template) * X_SCALE
        if name in _CURVE_RESPONSE:
            y = y * Y_SCALE
    elif name == "CurveSmoother":
        params["eval_points"] = None
    if alpha is not None and "alpha" in estimator.get_params():
        params["alpha"] = alpha
    return estimator.set_params(**params).fit(X, y), X


@pytest.mark.parametrize("alpha", [None, "auto"], ids=["fixed", "auto"])
@pytest.mark.parametrize("name", NAMES_SLOW_MARKED)
def test_unit_invariance(name, alpha):
    # The unit-free alpha (docs/bases_and_penalties.rst): a grid in other
    # units and origin (t -> -3 + 250 t), X times 1e3 and curve responses times
    # 1e-2 give the same fit in the data's units, at the case's fixed alpha
    # and at the automatic choice, to 1e-8 relative (rounding of the products,
    # a few hundred ulps; a penalty in the grid's own units changes fits by
    # orders of magnitude more, 250^3 here).
    base, X = _unit_case(name, alpha, moved=False)
    moved, X_moved = _unit_case(name, alpha, moved=True)
    out_scale = X_SCALE if name in ("CurveSmoother", "BasisFeatures", "FunctionalPCA",
                                    "SparseFunctionalPCA")  \
        or name.endswith("Aligner") else (
        Y_SCALE if name in _CURVE_RESPONSE else 1.0)
    if getattr(base, "alpha_", None) is not None:
        np.testing.assert_allclose(moved.alpha_, base.alpha_, rtol=1e-8)
    assert _relative(_fitted_values(name, moved, X_moved) / out_scale,
                     _fitted_values(name, base, X)) < 1e-8


def _takes_sample_weight(name):
    import inspect

    return "sample_weight" in inspect.signature(dict(all_estimators())[name].fit).parameters


def _fitted_floats(estimator):
    """The fitted state's float arrays and numbers (what the weights may change)."""
    out = {}
    for key, value in vars(estimator).items():
        if key.endswith("_") and not key.startswith("_") and key != "n_samples_seen_":
            arr = np.asarray(value)
            if arr.dtype.kind == "f":
                out[key] = arr
    return out


@pytest.mark.parametrize("name", [n for n in NAMES if _takes_sample_weight(n)])
def test_integer_weights_equal_duplicated_rows(name):
    # scikit-learn's meaning of sample weights (its common check
    # check_sample_weight_equivalence, common practice): a row of weight k is
    # k copies of the row, and weight 0 leaves it out. So every fitted
    # number -- coefficients, the chosen alpha, GCV scores, noise variance,
    # coefficient covariance -- and every output (predictions, bands) equals
    # the fit on the duplicated rows. Weights read as "relative" (rescaled to
    # sum to n) or a noise variance divided by the row count instead of the
    # weight total give other numbers and fail. 1e-8 relative: the same sums
    # formed in another order.
    grid = np.linspace(0, 1, 41)
    estimator, X, y, output = make_case(name, grid)
    weights = np.random.default_rng(3).integers(0, 4, X.shape[0])
    weights[:2] = (2, 3)  # some duplication whatever the draw
    rows = np.repeat(np.arange(X.shape[0]), weights)
    weighted = estimator.fit(X, y, sample_weight=weights.astype(float))
    duplicated = make_case(name, grid)[0].fit(X[rows], y[rows])
    expected = _fitted_floats(duplicated)
    got = _fitted_floats(weighted)
    assert expected.keys() == got.keys()
    for key in expected:
        np.testing.assert_allclose(got[key], expected[key], rtol=1e-8, atol=1e-12,
                                   err_msg=key)
    np.testing.assert_allclose(output(weighted, X), output(duplicated, X), rtol=1e-8,
                               atol=1e-12)
    if hasattr(weighted, "confidence_band"):
        for a, b in zip(weighted.confidence_band(), duplicated.confidence_band()):
            np.testing.assert_allclose(a, b, rtol=1e-8, atol=1e-12)


# ---------------------------------------------------------------------------
# float32 in, float32 out
# ---------------------------------------------------------------------------

def _output_method(estimator):
    """The method whose output keeps float32: transform, else predict.
    Classifiers and outlier detectors are left out: their outputs
    (probabilities, labels, outlyingness) are float64 whatever X is."""
    from sklearn.base import is_classifier, is_outlier_detector

    if is_classifier(estimator) or is_outlier_detector(estimator):
        return None
    return "transform" if hasattr(estimator, "transform") else "predict"


FLOAT32_NAMES = [n for n, cls in all_estimators() if _output_method(cls()) is not None]

#: relative error of float32 outputs against the float64 ones: float32's
#: unit roundoff is 2^-24 ~ 6e-8 (IEEE 754), a sum of m products errs by about
#: sqrt(m) of it in practice (Higham, Accuracy and Stability of Numerical
#: Algorithms, ch. 3; from memory), 1.5e-6 for m = 600 points; 1e-5 is what
#: float32 results promise (docs/performance.rst). A plain float32 product of
#: curves near 1200 loses about 1200 / (their spread) times more: 2.7e-4 on
#: the shifted data below (measured), which fails.
FLOAT32_RTOL = 1e-5


def _float32_case(name, shift):
    """Two fresh estimators of the case, and its data with the curves (or,
    for curve responses of scalars, the responses) moved by ``shift``."""
    est64, X, y, _ = make_case(name, EVEN)
    est32 = make_case(name, EVEN)[0]
    if ESTIMATOR_CASES[name]["curve_input"]:
        X = X + shift
    else:
        y = y + shift
    template = est64.get_params().get("template")
    if template is not None:  # a template is a curve: in X's units
        for est in (est64, est32):
            est.set_params(template=np.asarray(template) + shift)
    return est64, est32, X, y


@pytest.mark.parametrize("shift", [0.0, 1200.0], ids=["centered", "mean-1200"])
@pytest.mark.parametrize("name", FLOAT32_NAMES)
def test_float32_in_float32_out(name, shift):
    # float32 curves (half the memory of float64) give float32 transforms and
    # predictions, within FLOAT32_RTOL of the float64 computation on the same
    # values: the fit's statistics are accumulated in float64, and products
    # of curves with a large mean (kiln temperatures near 1200) are centered
    # before they are rounded to float32.
    est64, est32, X, y = _float32_case(name, shift)
    X32 = X.astype(np.float32)
    X64 = X32.astype(np.float64)  # the same values
    method = _output_method(est64)
    expected = getattr(est64.fit(X64, y), method)(X64)
    got = getattr(est32.fit(X32, y), method)(X32)
    assert got.dtype == np.float32
    assert expected.dtype == np.float64
    assert _relative(got, expected) < FLOAT32_RTOL


@pytest.mark.parametrize("name", ["BasisFeatures", "CurveSmoother", "FunctionalPCA",
                                  "FunctionalRidge", "FunctionalRidgeCV", "ShiftAligner"])
def test_float32_on_kiln_runs(name):
    # The kiln runs (temperatures from ambient to 1250 degC over 600 minutes)
    # at each estimator's defaults: float32 outputs within FLOAT32_RTOL of
    # float64 on the same values.
    from skfunc.datasets import make_kiln_firing

    runs = make_kiln_firing(100, dropout_fraction=0.0, random_state=0)
    X32 = np.asarray(runs.data, dtype=np.float32)
    X64 = X32.astype(np.float64)
    cls = dict(all_estimators())[name]
    method = _output_method(cls())
    grid = np.arange(X32.shape[1], dtype=float)
    expected = getattr(cls(grid=grid).fit(X64, runs.target), method)(X64)
    got = getattr(cls(grid=grid).fit(X32, runs.target), method)(X32)
    assert got.dtype == np.float32
    assert _relative(got, expected) < FLOAT32_RTOL
