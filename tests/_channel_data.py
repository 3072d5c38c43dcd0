"""Two-channel curves and the agreement check shared by the channel tests.

The first channel lives on T (41 points on [0, 1]), the second on its own
domain and grid U (hours 0..5, 26 points), partly related to the first.
"""

import numpy as np

from skfunc.datasets import make_smooth_regression

T = np.linspace(0.0, 1.0, 41)
#: a second channel on its own domain (hours 0..5) and grid
U = np.linspace(0.0, 5.0, 26)

#: agreement of fits that are the same arithmetic up to the order of a few
#: operations and scalar factors in the penalty's coordinates (rounding,
#: measured below 1e-13 relative)
EXACT = 1e-10


def close(a, b, tol=EXACT):
    """Assert ``max |a - b| <= tol * max |b|``."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    scale = max(np.abs(b).max(), 1e-300)
    assert np.abs(a - b).max() <= tol * scale, np.abs(a - b).max() / scale


def curves(n=80, seed=0):
    """Curves on T with a scalar response."""
    X, y, _ = make_smooth_regression(n, grid=T, noise=0.1, random_state=seed)
    return X, y


def two_channels(n=80, seed=0, second_noise=0.0):
    """Curves on T and a second channel on U (noise of standard deviation
    ``second_noise`` on it), with a response that depends on both."""
    X, y = curves(n, seed)
    rng = np.random.default_rng(seed + 1)
    other, _, _ = make_smooth_regression(n, grid=np.linspace(0, 1, U.size),
                                         noise=0.0, random_state=seed + 5)
    second = 0.5 * X[:, ::-1][:, : U.size] + other
    if second_noise:
        second = second + rng.normal(0, second_noise, (n, U.size))
    y2 = y + second @ np.full(U.size, 0.2 * (U[1] - U[0])) + rng.normal(0, 0.05, n)
    return np.hstack([X, second]), y2
