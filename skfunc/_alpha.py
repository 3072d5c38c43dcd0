"""Choosing the roughness penalty: one spelling, one candidate rule, one policy.

Every penalized estimator takes ``alpha`` in one of three forms, checked by
:func:`check_alpha`:

* ``"auto"`` (the default): choose from the training data;
* a number ``>= 0``: fixed (0 is no penalty);
* an array of candidates ``> 0``: choose among them.

Alpha is unit-free (:func:`skfunc._penalized.engine_alpha`), so the same
number means the same smoothing on any grid unit and data scale. Automatic
choice runs over one :class:`~skfunc._penalized.SplitPath` decomposition:

* :func:`candidate_alphas` spans the whole range of effective degrees of
  freedom, from just above the penalty's null space to nearly the full
  basis, computed from the decomposition (not from the grid);
* :func:`gcv_criterion` (Craven and Wahba 1979) and :func:`reml_criterion`
  (restricted likelihood of the mixed-model form; Wood 2011) score every
  candidate in O(K) per right-hand side and candidate;
* :func:`best_index` applies the one policy: non-finite scores are skipped,
  ties go to the larger alpha (the smoother fit), all non-finite is an
  error, and a best value at an end of the candidates warns, naming the end.

:func:`choose_alpha` strings these together for least-squares estimators.

References
----------
Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline functions.
*Numerische Mathematik* 31, 377-403.

Wood, S. N. (2011). Fast stable restricted maximum likelihood and marginal
likelihood estimation of semiparametric generalized linear models. *Journal
of the Royal Statistical Society, Series B* 73(1), 3-36.
"""

import warnings
from numbers import Real

import numpy as np
from sklearn.utils._param_validation import Interval, StrOptions

#: the spelling of "choose alpha from the training data"
AUTO = "auto"

#: ``_parameter_constraints`` entry for ``alpha`` in every penalized estimator
ALPHA_CONSTRAINT = [Interval(Real, 0, None, closed="left"), StrOptions({AUTO}), "array-like"]

#: default number of candidates for ``alpha="auto"``
N_ALPHAS = 25

#: folds of curves for choosing alpha by cross-validation over curves, where
#: a criterion over pooled observations does not apply (10-fold
#: cross-validation: common practice); row ``i`` goes to fold ``i mod 10``
CV_FOLDS = 10

#: effective degrees of freedom above the null space at the largest default
#: candidate, and below the full (identified) basis at the smallest
EDF_MARGIN = 0.05

CRITERIA = ("gcv", "reml")

#: the default ``criterion`` of the regressions whose observations are whole
#: curves (one outcome per curve: ``n`` curves against ``K`` coefficients,
#: often ``K >= n`` with the generous default basis). When the fit can nearly
#: interpolate the ``n`` outcomes, GCV (and exact leave-one-out) rest on the
#: few directions the curves hardly vary along: their scores then often
#: fall again towards interpolation, or have a second minimum well below
#: the right smoothing, and pick it. REML weighs every direction through the
#: likelihood of the mixed-model form and does not. Measured on the kiln
#: runs (noise-free curves, 30 seeds, mean squared error of the test-run
#: predictions against the true strengths): GCV 3.29 and 2.01 with 20 and 30
#: runs, REML 0.64 and 0.33; with 40 to 100 runs the two agree within 10 %
#: or REML is better (docs/bases_and_penalties.rst). Reiss and Ogden (2009,
#: JRSS-B 71, 505-523) report the same for functional linear models (from
#: memory).
CURVE_DESIGN_CRITERION = "reml"

#: ``_parameter_constraints`` of ``alpha`` and ``criterion`` in every
#: estimator that chooses alpha by GCV or REML
ALPHA_CONSTRAINTS = {"alpha": ALPHA_CONSTRAINT, "criterion": [StrOptions(set(CRITERIA))]}

_ALPHA_MESSAGE = (
    "alpha must be 'auto' (choose from the data), a number >= 0, or a non-empty "
    "1-D array of finite candidates > 0; got {!r}."
)


class AlphaAtEdgeWarning(UserWarning):
    """The chosen alpha is the smallest or largest candidate."""


def check_alpha(alpha, name="alpha"):
    """Validate a user ``alpha``: ``"auto"``, a number >= 0, or candidates > 0.

    Returns ``"auto"``, a float, or a sorted 1-D float array.
    """
    message = _ALPHA_MESSAGE.replace("alpha", name, 1)
    if isinstance(alpha, str):
        if alpha == AUTO:
            return AUTO
        raise ValueError(message.format(alpha))
    if isinstance(alpha, bool):
        raise TypeError(message.format(alpha))
    if isinstance(alpha, Real):
        value = float(alpha)
        if not (np.isfinite(value) and value >= 0):
            raise ValueError(message.format(alpha))
        return value
    try:
        arr = np.asarray(alpha, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise TypeError(message.format(alpha)) from exc
    if arr.ndim == 0:
        return check_alpha(float(arr), name)
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ValueError(message.format(alpha))
    return np.sort(arr)


def _log_lambda_for_edf(s, targets):
    """``x = log lam`` with ``sum_k s_k / (s_k + e^x) = target``, per target.

    The function falls monotonically in x; a 128-point log grid brackets each
    root (found by bisection over the grid: seven evaluations per target
    instead of 128, the cost of ``len(s)`` in the thousands for a curve
    response), then safeguarded Newton steps (derivative ``-sum s e^x / (s +
    e^x)^2``) converge to rounding. Vectorised over targets: a dozen array
    operations.
    """
    targets = np.asarray(targets, dtype=np.float64)
    grid = np.linspace(np.log(s.min()) - 12.0, np.log(s.sum()) + 12.0, 128)
    # j = the first grid index with edf <= target (searchsorted on the
    # decreasing edf), in [0, 128]
    j, top = np.zeros(targets.shape, dtype=int), np.full(targets.shape, grid.size)
    while np.any(j < top):
        mid = np.minimum((j + top) // 2, grid.size - 1)
        below = (s / (s + np.exp(grid[mid])[:, None])).sum(axis=1) <= targets
        open_ = j < top
        top = np.where(open_ & below, mid, top)
        j = np.where(open_ & ~below, mid + 1, j)
    j = np.clip(j, 1, grid.size - 1)
    lo, hi = grid[j - 1], grid[j]
    x = (lo + hi) / 2
    for _ in range(12):
        e = np.exp(x)[:, None]
        f = (s / (s + e)).sum(axis=1) - targets
        if np.all(np.abs(f) <= 1e-13 * np.maximum(targets, 1.0)):
            break
        df = -(s * e / (s + e) ** 2).sum(axis=1)
        lo = np.where(f > 0, x, lo)
        hi = np.where(f > 0, hi, x)
        step = x - f / np.where(df < 0, df, -np.inf)
        x = np.where((step >= lo) & (step <= hi), step, (lo + hi) / 2)
    return x


def candidate_alphas(path, n_alphas=N_ALPHAS, margin=EDF_MARGIN):
    """Log-spaced candidates spanning the effective degrees of freedom.

    The largest candidate leaves ``margin`` degrees of freedom above the
    null space (``edf = r + margin``: nearly the null-space fit, a straight
    line for a second-derivative penalty); the smallest leaves ``margin``
    below the identified dimension ``r + #(s > 0)`` (nearly the unpenalized
    fit). Both ends solve the exact ``edf`` from the decomposition's
    eigenvalues, so they do not depend on the grid's units or resolution.
    Returned in user units (ascending).
    """
    return candidates_from_eigenvalues(path.s, path.scale, n_alphas, margin)


def candidates_for(alpha, path, n_alphas=N_ALPHAS):
    """The candidates for a user ``alpha`` (:func:`check_alpha`): the default
    :func:`candidate_alphas` of ``path`` for ``"auto"``, the given array, or
    ``[alpha]`` for a number."""
    value = check_alpha(alpha)
    if value is AUTO:
        return candidate_alphas(path, n_alphas)
    return np.atleast_1d(value)


def candidates_from_eigenvalues(s, scale, n_alphas=N_ALPHAS, margin=EDF_MARGIN):
    """:func:`candidate_alphas` from the data eigenvalues ``s`` of the
    penalized directions (engine units, ``edf = r + sum s / (s + lam)``) and
    the engine weight ``scale`` of alpha = 1; for problems whose
    decomposition is not one :class:`~skfunc._penalized.SplitPath` (a
    Kronecker-structured curve response: ``s`` the products of design and
    response eigenvalues)."""
    s = np.ravel(np.asarray(s, dtype=np.float64))
    positive = s[s > 0]
    if positive.size == 0:
        # nothing the penalty acts on is seen by the data: every alpha fits alike
        return np.logspace(-2, 2, n_alphas)
    margin = min(margin, positive.size / 4)
    high, low = _log_lambda_for_edf(positive, [margin, positive.size - margin])
    return np.exp(np.linspace(low, high, n_alphas)) / scale


#: what the smallest candidate means for a least-squares fit
LOW_EDGE_ADVICE = ("nearly no smoothing: the fit may be following the noise; use "
                   "fewer basis functions or candidates below it")


def best_index(scores, alphas, *, criterion="GCV", warn=True,
               low_advice=LOW_EDGE_ADVICE):
    """Index of the best (lowest) score, one policy for every estimator.

    Non-finite scores are skipped; among equal best scores (within 1e-12
    relative) the larger alpha wins (the smoother fit); if no score is
    finite a ``ValueError`` says so. With ``warn``, a best value at the
    smallest or largest candidate raises :class:`AlphaAtEdgeWarning` naming
    that end (unless the criterion is flat), with ``low_advice`` for the
    smallest. ``scores`` may be (L,) or (rows, L) for one choice per row;
    returns an int or an int array.
    """
    scores = np.asarray(scores, dtype=np.float64)
    alphas = np.asarray(alphas, dtype=np.float64)
    two_d = scores.ndim == 2
    s2 = np.atleast_2d(scores)
    finite = np.isfinite(s2)
    if not finite.any(axis=1).all():
        rows = np.flatnonzero(~finite.any(axis=1))
        where = f" for row(s) {rows[:5].tolist()}" if two_d else ""
        raise ValueError(
            f"No candidate alpha has a finite {criterion} score{where}: the "
            "criterion is undefined when the fit interpolates every observation "
            "or too few observations are left. Use fewer basis functions, more "
            "observations, or a fixed alpha."
        )
    masked = np.where(finite, s2, np.inf)
    low = masked.min(axis=1, keepdims=True)
    high = np.where(finite, s2, -np.inf).max(axis=1, keepdims=True)
    tol = 1e-12 * np.maximum(np.abs(low), np.finfo(float).tiny)
    ties = masked <= low + tol
    # among ties the largest alpha
    best = np.argmax(np.where(ties, alphas, -np.inf), axis=1)
    if warn:
        flat = (high - low)[:, 0] <= tol[:, 0]
        at_low = (best == np.argmin(alphas)) & ~flat
        at_high = (best == np.argmax(alphas)) & ~flat
        if criterion == "GCV" and low_advice == LOW_EDGE_ADVICE:
            low_advice += ("; or criterion='reml', which does not follow the noise "
                           "as often (GCV's score can keep falling as the fit "
                           "nears interpolation)")
        for hit, end, advice in (
            (at_low, "smallest", low_advice),
            (at_high, "largest", "nearly the fit on the penalty's null space alone "
             "(a straight line for a second-derivative penalty); that is a fine "
             "answer when the truth is that simple, else add larger candidates"),
        ):
            if hit.any() and alphas.size > 1:
                count = f"{int(hit.sum())} of {hit.size} rows: " if two_d else ""
                warnings.warn(
                    f"{count}the {criterion} choice is the {end} candidate alpha "
                    f"({alphas.max() if end == 'largest' else alphas.min():.3g}), "
                    f"at the edge of the candidates; {advice}.",
                    AlphaAtEdgeWarning,
                    stacklevel=2,
                )
    return best if two_d else int(best[0])


def _rows(rotated, yy):
    rotated = np.atleast_2d(np.asarray(rotated, dtype=np.float64))
    yy = np.atleast_1d(np.asarray(yy, dtype=np.float64))
    return rotated, yy


def gcv_criterion(path, rotated, yy, n_obs, alphas, *, total_weight=None,
                  extra_edf=0.0, pooled=False):
    """Generalized cross-validation for every alpha (Craven and Wahba 1979).

    ``GCV = (RSS / sum w) / (1 - edf / n)^2`` with ``RSS = y'Wy - reduction``
    from the path, ``edf`` the trace of the hat matrix plus ``extra_edf``
    (1 for a fitted intercept). Rows of ``rotated`` are right-hand sides
    with weighted sums of squares ``yy``; ``pooled`` sums RSS, edf, n and
    weights over rows (one alpha for all, as for curves smoothed alike).
    Returns (L,) when pooled or for one row, else (rows, L).
    """
    from ._penalized import gcv_score

    rotated, yy = _rows(rotated, yy)
    alphas = np.atleast_1d(alphas)
    total_weight = n_obs if total_weight is None else total_weight
    rss = np.maximum(yy[:, None] - path.rss_reduction(rotated, alphas), 0.0)
    edf = path.edf(alphas) + extra_edf
    if pooled:
        k = rotated.shape[0]
        return gcv_score(rss.sum(axis=0), k * edf, k * n_obs, k * total_weight)
    out = gcv_score(rss, edf, n_obs, total_weight)
    return out[0] if out.shape[0] == 1 else out


def reml_criterion(path, rotated, yy, n_obs, alphas, *, extra_null=0, pooled=False,
                   log_scale=0.0):
    """Minus twice the restricted log-likelihood, profiled over the noise variance.

    Mixed-model form of the penalized fit (Wood 2011, section 2; Harville
    1974 for the restricted likelihood): fixed effects on the penalty's null
    space, random effects ``u ~ N(0, sigma^2 / lam I)`` on the whitened
    complement. Integrating them out and profiling ``sigma^2`` gives

        -2 l_R(lam) = (n - r) log(2 pi D_p / (n - r)) + (n - r)
                      + sum_k log(1 + s_k / lam) + const,

    with ``D_p = y'Wy - b'(G + lam P)^{-1} b`` the penalized residual sum of
    squares, ``r`` the null-space dimension (plus ``extra_null``, 1 for an
    intercept profiled out by centring) and ``s_k`` the data eigenvalues of
    the penalized directions; ``const`` (log-determinants of the weights and
    of the null-space design) does not depend on alpha. ``pooled`` shares
    ``sigma^2`` and alpha over the rows (independent curves). ``log_scale``
    is ``log(c)`` when ``rotated`` and ``yy`` come from responses divided by
    ``sqrt(c)`` (:func:`reml_score`).
    """
    rotated, yy = _rows(rotated, yy)
    alphas = np.atleast_1d(alphas)
    dof = n_obs - path.n_null - extra_null
    d_p = yy[:, None] - path.penalized_rss_reduction(rotated, alphas)
    logdet = path.log_det_ratio(alphas)
    if pooled:
        k = rotated.shape[0]
        return reml_score(d_p.sum(axis=0), k * dof, k * logdet, log_scale)
    out = reml_score(d_p, dof, logdet, log_scale)
    return out[0] if out.shape[0] == 1 else out


def reml_score(penalized_rss, dof, log_det_ratio, log_scale=0.0):
    """``-2 l_R = dof (log(2 pi D_p / dof) + 1) + log_det_ratio`` (see
    :func:`reml_criterion`); inf where undefined (``dof <= 0`` or ``D_p <= 0``).

    ``log_scale`` is ``log(c)`` when ``D_p`` was computed from responses
    divided by ``sqrt(c)`` (a power of two, so that squares stay finite):
    the score is then the one of the responses themselves, ``D_p c`` in
    place of ``D_p``, without forming ``D_p c``.

    The building block for problems whose decomposition is not one
    :class:`~skfunc._penalized.SplitPath`: ``dof = n - (unpenalized
    parameters)``, ``log_det_ratio = sum log(1 + s / lam)`` over the
    penalized directions.
    """
    d_p = np.maximum(np.asarray(penalized_rss, dtype=np.float64), 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = dof * (np.log(2 * np.pi * d_p / dof) + log_scale + 1) + log_det_ratio
    out = np.where((np.asarray(dof) > 0) & (d_p > 0), out, np.inf)
    # a response fitted exactly at every candidate (it lies in what the
    # unpenalized part fits, e.g. a penalty that leaves every direction
    # free): every alpha gives the same fit, so the criterion is flat (0)
    # and the tie policy picks the largest alpha, as GCV's flat 0 does
    exact = np.all(d_p <= 0, axis=-1, keepdims=True) & (np.asarray(dof) > 0)
    return np.where(exact, 0.0, out)


def gcv_in_data_units(scores, y_exp):
    """GCV (or any mean squared error) of responses divided by ``2**y_exp``,
    in the responses' own units: exact; inf, with a ``RuntimeWarning``,
    where it overflows (the choice is made on the scaled scores)."""
    from ._penalized import warn_underflow

    scores = np.asarray(scores, dtype=np.float64)
    with np.errstate(over="ignore", under="ignore"):
        out = np.ldexp(scores, 2 * y_exp)
    warn_underflow("criterion_path_", scores, out)
    if np.any(np.isinf(out) & np.isfinite(scores)):
        warnings.warn(
            "The criterion overflows float64 in the responses' units (squares "
            "of values beyond about 1e154): criterion_path_ holds inf there. "
            "alpha_ was chosen on the responses divided by a power of two, "
            "where every score is finite; rescale y, for example to units "
            "near 1, to read the scores.", RuntimeWarning, stacklevel=3,
        )
    return out


def choose_alpha(path, rotated, yy, n_obs, alpha=AUTO, *, criterion="gcv",
                 n_alphas=N_ALPHAS, total_weight=None, extra_edf=0, pooled=False,
                 warn=True, y_exp=0):
    """Resolve a user ``alpha`` for a least-squares problem on ``path``.

    Parameters
    ----------
    path : SplitPath
        The decomposition of the data's cross products and the penalty.
    rotated : ndarray of shape (rows, K) or (K,)
        ``path.rotate(b)`` for the right-hand sides.
    yy : ndarray of shape (rows,) or float
        Weighted sums of squares of the responses.
    n_obs : int or float
        Observations per right-hand side.
    alpha : "auto", float or array-like
        The user's alpha (:func:`check_alpha`).
    criterion : {"gcv", "reml"}
    n_alphas : int
        Number of default candidates for ``"auto"``.
    total_weight : float, default=None
        Sum of observation weights (GCV's RSS normaliser); None means n_obs.
    extra_edf : int
        Unpenalized parameters profiled out before the path (1 for an
        intercept fitted by centring).
    pooled : bool
        One alpha for all rows (else one per row).
    warn : bool
        Warn when the choice is at an end of the candidates.
    y_exp : int
        ``rotated`` and ``yy`` come from responses divided by ``2**y_exp``
        (:func:`skfunc._penalized.scaled_statistics`); the returned
        criterion is in the responses' own units (GCV may overflow to inf
        there for responses near 1e154 and beyond; the choice is made on
        the scaled scores, which cannot).

    Returns
    -------
    dict with ``alpha`` (float, or per-row array), ``alphas`` (candidates;
    ``[alpha]`` when fixed), ``criterion`` (scores; None when fixed) and
    ``index``.
    """
    value = check_alpha(alpha)
    if isinstance(value, float):
        return {"alpha": value, "alphas": np.array([value]), "criterion": None, "index": 0}
    if criterion not in CRITERIA:
        raise ValueError(f"criterion must be one of {CRITERIA}; got {criterion!r}.")
    alphas = candidates_for(value, path, n_alphas)
    if criterion == "gcv":
        scores = gcv_criterion(path, rotated, yy, n_obs, alphas, total_weight=total_weight,
                               extra_edf=extra_edf, pooled=pooled)
    else:
        scores = reml_criterion(path, rotated, yy, n_obs, alphas, extra_null=extra_edf,
                                pooled=pooled, log_scale=2 * y_exp * np.log(2.0))
    index = best_index(scores, alphas, criterion=criterion.upper(), warn=warn)
    if criterion == "gcv":
        scores = gcv_in_data_units(scores, y_exp)
    return {"alpha": alphas[index] if np.ndim(index) else float(alphas[index]),
            "alphas": alphas, "criterion": scores, "index": index}
