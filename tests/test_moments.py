"""Tests of the streaming moments behind partial_fit and distributed fits."""

import numpy as np

from skfunc._moments import merge_moments, moments, scale_moments


def test_merged_chunks_match_numpy_covariance(rng):
    # Source: numpy.cov and numpy.mean of the stacked rows; chunks merged in
    # any grouping (Chan, Golub and LeVeque, 1979, pairwise update).
    X = 1e4 + rng.standard_normal((103, 6)) @ rng.standard_normal((6, 6))
    parts = [moments(chunk) for chunk in np.array_split(X, [1, 20, 21, 70])]
    tree = merge_moments(merge_moments(*parts[:2]), merge_moments(*parts[2:]))
    chain = merge_moments(*parts)
    for stats in (tree, chain, moments(X, chunk_size=7)):
        assert stats["n"] == 103
        np.testing.assert_allclose(stats["mean"], X.mean(axis=0), rtol=1e-14)
        np.testing.assert_allclose(stats["scatter"] / 102, np.cov(X, rowvar=False),
                                   rtol=1e-9)


def test_operator_and_scaling(rng):
    # Source: numpy.cov of the transformed rows.
    X = rng.standard_normal((50, 4))
    A = rng.standard_normal((4, 3))
    np.testing.assert_allclose(
        moments(X, A)["scatter"] / 49, np.cov(X @ A, rowvar=False), rtol=1e-12
    )
    scale = np.array([1.0, 2.0, 3.0, 4.0])
    scaled = scale_moments(moments(X), scale)
    np.testing.assert_allclose(scaled["scatter"] / 49, np.cov(X * scale, rowvar=False),
                               rtol=1e-12)
