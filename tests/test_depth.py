"""Depth and outlyingness of curves against their published definitions.

Band depth and modified band depth: Lopez-Pintado & Romo (2009), JASA
104(486), 718-734, with J = 2, enumerated pair by pair here. Integrated depth:
Fraiman & Muniz (2001), Test 10(2), 419-440. Directional outlyingness: Dai &
Genton (2018), JCGS 27(4), 923-934. Time is measured with the trapezoid rule
(numpy.trapezoid) over the domain, as the package documents.
"""

import numpy as np
import pytest
from scipy.stats import median_abs_deviation

from skfunc.outliers import (
    band_depth,
    integrated_depth,
    magnitude_shape_outlyingness,
    modified_band_depth,
)


def _pairs(n):
    i, j = np.triu_indices(n, k=1)
    return i, j


def brute_band_depths(X, reference, t):
    """BD and MBD by enumerating every pair (Lopez-Pintado & Romo, 2009,
    definitions of BD_{n,2} and MBD_{n,2}); time measured by numpy.trapezoid."""
    i, j = _pairs(len(reference))
    lower = np.minimum(reference[i], reference[j])
    upper = np.maximum(reference[i], reference[j])
    bd, mbd = [], []
    for x in X:
        inside = (lower <= x) & (x <= upper)  # (n_pairs, m)
        bd.append(np.mean(inside.all(axis=1)))
        mbd.append(np.mean(np.trapezoid(inside.astype(float), t, axis=1))
                   / (t[-1] - t[0]))
    return np.array(bd), np.array(mbd)


def brute_integrated_depth(X, reference, t):
    """Fraiman & Muniz (2001): D(x) = int 1 - |1/2 - F_t(x(t))| dt with the
    empirical distribution function F_t, over a domain of length 1."""
    out = []
    for x in X:
        cdf = np.array([np.mean(reference[:, k] <= x[k]) for k in range(len(t))])
        out.append(np.trapezoid(1 - np.abs(0.5 - cdf), t) / (t[-1] - t[0]))
    return np.array(out)


def _grids(rng, m):
    even = np.linspace(0.0, 1.0, m)
    uneven = np.sort(np.concatenate([[0.0, 1.0], rng.uniform(0, 1, m - 2)]))
    return {"even": even, "uneven": uneven}


@pytest.mark.parametrize("kind", ["even", "uneven"])
@pytest.mark.parametrize("ties", [False, True])
def test_depths_equal_pair_enumeration_on_60_curves(kind, ties):
    rng = np.random.default_rng(0)
    t = _grids(rng, 25)[kind]
    X = np.cumsum(rng.normal(size=(60, 25)), axis=1)  # crossing random walks
    if ties:
        X = np.round(X)  # ties: curves touching each other
    bd, mbd = brute_band_depths(X, X, t)
    np.testing.assert_array_equal(band_depth(X, grid=t), bd)
    np.testing.assert_allclose(modified_band_depth(X, grid=t), mbd,
                               rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(integrated_depth(X, grid=t),
                               brute_integrated_depth(X, X, t), rtol=1e-12)
    # new curves scored against the sample (not part of it)
    new = X[:10] + rng.choice([-0.5, 0.0, 0.5], size=(10, 1))
    bd, mbd = brute_band_depths(new, X, t)
    np.testing.assert_array_equal(band_depth(new, X, grid=t), bd)
    np.testing.assert_allclose(modified_band_depth(new, X, grid=t), mbd,
                               rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(integrated_depth(new, X, grid=t),
                               brute_integrated_depth(new, X, t), rtol=1e-12)


def test_uneven_grid_weights_time_not_points():
    # the time inside a band is measured, not the share of grid points: on a
    # grid crowded in [0, 0.1] the two differ (a wrong, unweighted version
    # would agree with the point share)
    t = np.concatenate([np.linspace(0, 0.1, 41)[:-1], np.linspace(0.1, 1, 10)])
    low, high = np.zeros_like(t), np.ones_like(t)
    x = np.where(t < 0.1, 2.0, 0.5)  # outside the band on [0, 0.1)
    depth = modified_band_depth(x[None], np.vstack([low, high]), grid=t)
    expected = np.trapezoid((x <= 1).astype(float), t)  # numpy: about 0.9
    np.testing.assert_allclose(depth, [expected])
    assert abs(depth[0] - np.mean(x <= 1)) > 0.5


def test_band_depths_invariant_to_monotone_transform_at_each_time():
    # Lopez-Pintado & Romo (2009), section 3 (invariance under
    # transformations T(x)(t) = a(t) x(t) + b(t), a > 0); rank-based depths
    # keep any common increasing map per time point
    rng = np.random.default_rng(1)
    t = np.linspace(0, 1, 30)
    X = np.cumsum(rng.normal(size=(40, 30)), axis=1)
    scale = rng.uniform(0.2, 3.0, size=30)
    shift = rng.normal(size=30)
    Y = np.exp(scale * X) + shift  # increasing at each t
    for depth in (band_depth, modified_band_depth, integrated_depth):
        np.testing.assert_allclose(depth(Y, grid=t), depth(X, grid=t), rtol=1e-12)
    # a map that is not monotone (squaring) at some times changes the depths
    Z = X.copy()
    Z[:, 10:20] = Z[:, 10:20] ** 2
    assert not np.allclose(modified_band_depth(Z, grid=t),
                           modified_band_depth(X, grid=t))


@pytest.mark.parametrize("depth", [band_depth, modified_band_depth,
                                   integrated_depth])
def test_centre_of_symmetric_sample_is_deepest(depth):
    # Lopez-Pintado & Romo (2009), Theorem 3 (maximality at the centre of
    # symmetry); here a sample symmetric about mu, mu included
    rng = np.random.default_rng(2)
    t = np.linspace(0, 1, 40)
    mu = np.sin(2 * np.pi * t)
    e = np.cumsum(rng.normal(size=(30, 40)), axis=1) / 5
    X = np.vstack([mu + e, mu - e, mu])
    d = depth(X, grid=t)
    assert np.argmax(d) == len(X) - 1
    assert d[-1] > np.max(d[:-1])


@pytest.mark.parametrize("depth", [band_depth, modified_band_depth,
                                   integrated_depth])
def test_depth_decreases_outward(depth):
    # Lopez-Pintado & Romo (2009), Theorem 3 (monotonicity relative to the
    # deepest point); curves median + s for growing shifts s
    rng = np.random.default_rng(3)
    t = np.linspace(0, 1, 50)
    X = np.cumsum(rng.normal(size=(80, 50)), axis=1) / 7 + np.cos(3 * t)
    centre = np.median(X, axis=0)
    shifts = np.array([0.0, 0.3, 0.6, 1.0, 1.5, 2.5, 4.0, 8.0])
    for sign in (1, -1):
        d = depth(centre + sign * shifts[:, None], X, grid=t)
        assert np.all(np.diff(d) <= 0)
        assert d[0] > d[-1]


def test_magnitude_shape_match_definition():
    # Dai & Genton (2018), eqs. (2)-(4) for p = 1: O(t) = (x(t) - med(t)) /
    # MAD(t) (Stahel-Donoho outlyingness with direction), MO = int O w,
    # VO = int (O - MO)^2 w with w = 1/|T|; MAD from scipy, scaled to a
    # normal SD (scipy's scale="normal")
    rng = np.random.default_rng(4)
    t = np.sort(np.concatenate([[0, 2], rng.uniform(0, 2, 28)]))
    R = rng.normal(size=(50, 30)) + np.sin(t)
    X = R[:5] + np.array([[0], [3], [-2], [0], [0]]) + np.outer(
        [0, 0, 0, 1, 0], np.sin(9 * t))
    median = np.median(R, axis=0)
    mad = median_abs_deviation(R, axis=0, scale="normal")
    O = (X - median) / mad
    mo = np.trapezoid(O, t, axis=1) / 2
    vo = np.trapezoid((O - mo[:, None]) ** 2, t, axis=1) / 2
    got_mo, got_vo = magnitude_shape_outlyingness(X, R, grid=t)
    np.testing.assert_allclose(got_mo, mo, rtol=1e-12)
    np.testing.assert_allclose(got_vo, vo, rtol=1e-12)


def _smooth_curves(t, coefs):
    a, b, c = coefs.T
    return (a[:, None] * np.sin(2 * np.pi * t) + b[:, None] * np.cos(np.pi * t)
            + c[:, None] * t**2)


def test_resolution_invariance():
    # The same curves sampled on 101 even points and on 2001 uneven points:
    # integrals of indicators and of smooth outlyingness agree up to the
    # trapezoid rule's error. Derivation of the tolerance: an indicator with
    # k jumps is integrated with error <= k * h_max / 2; these curves cross
    # each other at most 3 times, the coarse h is 0.01, so 3 * 0.01 / 2.
    rng = np.random.default_rng(5)
    coefs = rng.normal(size=(40, 3))
    coarse = np.linspace(0, 1, 101)
    fine = np.sort(np.concatenate([[0, 1], rng.uniform(0, 1, 1999) ** 2]))
    Xc, Xf = _smooth_curves(coarse, coefs), _smooth_curves(fine, coefs)
    tol = 3 * 0.01 / 2
    for depth in (modified_band_depth, integrated_depth):
        np.testing.assert_allclose(depth(Xc, grid=coarse), depth(Xf, grid=fine),
                                   atol=tol)
    mo_c, vo_c = magnitude_shape_outlyingness(Xc, grid=coarse)
    mo_f, vo_f = magnitude_shape_outlyingness(Xf, grid=fine)
    # smooth integrands: relative agreement to 2 % (trapezoid error of a
    # smooth function at h = 0.01 is far smaller; the pointwise medians of 40
    # curves switch curve at the crossings, which the coarse grid locates to h)
    np.testing.assert_allclose(mo_c, mo_f, rtol=0.02, atol=0.02)
    np.testing.assert_allclose(vo_c, vo_f, rtol=0.02, atol=0.02)
    # a grid-point average (unweighted) would not be invariant here
    unweighted = np.mean(Xf > np.median(Xf, axis=0), axis=1)
    weighted = np.trapezoid((Xf > np.median(Xf, axis=0)).astype(float), fine)
    assert np.max(np.abs(unweighted - weighted)) > 0.05


def test_bad_inputs():
    X = np.random.default_rng(6).normal(size=(5, 10))
    with pytest.raises(ValueError, match="at least 2 curves"):
        band_depth(X, X[:1])
    with pytest.raises(ValueError, match="at least 2 curves"):
        modified_band_depth(X[:1])
    bad = X.copy()
    bad[2, 3] = np.nan
    with pytest.raises(ValueError, match="NaN"):
        modified_band_depth(bad)
    with pytest.raises(ValueError, match="NaN"):
        integrated_depth(X, bad)
    with pytest.raises(ValueError, match="same grid"):
        band_depth(X, X[:, :5])
    with pytest.raises(ValueError, match="at least 2 grid points"):
        magnitude_shape_outlyingness(X[:, :1])
    with pytest.raises(ValueError, match="grid has 3 points"):
        modified_band_depth(X, grid=[0, 1, 2])
