import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import simpson, trapezoid

from skfunc._grid import (
    check_grid,
    grid_from_labels,
    grid_weights,
    quadrature_weights,
    resolve_grid,
)


def _uneven(rng, m, a=0.0, b=1.0):
    inner = np.sort(rng.uniform(a, b, m - 2))
    return np.concatenate([[a], inner, [b]])


@pytest.mark.parametrize("m", [2, 3, 4, 7, 50, 51])
@pytest.mark.parametrize("rule", ["trapezoid", "simpson"])
def test_weights_agree_with_scipy_on_uneven_grids(rng, m, rule):
    # Reference: scipy.integrate.trapezoid / scipy.integrate.simpson (scipy >= 1.11
    # handles an odd number of intervals with Cartwright's correction).
    t = _uneven(rng, m)
    y = rng.normal(size=(5, m))
    ref = trapezoid(y, x=t) if rule == "trapezoid" else simpson(y, x=t)
    # the same rule summed in another order: rounding only (sums of <= 51 terms)
    np.testing.assert_allclose(y @ quadrature_weights(t, rule), ref, rtol=1e-12, atol=1e-14)


@settings(max_examples=40, deadline=None)
@given(m=st.integers(3, 60), seed=st.integers(0, 10_000))
def test_simpson_matches_scipy_property(m, seed):
    # Reference: scipy.integrate.simpson on random uneven grids.
    rng = np.random.default_rng(seed)
    t = np.cumsum(rng.uniform(0.1, 1.0, m))
    y = rng.normal(size=m)
    # rounding only; spacing ratios up to 10 amplify it (the weights grow like
    # h1/h0), hence 1e-9 rather than 1e-12
    assert np.isclose(quadrature_weights(t, "simpson") @ y, simpson(y, x=t), rtol=1e-9, atol=1e-12)


def test_exactness_on_polynomials(rng):
    # Common practice: the trapezoid rule is exact for linear functions and the
    # uneven three-point Simpson rule for quadratics on any spacing; on an even
    # spacing Simpson is exact for cubics.
    for m in (41, 42):  # even and odd number of intervals
        t = _uneven(rng, m, 0.0, 2.0)
        assert np.isclose(quadrature_weights(t) @ (3 * t + 1), 3 * 2.0 + 2.0)
        assert np.isclose(quadrature_weights(t, "simpson") @ t**2, 8 / 3, rtol=1e-12)
    t = np.linspace(0.0, 2.0, 41)
    assert np.isclose(quadrature_weights(t, "simpson") @ t**3, 2.0**4 / 4, rtol=1e-12)


@pytest.mark.parametrize("m, rule, tol", [(201, "trapezoid", 1e-4), (201, "simpson", 1e-8)])
def test_trigonometric_integrals(m, rule, tol):
    # Exact integrals: int_0^pi sin = 2, int_0^{2 pi} cos^2 = pi. Tolerances from the
    # error bounds (Davis and Rabinowitz 1984, sec. 2.1-2.2), h = pi/200:
    # trapezoid (b - a) h^2/12 max|f''| = 6.5e-5 < 1e-4, Simpson (b - a) h^4/180
    # max|f''''| = 1.1e-9 < 1e-8. For cos^2 over whole periods both rules are exact
    # to rounding (periodic integrand, common practice), so 10 tol is loose there.
    t = np.linspace(0, np.pi, m)
    assert abs(quadrature_weights(t, rule) @ np.sin(t) - 2) < tol
    t2 = np.linspace(0, 2 * np.pi, m)
    assert abs(quadrature_weights(t2, rule) @ np.cos(t2) ** 2 - np.pi) < 10 * tol


@pytest.mark.parametrize(
    "grid, n_points, match",
    [
        ([0.0, 0.5, 0.5, 1.0], 4, "strictly increasing"),
        ([0.0, 0.7, 0.5, 1.0], 4, "strictly increasing"),
        ([0.0, np.nan, 0.5, 1.0], 4, "finite"),
        ([0.0, np.inf, 0.5, 1.0], 4, "finite"),
        ([[0.0, 1.0], [2.0, 3.0]], None, "1-D"),
        ([0.0, 0.5, 1.0], 4, "has 3 points but X has 4 columns"),
        ([0.0], None, "at least 2"),
    ],
)
def test_bad_grids(grid, n_points, match):
    with pytest.raises(ValueError, match=match):
        check_grid(grid, n_points)


def test_bad_quadrature_name():
    with pytest.raises(ValueError, match="quadrature must be one of"):
        quadrature_weights([0, 1, 2], "gauss")


def test_grid_from_labels():
    assert grid_from_labels(["a", "b"]) is None
    np.testing.assert_array_equal(grid_from_labels([0, 1.5, "3"]), [0, 1.5, 3])
    with pytest.raises(ValueError, match="mix numbers and words"):
        grid_from_labels([0, 1, "temp"])


def test_resolve_grid_sources():
    X = pd.DataFrame(np.zeros((2, 3)), columns=[10, 20, 40])
    np.testing.assert_array_equal(resolve_grid(None, X, 3), [10, 20, 40])
    np.testing.assert_array_equal(resolve_grid([1, 2, 3], X, 3), [1, 2, 3])
    np.testing.assert_array_equal(resolve_grid(None, np.zeros((2, 3)), 3), [0, 0.5, 1])
    with pytest.raises(ValueError, match="at least 2"):
        resolve_grid(None, np.zeros((2, 1)), 1)


def test_grid_weights_refuse_negative_simpson_weights():
    # On this uneven grid the composite Simpson weights include -1.02 (point 10):
    # the "integral" of a square could be negative, so the grid is refused for
    # Simpson and fine for the trapezoid rule.
    g = [0, .0276, .1442, .3118, .4092, .4233, .5118, .5496, .8277, .9486, .9505, 1]
    assert quadrature_weights(g, "simpson").min() < -1  # the raw rule (scipy's too)
    with pytest.raises(ValueError, match=r"negative weight \(-1.02 at grid point 10\)"):
        grid_weights(g, 12, "simpson")
    np.testing.assert_allclose(grid_weights(g, 12), trapezoid(np.eye(12), x=g))


def test_grid_weights_refuse_complex_grids():
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        grid_weights(np.linspace(0, 1, 4) + 1e-3j, 4)
    with pytest.raises(TypeError, match="grid must hold real numbers"):
        grid_weights([0, 0.5j, 1], 3)


@settings(max_examples=60, deadline=None)
@given(m=st.integers(3, 40), seed=st.integers(0, 2**32 - 1))
def test_simpson_weights_positive_when_spacings_within_factor_two(m, seed):
    # The uneven Simpson end weight of a panel is s/6 (2 - h1/h0) (formula in
    # quadrature_weights, as scipy.integrate.simpson), non-negative exactly when
    # h1/h0 <= 2; grids whose neighbouring spacings differ by at most a factor 2 are
    # accepted, which the hilbert and metrics tests rely on for uneven Simpson grids.
    rng = np.random.default_rng(seed)
    ratios = np.exp(rng.uniform(-np.log(2), np.log(2), m - 2))
    t = np.concatenate([[0.0], np.cumsum(np.concatenate([[1.0], np.cumprod(ratios)]))])
    assert grid_weights(t, m, "simpson").min() >= 0


def test_datetime_labels_become_days_since_the_first():
    # Reference: pandas' own day arithmetic ((Timestamp - Timestamp).days) and
    # the calendar (January has 31 days, 2024 is a leap year: February 29).
    import datetime

    columns = pd.date_range("2024-01-01", periods=12, freq="MS")
    X = pd.DataFrame(np.zeros((2, 12)), columns=columns)
    expected = [(c - columns[0]).days for c in columns]
    np.testing.assert_array_equal(resolve_grid(None, X, 12), expected)
    assert resolve_grid(None, X, 12)[2] == 31 + 29
    # minutes as timestamps: fractions of a day
    stamps = pd.date_range("2024-05-01 08:00", periods=3, freq="30min")
    np.testing.assert_allclose(grid_from_labels(stamps), [0, 1 / 48, 2 / 48], rtol=1e-15)
    # numpy datetime64 and datetime.date
    np.testing.assert_array_equal(
        grid_from_labels(np.array(["2024-01-01", "2024-01-03"], dtype="datetime64[D]")), [0, 2]
    )
    np.testing.assert_array_equal(
        grid_from_labels([datetime.date(2024, 1, 1), datetime.date(2024, 3, 1)]), [0, 60]
    )


def test_timedelta_labels_become_days():
    # Reference: 30 minutes is 1/48 day, 36 hours is 1.5 days (arithmetic).
    import datetime

    X = pd.DataFrame(np.zeros((2, 3)), columns=pd.to_timedelta([0, 30, 2160], unit="min"))
    np.testing.assert_allclose(resolve_grid(None, X, 3), [0, 1 / 48, 1.5], rtol=1e-15)
    np.testing.assert_allclose(
        grid_from_labels([datetime.timedelta(hours=12), np.timedelta64(1, "D")]), [0.5, 1.0]
    )


def test_other_labels_keep_the_even_default_and_mixtures_fail():
    months = ["Jan", "Feb", "Mar", "Apr"]
    X = pd.DataFrame(np.zeros((2, 4)), columns=months)
    np.testing.assert_allclose(resolve_grid(None, X, 4), np.linspace(0, 1, 4))
    with pytest.raises(ValueError, match="mix dates or times with other labels"):
        grid_from_labels([pd.Timestamp("2024-01-01"), 3.0])
    with pytest.raises(ValueError, match="strictly increasing"):
        grid_from_labels(pd.to_datetime(["2024-02-01", "2024-01-01"]))
    tz = [pd.Timestamp("2024-01-01", tz="UTC"), pd.Timestamp("2024-01-02")]
    with pytest.raises(ValueError, match="cannot be compared"):
        grid_from_labels(tz)


def test_data_weights():
    # The mean data term weighs every observed point alike (1 / n_obs); the
    # integral data term is the trapezoid rule (scipy.integrate.trapezoid).
    from skfunc._grid import data_weights

    t = np.array([0.0, 0.1, 0.5, 1.0])
    np.testing.assert_allclose(data_weights(t), 0.25)
    mask = np.array([True, False, True, True])
    np.testing.assert_allclose(data_weights(t, observed=mask), mask / 3)
    y = np.array([1.0, 2.0, 0.5, 3.0])
    assert np.isclose(data_weights(t, "integral") @ y, trapezoid(y, x=t))
    with pytest.raises(ValueError, match="data_term must be one of"):
        data_weights(t, "sum")
