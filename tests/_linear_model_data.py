"""Simulated curves with a known coefficient function, for the linear-model tests.

Curves are truncated Karhunen-Loeve expansions of Brownian motion on [0, 1]
(eigenfunctions sqrt(2) sin((k - 1/2) pi t), standard deviations
1 / ((k - 1/2) pi); common practice), evaluated exactly at any grid, so the
same curves can be sampled on several grids.
"""

import numpy as np
from conftest import trapezoid_weights  # noqa: F401 (the linear-model tests import it here)

N_TERMS = 15


def curve_scores(n, rng, n_terms=N_TERMS):
    """Random expansion coefficients of n curves."""
    k = np.arange(1, n_terms + 1) - 0.5
    return rng.normal(size=(n, n_terms)) / (k * np.pi)


def curves_on(scores, t):
    """Values of the curves with these scores at the points t."""
    k = np.arange(1, scores.shape[1] + 1) - 0.5
    return scores @ (np.sqrt(2) * np.sin(np.pi * np.outer(k, t)))


def true_beta(t):
    """A smooth coefficient function."""
    return 2.0 * np.sin(2 * np.pi * t) + 1.5 * np.cos(np.pi * t)


def integral_with_beta(scores):
    """Exact int_0^1 x_i(t) beta(t) dt, by Gauss-Legendre quadrature with 200
    nodes (exact to rounding for these smooth integrands)."""
    nodes, weights = np.polynomial.legendre.leggauss(200)
    t, w = (nodes + 1) / 2, weights / 2
    return curves_on(scores, t) @ (w * true_beta(t))


