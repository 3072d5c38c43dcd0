"""Critical values of confidence bands: pointwise and simultaneous.

A band for a function ``f = E theta`` (``E`` evaluates the coefficients
``theta`` at the points of a grid) with ``theta`` approximately
``N(theta_hat, V)`` is ``f_hat +/- c sd`` with ``sd^2 = diag(E V E')``.
Pointwise, ``c`` is the normal quantile ``z_{(1 + level) / 2}``.
Simultaneous, ``c`` is the ``level`` quantile of

    max_j |E_j e| / sd_j,    e ~ N(0, V),

found by simulation (Ruppert, Wand and Carroll, 2003, section 6.5), so the
whole function lies inside the band with probability ``level`` under that
normal distribution. It lies between the normal quantile (all points
perfectly correlated) and the Sidak value ``z_{(1 + level^(1/m)) / 2}`` (m
independent points).

Every band of skfunc takes its critical value from :func:`critical_value`,
so the option and its checks are spelled the same everywhere
(``simultaneous``, ``n_draws``, ``random_state``).

References
----------
Ruppert, D., Wand, M. P. and Carroll, R. J. (2003). *Semiparametric
Regression*, section 6.5. Cambridge University Press.
"""

from numbers import Integral

import numpy as np
from scipy.stats import norm
from sklearn.utils import check_random_state

from ._blocks import row_blocks

#: the fewest posterior draws accepted for a simultaneous critical value
MIN_DRAWS = 100

#: points whose standard deviation is below this fraction of the largest
#: carry no uncertainty worth a band (rounding level of a variance, 1e-16,
#: is 1e-8 of a standard deviation) and are left out of the maximum
_SD_RTOL = 1e-7


def check_n_draws(n_draws):
    """``n_draws`` as an int >= :data:`MIN_DRAWS`, else a ValueError naming it."""
    if isinstance(n_draws, bool) or not isinstance(n_draws, Integral) \
            or n_draws < MIN_DRAWS:
        raise ValueError(f"n_draws must be an integer >= {MIN_DRAWS}; got {n_draws!r}.")
    return int(n_draws)


def critical_value(level, *, simultaneous=False, covariance=None, evaluate=None,
                   sd=None, n_draws=4000, random_state=None):
    """The band's critical value: the normal quantile, or the simulated one.

    Parameters
    ----------
    level : float
        Coverage level in (0, 1), already checked.
    simultaneous : bool, default=False
        Whether the level holds for all points at once.
    covariance : ndarray of shape (d, d)
        Covariance ``V`` of the coefficients (simultaneous only).
    evaluate : callable
        ``evaluate(e)`` maps coefficient draws ``e`` (n, d) to the function's
        values at the band's points (n, m) (simultaneous only).
    sd : ndarray of shape (m,)
        Pointwise standard deviations ``sqrt(diag(E V E'))`` (simultaneous only).
    n_draws : int, default=4000
        Number of draws from ``N(0, V)``.
    random_state : int, RandomState instance or None, default=None
        Seeds the draws.

    Returns
    -------
    c : float
        NaN when the covariance is not finite (no residual degrees of freedom).
    """
    if not simultaneous:
        return float(norm.ppf(0.5 + level / 2))
    n_draws = check_n_draws(n_draws)
    rng = check_random_state(random_state)
    covariance = np.asarray(covariance, dtype=np.float64)
    sd = np.asarray(sd, dtype=np.float64).ravel()
    if not (np.all(np.isfinite(covariance)) and np.all(np.isfinite(sd))):
        return float("nan")
    inside = sd > _SD_RTOL * sd.max(initial=0.0)
    if not inside.any():
        return float(norm.ppf(0.5 + level / 2))  # no uncertainty anywhere: any c
    eigval, eigvec = np.linalg.eigh(covariance)
    root = eigvec * np.sqrt(np.maximum(eigval, 0.0))  # root @ root.T = covariance
    worst = np.empty(n_draws)
    for rows in row_blocks(n_draws, sd.size):
        e = rng.standard_normal((rows.stop - rows.start, root.shape[1])) @ root.T
        values = np.asarray(evaluate(e)).reshape(e.shape[0], -1)
        worst[rows] = np.max(np.abs(values[:, inside]) / sd[inside], axis=1)
    return float(np.quantile(worst, level))
