"""Deterministic minimum covariance determinant (DetMCD).

The minimum covariance determinant (MCD) estimate of location and scatter
is the mean and covariance of the ``h`` points (about half) whose
covariance has the smallest determinant (Rousseeuw, 1984). Its usual
algorithm, FastMCD (Rousseeuw & Van Driessen, 1999), starts concentration
steps from random subsets drawn by row position, so the estimate can change
with the order of the rows. DetMCD (Hubert, Rousseeuw & Verdonck, 2012)
starts them from six deterministic estimates instead:

1. standardize each variable by its median and Qn scale (Rousseeuw &
   Croux, 1993);
2. six robust correlation-like matrices of the standardized data ``Z``: the
   correlation of ``tanh(Z)``, Spearman's correlation, the correlation of
   the normal scores, the spatial sign covariance, the covariance of the
   half of the points nearest the median (the first step of BACON) and the
   Gnanadesikan-Kettenring matrix of the orthogonalized estimator (OGK);
3. each made positive definite with the right scale: its eigenvectors
   ``E``, variances ``Qn(Z E)^2`` along them, the centre
   ``S^(1/2) median(Z S^(-1/2))``;
4. from each, the ``ceil(n / 2)`` nearest points give a mean and a
   covariance, their ``h`` nearest points a first subset, and concentration
   steps (C-steps) run to convergence; the subset with the smallest
   determinant wins. A C-step's result depends on its subset only, so a
   start whose path reaches a subset an earlier start's path went through
   ends as that one did, without running the steps again (the starts often
   give the same first subset).

As in scikit-learn's :class:`sklearn.covariance.MinCovDet`, ``h`` is
``ceil((n + p + 1) / 2)``; the raw distances are made consistent at the
normal with the factor of Croux & Haesbroeck (1999) (small-sample form of
Pison, Van Aelst & Willems, 2002, section 3), points with a consistent
squared distance below the 0.975 chi-square quantile are kept, and the
reweighted estimate is their mean and covariance (divided by the number
of points) times the same factor at 0.975.

Everything is computed on the rows sorted lexicographically, so the result
depends on the set of rows only, not on their order, bit for bit, and there
is no random number generator. For a fixed number of variables the cost is
O(n log n) per sort, O(n) per C-step and O(n log n) per round of the exact
Qn selection (two rounds for 500 to 500,000 points; each round that
fails to bracket the target falls back to a weighted-median pivot, so the
worst case is O(n log^2 n)).
"""

from functools import lru_cache
from typing import NamedTuple

import numpy as np
from scipy.special import ndtri
from scipy.stats import chi2, rankdata

#: Qn's constant for consistency at the normal: 1 / (sqrt(2) Phi^-1(5/8))
#: (Rousseeuw & Croux, 1993)
QN_CONSTANT = 1.0 / (np.sqrt(2.0) * ndtri(0.625))
#: small-sample factors d_n of Croux & Rousseeuw (1992) for n = 2..9 (from
#: memory; the tests check by simulation that they make Qn average 1 on
#: normal samples); above 9: n / (n + 1.4) for odd n, n / (n + 3.8) for even n
QN_SMALL = {2: 0.399, 3: 0.994, 4: 0.512, 5: 0.844, 6: 0.611, 7: 0.857,
            8: 0.669, 9: 0.872}
#: reweighting keeps points whose consistent squared distance is below this
#: chi-square quantile (Rousseeuw & Van Driessen, 1999; as scikit-learn)
REWEIGHT_QUANTILE = 0.975
#: at most this many C-steps from each start (each lowers the determinant
#: or leaves the subset unchanged, so they stop long before)
MAX_C_STEPS = 200
#: candidate pairwise differences are gathered and selected directly once
#: at most this many per point, or GATHER_ANY in all, are left (a larger
#: GATHER_ANY makes a fixed cost: 2**16 made Qn of 500 points cost twice
#: as much per point as of 4,000)
GATHER_PER_POINT = 4
GATHER_ANY = 1 << 12
#: a covariance whose smallest eigenvalue is below this fraction of its
#: largest is singular (an exact fit: points on a hyperplane)
SINGULAR_RTOL = 1e-12
START_NAMES = ("tanh", "spearman", "normal scores", "spatial sign", "bacon",
               "ogk")


class ExactFitError(ValueError):
    """More than about half of the points lie on a hyperplane: the MCD
    covariance is singular."""


class MCDResult(NamedTuple):
    """DetMCD estimate; masks refer to the rows in their given order."""
    location: np.ndarray       # reweighted, as MinCovDet.location_
    covariance: np.ndarray     # reweighted and consistent, as covariance_
    raw_location: np.ndarray   # mean of the best h-subset
    raw_covariance: np.ndarray  # its covariance (divided by h)
    raw_support: np.ndarray    # the best h-subset
    support: np.ndarray        # the points kept by the reweighting
    start: str                 # the start the best subset came from
    raw_determinants: np.ndarray  # det of each start's final subset (Z scale)


# ----------------------------------------------------------------------- Qn
def _count_below(x, rows, left, right, pivot, strict):
    """For each row i, the first j in [left, right) with x[j] - x[i] >= pivot
    (strict) or > pivot (not strict). The differences are computed as
    compared, so the count is exact in floating point: a search on
    x[i] + pivot, then corrected where rounding moved it."""
    target = x[rows] + pivot
    j = np.searchsorted(x, target, side="left" if strict else "right")
    j = np.clip(j, left, right)

    def inside(k):
        d = x[np.minimum(k, x.size - 1)] - x[rows]
        return d < pivot if strict else d <= pivot

    while True:  # step back while the previous difference is not inside
        back = (j > left) & ~inside(j - 1)
        if not back.any():
            break
        j = j - back
    while True:  # step forward while the current difference is inside
        ahead = (j < right) & inside(j)
        if not ahead.any():
            break
        j = j + ahead
    return j


def _candidates(x, rows, left, size, positions):
    """Differences at the given positions of the remaining candidates, taken
    row by row (row i holds ``x[left[i]:left[i] + size[i]] - x[i]``)."""
    ends = np.cumsum(size)
    row = np.searchsorted(ends, positions, side="right")
    column = left[row] + positions - (ends[row] - size[row])
    return x[column] - x[rows[row]]


def kth_pairwise_difference(x, k):
    """The k-th smallest (1-based) of ``x[j] - x[i]``, i < j, for sorted x.

    Row i holds the increasing differences ``x[i+1:] - x[i]``, of which the
    rows keep a window of candidates. Each step takes two pivots bracketing
    the k-th from an evenly spaced sample of n candidates (their rank
    spread is about sqrt(q (1 - q) / n) of the candidates, q the target's
    share), counts the candidates below each pivot in every row (a search,
    O(n log n)) and keeps the candidates between them, about 6 / sqrt(n) of
    the rest. Should that fail to shrink the window, the weighted median of
    the rows' middle candidates (Croux & Rousseeuw, 1992) serves as one
    pivot, which removes at least a quarter. Once at most a few per point
    are left, they are gathered and selected directly. Deterministic: it
    depends on the sorted values only.
    """
    n = x.size
    rows = np.arange(n)
    left, right = rows + 1, np.full(n, n)
    below = 0  # candidates known to lie below the remaining ones
    shrunk = True
    while True:
        size = right - left
        total = int(size.sum())
        rank = k - below  # of the k-th among the remaining candidates
        if total <= max(GATHER_PER_POINT * n, GATHER_ANY):
            keep = size > 0
            first = np.repeat(left[keep] - np.cumsum(size[keep]) + size[keep], size[keep])
            values = (x[first + np.arange(total)]
                      - np.repeat(x[keep], size[keep]))
            return np.partition(values, rank - 1)[rank - 1]
        if shrunk:
            sample = np.sort(_candidates(
                x, rows, left, size, (np.arange(n) * (total / n)).astype(np.int64)))
            share = rank / total
            spread = 3.0 * np.sqrt(share * (1.0 - share) / n) + 2.0 / n
            low, high = (sample[int(np.clip(np.floor((share + sign * spread) * n),
                                            0, n - 1))] for sign in (-1, 1))
        else:
            active = np.flatnonzero(size > 0)
            middle = x[left[active] + size[active] // 2] - x[active]
            order = np.argsort(middle, kind="stable")
            weight = np.cumsum(size[active][order])
            low = high = middle[order[np.searchsorted(weight, 0.5 * weight[-1])]]
        lt = _count_below(x, rows, left, right, low, strict=True)
        le = _count_below(x, rows, left, right, high, strict=False)
        n_lt = below + int(np.sum(lt - left))
        n_le = below + int(np.sum(le - left))
        if k <= n_lt:
            right = lt
        elif k > n_le:
            below, left = n_le, le
        elif low == high:
            return low
        else:
            below, left, right = n_lt, lt, le
        shrunk = int(np.sum(right - left)) < total


def qn_scale(x):
    """Qn scale of a 1-d sample (Rousseeuw & Croux, 1993): the k-th smallest
    of the n(n-1)/2 distances between points, k = C(floor(n/2) + 1, 2),
    times 2.2219 and the small-sample factor; consistent for the normal SD.
    Exact; see :func:`kth_pairwise_difference` for the cost."""
    x = np.sort(np.asarray(x, dtype=np.float64))
    n = x.size
    if n < 2:
        return 0.0
    h = n // 2 + 1
    value = kth_pairwise_difference(x, h * (h - 1) // 2)
    small = QN_SMALL.get(n, n / (n + 1.4) if n % 2 else n / (n + 3.8))
    return float(QN_CONSTANT * small * value)


# ---------------------------------------------------------------- the MCD
@lru_cache(maxsize=64)
def consistency_factor(n_features, fraction):
    """Factor making the covariance of the ``fraction`` of normal points
    with the smallest distances consistent: ``fraction / P(chi2_{p+2} <=
    q)``, q the ``fraction`` quantile of chi2_p (Croux & Haesbroeck, 1999;
    Pison et al., 2002, section 3)."""
    q = chi2.ppf(fraction, df=n_features)
    return float(fraction / chi2.cdf(q, df=n_features + 2))


@lru_cache(maxsize=64)
def _reweight_cutoff(n_features):
    return float(chi2.ppf(REWEIGHT_QUANTILE, df=n_features))


def _mean_cov(points):
    mean = points.sum(axis=0) / points.shape[0]
    centred = points - mean
    return mean, centred.T @ centred / points.shape[0]


def _metric(cov):
    """Eigenvalues and eigenvectors of cov, or None when it is singular."""
    values, vectors = np.linalg.eigh(cov)
    if not np.isfinite(values[-1]) or values[0] <= SINGULAR_RTOL * max(values[-1], 0):
        return None
    return values, vectors


def _sq_distances(Z, mean, metric):
    """Squared Mahalanobis distances in the metric of :func:`_metric`."""
    values, vectors = metric
    projected = (Z - mean) @ vectors
    return (projected * projected) @ (1.0 / values)


def _nearest(d, h):
    return np.argpartition(d, h - 1)[:h] if h < d.size else np.arange(d.size)


def _correlation(Y):
    centred = Y - Y.mean(axis=0)
    cov = centred.T @ centred
    sd = np.sqrt(np.diag(cov))
    sd = np.where(sd > 0, sd, 1.0)
    return cov / np.outer(sd, sd)


def _starting_matrices(Z):
    """The six scatter matrices of Hubert, Rousseeuw & Verdonck (2012),
    section 2.2, on standardized data."""
    n, p = Z.shape
    ranks = np.column_stack([rankdata(column) for column in Z.T])
    norms = np.linalg.norm(Z, axis=1)
    signs = Z / np.where(norms > 0, norms, 1.0)[:, None]
    half = Z[_nearest(norms, (n + 1) // 2)]
    gk = np.eye(p)
    for a in range(p):
        for b in range(a + 1, p):
            gk[a, b] = gk[b, a] = 0.25 * (qn_scale(Z[:, a] + Z[:, b]) ** 2
                                          - qn_scale(Z[:, a] - Z[:, b]) ** 2)
    return (_correlation(np.tanh(Z)),
            _correlation(ranks),
            _correlation(ndtri((ranks - 1 / 3) / (n + 1 / 3))),
            signs.T @ signs / n,
            _mean_cov(half)[1],
            gk)


def _start(Z, S):
    """Section 2.3: positive definite scatter with Qn variances along the
    eigenvectors of S, and the centre S^(1/2) median(Z S^(-1/2)); None when
    a variance is 0."""
    _, vectors = np.linalg.eigh(S)
    variances = np.array([qn_scale(column) ** 2 for column in (Z @ vectors).T])
    if np.any(variances <= 0):
        return None
    root = vectors * np.sqrt(variances) @ vectors.T
    inverse_root = vectors / np.sqrt(variances) @ vectors.T
    centre = root @ np.median(Z @ inverse_root, axis=0)
    return centre, vectors * variances @ vectors.T


class _Paths:
    """C-step paths (Rousseeuw & Van Driessen, 1999) from several starts,
    sharing their common parts.

    A C-step replaces a subset by the h points nearest its mean in its
    metric: the next subset depends on the current one only. So once a path
    reaches a subset an earlier path went through, it ends as that path
    ended, the same number of steps later; the rest is not recomputed (the
    starts of DetMCD often give the same first subsets). Results are those
    of running every path in full, as long as the shortcut stays within
    MAX_C_STEPS; otherwise the path runs on.
    """

    def __init__(self, Z, h):
        self.Z, self.h = Z, h
        self.seen = {}  # subset's bytes -> (index of the path's outcome, step)
        self.outcomes = []  # (determinant, subset, step it ended at or None)

    def concentrate(self, subset):
        """C-steps from a subset until it no longer changes. Returns
        (determinant, subset); determinant 0 for an exact fit."""
        Z, h = self.Z, self.h
        member = np.zeros(Z.shape[0], dtype=bool)
        member[subset] = True
        index = len(self.outcomes)
        for step in range(MAX_C_STEPS):
            key = np.packbits(member).tobytes()
            earlier, at = self.seen.get(key, (index, 0))
            if earlier != index:
                det, final, end = self.outcomes[earlier]
                if end is not None and step + end - at < MAX_C_STEPS:
                    return self._ended(det, final, step + end - at)
            self.seen.setdefault(key, (index, step))
            mean, cov = _mean_cov(Z[member])
            metric = _metric(cov)
            if metric is None:
                return self._ended(0.0, member, step)
            new = np.zeros_like(member)
            new[_nearest(_sq_distances(Z, mean, metric), h)] = True
            if np.array_equal(new, member):
                return self._ended(float(np.prod(metric[0])), member, step)
            member = new
        return self._ended(float(np.linalg.det(_mean_cov(Z[member])[1])), member, None)

    def _ended(self, det, member, step):
        self.outcomes.append((det, member, step))
        return det, member


def deterministic_mcd(X):
    """DetMCD of the rows of X (n_samples, n_features); see the module.

    Raises ExactFitError when a variable's Qn scale is 0 or the best subset
    has a singular covariance (more than about half of the points on a
    hyperplane), and ValueError with fewer than n_features + 1 rows.
    """
    X = np.asarray(X, dtype=np.float64)
    n, p = X.shape
    if n < p + 1:
        raise ValueError(
            f"The minimum covariance determinant of {p} variables needs at least "
            f"{p + 1} points; got {n}."
        )
    h = min(int(np.ceil(0.5 * (n + p + 1))), n)
    order = np.lexsort(X.T[::-1])  # canonical row order: the result is order-free
    Xs = X[order]
    median = np.median(Xs, axis=0)
    scale = np.array([qn_scale(column) for column in Xs.T])
    if np.any(scale <= 0):
        raise ExactFitError(
            "More than half of the values of a variable are equal (its Qn scale "
            "is 0): the minimum covariance determinant is singular."
        )
    Z = (Xs - median) / scale
    results = []
    paths = _Paths(Z, h)
    for S in _starting_matrices(Z):
        start = _start(Z, S)
        metric = None if start is None else _metric(start[1])
        if metric is not None:
            nearest = _nearest(_sq_distances(Z, start[0], metric), max((n + 1) // 2, p + 1))
            mean, cov = _mean_cov(Z[nearest])
            metric = _metric(cov)
        if metric is None:
            results.append((0.0, None))
        else:
            results.append(paths.concentrate(_nearest(_sq_distances(Z, mean, metric), h)))
    determinants = np.array([det for det, _ in results])
    found = [i for i, (_, member) in enumerate(results) if member is not None]
    if not found:
        raise ExactFitError("Every starting estimate of the minimum covariance "
                            "determinant is singular.")
    best = min(found, key=lambda i: (determinants[i], i))
    member = results[best][1]
    if determinants[best] <= 0:
        raise ExactFitError(
            "More than about half of the points lie on a hyperplane: the minimum "
            "covariance determinant is singular."
        )
    raw_location, raw_covariance = _mean_cov(Xs[member])
    metric = _metric(raw_covariance)
    if metric is None:
        raise ExactFitError("The minimum covariance determinant is singular.")
    d = _sq_distances(Xs, raw_location, metric) / consistency_factor(p, h / n)
    keep = d < _reweight_cutoff(p)
    location, covariance = _mean_cov(Xs[keep])
    covariance = covariance * consistency_factor(p, REWEIGHT_QUANTILE)
    raw_support = np.zeros(n, dtype=bool)
    support = np.zeros(n, dtype=bool)
    raw_support[order] = member
    support[order] = keep
    return MCDResult(location, covariance, raw_location, raw_covariance,
                     raw_support, support, START_NAMES[best], determinants)
