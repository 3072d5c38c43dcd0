"""The penalized least-squares engine and its all-alpha path.

Every estimator in skfunc solves, for one or many right-hand sides ``b``,

    minimize  ||y - Z c||_W^2 + alpha * c' P c    =>   (G + alpha P) c = b,

with ``G = Z' W Z`` (K x K, the data's cross products), ``b = Z' W y`` and a
roughness matrix ``P``. :class:`SplitPath` diagonalises ``G`` and ``P``
simultaneously (Demmler and Reinsch, 1975) in the basis split into the
penalty's null space and its complement (:class:`Penalty`, from the basis'
exact null space): with ``U' G U = diag(g)`` and ``U' P U = diag(p)``
(``p = 0`` exactly on the null space),

    (G + lam P)^{-1} = U diag(1 / (g + lam p)) U',

so coefficients, effective degrees of freedom and residual sums of squares
for a whole grid of alphas cost O(K) per right-hand side and alpha, and the
null space is exactly unpenalized at any alpha. The user's alpha is
unit-free (:func:`engine_alpha`: the penalty on the domain mapped to [0, 1],
weighed by the largest eigenvalue of the data's cross products against the
unit-domain Gram matrix).

What a fit needs from the data is additive over rows (:func:`cross_products`,
:func:`merge`), so in-memory fits, ``partial_fit`` and distributed fits share
one path: statistics per chunk, merge, solve.

References
----------
Demmler, A. and Reinsch, C. (1975). Oscillation matrices with spline
smoothing. *Numerische Mathematik* 24, 375-382.

Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline functions.
*Numerische Mathematik* 31, 377-403.

Chan, T. F., Golub, G. H. and LeVeque, R. J. (1979). Updating formulae and a
pairwise algorithm for computing sample variances. Technical report
STAN-CS-79-773, Stanford University.
"""

import numpy as np

#: relative size of the smallest eigenvalue of G + scale * P below which the
#: problem is not identifiable
_RCOND = 1e-13


class NotIdentifiableError(ValueError):
    """The data and the penalty together do not determine the coefficients."""


def _symmetric(a):
    """The symmetric part of a matrix, or of each matrix of a stack."""
    return (a + np.swapaxes(a, -1, -2)) / 2


def gcv_score(rss, edf, n_obs, total_weight=None):
    """Generalised cross-validation ``(RSS / sum w) / (1 - edf / n)^2``.

    With unit weights this is Craven and Wahba's ``n RSS / (n - tr S)^2``
    divided by n. Returns inf where the fit interpolates (``edf`` equals
    ``n_obs`` up to rounding), where GCV is undefined.
    """
    total_weight = n_obs if total_weight is None else total_weight
    denom = (1.0 - np.asarray(edf) / n_obs) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        score = (np.asarray(rss) / total_weight) / denom
    return np.where(np.asarray(edf) < n_obs * (1 - 1e-9), score, np.inf)


def cross_products(Z, y, sample_weight=None):
    """Additive statistics of a weighted least-squares problem.

    Returns a dict with the count ``n``, the weight total ``sw``, the weighted
    sums ``z_sum`` (K,) and ``y_sum`` (p,), and the cross products ``zz``
    (K, K), ``zy`` (K, p) and ``yy`` (p,). Statistics of disjoint chunks
    combine with :func:`merge`.

    Products keep the tall response on the left (``(y' [w, WZ])'``), which
    BLAS runs much faster than ``Z' W y`` when y has many columns, and the
    squares of y are summed in row chunks to bound memory.
    """
    Z = np.asarray(Z, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    y2 = y.reshape(y.shape[0], -1)
    n = Z.shape[0]
    w = np.ones(n) if sample_weight is None else np.asarray(sample_weight, dtype=np.float64)
    # (without weights, Z itself: the same values, one pass over Z less)
    Zw = np.column_stack([w, Z if sample_weight is None else Z * w[:, None]])
    ywz = (y2.T @ Zw).T  # (K + 1, p): weighted sums of y, then Z'Wy
    yy = np.zeros(y2.shape[1])
    rows = max(1, (1 << 20) // max(y2.shape[1], 1))
    for start in range(0, n, rows):
        chunk = y2[start : start + rows]
        yy += w[start : start + rows] @ (chunk * chunk)
    return {
        "n": n,
        "sw": float(w.sum()),
        "z_sum": Zw[:, 1:].sum(axis=0),
        "y_sum": ywz[0],
        "zz": Zw[:, 1:].T @ Z,
        "zy": ywz[1:],
        "yy": yy,
    }


def merge(*stats):
    """Sum statistics from :func:`cross_products` over chunks.

    Centred cross products (from :func:`centered_cross_products`) are
    combined by the exact pairwise update instead of summed.
    """
    if "x_exp" in stats[0]:  # scaled (scaled_statistics): one scale first
        x_exp = np.maximum.reduce([np.asarray(s["x_exp"]) for s in stats])
        x_exp = int(x_exp) if x_exp.ndim == 0 else x_exp
        y_exp = max(int(s["y_exp"]) for s in stats)
        stats = [rescaled(s, x_exp, y_exp) for s in stats]
    if "czz" in stats[0]:
        return _merge_centered(*stats)
    out = dict(stats[0])
    for s in stats[1:]:
        for key in out:
            if key not in ("x_exp", "y_exp"):  # equal after rescaling
                out[key] = out[key] + s[key]
    return out


def centered_cross_products(Z, y, sample_weight=None):
    """:func:`cross_products` plus cross products about this chunk's means.

    The extra keys ``czz``, ``czy`` and ``cyy`` hold the weighted cross
    products of ``Z`` and ``y`` about their weighted means; chunks combine
    with :func:`merge`, exactly (Chan, Golub and LeVeque, 1979), so
    :func:`centered` need not subtract ``sw m m'`` from raw sums, which loses
    digits when the means are large against the spread (curves near 1200 °C
    varying by tens of degrees, say).

    The raw cross products are those about the means plus ``sw m m'``
    (the same sums up to rounding, each term nonnegative on the diagonal):
    one product of the design with itself instead of two.
    """
    Z = np.asarray(Z, dtype=np.float64)
    y2 = np.asarray(y, dtype=np.float64).reshape(Z.shape[0], -1)
    n = Z.shape[0]
    if sample_weight is None:
        w, sw = None, float(n)
        z_sum, y_sum = Z.sum(axis=0), y2.sum(axis=0)
    else:
        w = np.asarray(sample_weight, dtype=np.float64)
        sw = float(w.sum())
        z_sum, y_sum = w @ Z, w @ y2
    z_mean = z_sum / sw if sw > 0 else np.zeros_like(z_sum)
    y_mean = y_sum / sw if sw > 0 else np.zeros_like(y_sum)
    Zc, yc = Z - z_mean, y2 - y_mean
    Zcw = Zc if w is None else Zc * w[:, None]
    czz, czy = Zcw.T @ Zc, Zcw.T @ yc
    cyy = np.einsum("ij,ij->j", yc, yc) if w is None else np.einsum("i,ij,ij->j", w, yc, yc)
    return {
        "n": n, "sw": sw, "z_sum": z_sum, "y_sum": y_sum,
        "zz": czz + sw * np.outer(z_mean, z_mean),
        "zy": czy + sw * np.outer(z_mean, y_mean),
        "yy": cyy + sw * y_mean**2,
        "czz": czz, "czy": czy, "cyy": cyy,
    }


#: keys of :func:`centered_cross_products` that are not plain sums
_CENTRED_KEYS = ("czz", "czy", "cyy")


def _merge_centered(*stats):
    """Combine :func:`centered_cross_products` of disjoint chunks.

    Raw sums add; the centred cross products take the pairwise update of
    Chan, Golub and LeVeque (1979): ``C = C1 + C2 + sw1 sw2 / sw d d'`` with
    ``d`` the difference of the chunks' means.
    """
    out = dict(stats[0])
    for s in stats[1:]:
        sw1, sw2 = out["sw"], s["sw"]
        merged = merge({k: v for k, v in out.items() if k not in _CENTRED_KEYS},
                       {k: v for k, v in s.items() if k not in _CENTRED_KEYS})
        if sw1 > 0 and sw2 > 0:
            dz = s["z_sum"] / sw2 - out["z_sum"] / sw1
            dy = s["y_sum"] / sw2 - out["y_sum"] / sw1
            f = sw1 * sw2 / (sw1 + sw2)
            merged.update(
                czz=out["czz"] + s["czz"] + f * np.outer(dz, dz),
                czy=out["czy"] + s["czy"] + f * np.outer(dz, dy),
                cyy=out["cyy"] + s["cyy"] + f * dy**2,
            )
        else:
            keep = out if sw2 <= 0 else s
            merged.update(czz=keep["czz"], czy=keep["czy"], cyy=keep["cyy"])
        out = merged
    return out


def centered(stats):
    """Cross products about the weighted means (for a fitted intercept).

    Returns ``(zz, zy, yy, z_mean, y_mean)``; from the exactly merged
    ``czz``/``czy``/``cyy`` when the statistics carry them
    (:func:`centered_cross_products`), else from the raw sums.
    """
    sw = stats["sw"]
    z_mean, y_mean = stats["z_sum"] / sw, stats["y_sum"] / sw
    if "czz" in stats:
        return stats["czz"], stats["czy"], stats["cyy"], z_mean, y_mean
    zz = stats["zz"] - sw * np.outer(z_mean, z_mean)
    zy = stats["zy"] - sw * np.outer(z_mean, y_mean)
    yy = stats["yy"] - sw * y_mean**2
    return zz, zy, yy, z_mean, y_mean


# ---------------------------------------------------------------------------
# The split engine: the penalty's null space exactly unpenalized, and a
# penalty weight that means the same on every grid and data scale.
# ---------------------------------------------------------------------------


class Penalty:
    """A roughness penalty split into its null space and its complement.

    Built once from the basis (:func:`penalty_for`); holds only data-free
    matrices. Coordinates ``c = T [a; v]`` separate the null space (``a``,
    exactly unpenalized) from the complement (``v``, penalized as
    ``||v||^2``): ``T = [Q_N, Q_C R^{-1/2}]`` with ``[Q_N, Q_C]`` the complete
    QR factor of the exact null-space coefficients and ``R = Q_C' P Q_C``.
    The cross terms ``Q_N' P`` are zero in exact arithmetic and are dropped,
    so no rounding in ``P`` ever penalizes the null space.

    Parameters
    ----------
    matrix : ndarray of shape (K, K)
        Roughness matrix on the domain mapped to [0, 1].
    null_space : ndarray of shape (K, r)
        Exact coefficients spanning the functions the penalty leaves free.
    metric : ndarray of shape (K, K) or None
        Gram matrix of the penalized functions on [0, 1], against which the
        data's cross products are measured (:func:`penalty_scale`); None when
        the coordinates are already orthonormal.

    Attributes
    ----------
    n_null : int
        ``r``, the dimension of the unpenalized part.
    transform : ndarray of shape (K, K)
        ``T``: null-space columns first, then the whitened complement.
    """

    def __init__(self, matrix, null_space, metric=None):
        matrix = _symmetric(np.asarray(matrix, dtype=np.float64))
        null_space = np.asarray(null_space, dtype=np.float64).reshape(matrix.shape[0], -1)
        k, r = null_space.shape
        self.matrix, self.metric, self.n_null = matrix, metric, r
        q, _ = np.linalg.qr(null_space, mode="complete") if r else (np.eye(k), None)
        q_c = q[:, r:]
        lam, vec = np.linalg.eigh(_symmetric(q_c.T @ matrix @ q_c))
        if lam.size and lam[0] <= 0:
            raise ValueError(
                "The roughness matrix is singular beyond its declared null space "
                f"(smallest eigenvalue on the complement {lam[0]:.3g}, largest "
                f"{lam[-1]:.3g}); the basis cannot carry this penalty order."
            )
        self.transform = np.column_stack([q[:, :r], (q_c @ vec) / np.sqrt(lam)])

    def extend(self, n_free):
        """The penalty with ``n_free`` unpenalized coordinates appended
        (covariates next to a coefficient function)."""
        if not n_free:
            return self
        k = self.matrix.shape[0]
        out = Penalty.__new__(Penalty)
        out.matrix = np.zeros((k + n_free,) * 2)
        out.matrix[:k, :k] = self.matrix
        out.metric = self.metric  # measured on the function block only
        out.n_null = self.n_null + n_free
        r = self.n_null
        t = np.zeros((k + n_free,) * 2)
        t[:k, :r] = self.transform[:, :r]
        t[k:, r : r + n_free] = np.eye(n_free)
        t[:k, r + n_free :] = self.transform[:, r:]
        out.transform = t
        return out


#: penalty_for's decompositions, by basis key and order (at most
#: _PENALTY_CACHE_SIZE, the oldest dropped first)
_PENALTIES = {}
_PENALTY_CACHE_SIZE = 32


def penalty_for(basis, order):
    """The :class:`Penalty` of ``basis`` for ``int (D^order f)^2``, on [0, 1].

    Data-free and a fixed cost of every fit (exact matrices, the null space,
    a decomposition), so it is kept for bases with a ``cache_key`` and shared
    by later calls for an equal basis and order: its arrays are read-only.
    """
    order = int(order)
    key = (*basis.cache_key(), order) if hasattr(basis, "cache_key") else None
    penalty = _PENALTIES.get(key) if key is not None else None
    if penalty is None:
        penalty = Penalty(basis.unit_roughness(order), basis.null_space(order),
                          basis.unit_gram())
        if key is not None:
            for array in (penalty.matrix, penalty.transform, penalty.metric):
                array.flags.writeable = False
            if len(_PENALTIES) >= _PENALTY_CACHE_SIZE:
                _PENALTIES.pop(next(iter(_PENALTIES)), None)
            _PENALTIES[key] = penalty
    return penalty


def penalty_scale(gram, penalty):
    """Engine weight of ``alpha = 1``: the largest eigenvalue of the data's
    cross products relative to the metric of the penalized functions.

    ``gram`` holds the data term's cross products normalised by the total
    sample weight (``Z' W Z / sum w``, centred when an intercept is fitted),
    so that the objective

        (1 / sum w) ||y - Z c||_W^2 + alpha * scale * c' P01 c

    with ``P01`` the roughness on the domain mapped to [0, 1] and
    ``scale = lambda_max(G, M01)`` (the largest generalized eigenvalue of
    ``G`` and the unit-domain Gram matrix ``M01``, computed on the function
    block) is unchanged when the grid changes unit or origin (``G``,
    ``M01``-relative, and ``P01`` are invariant, or scale together) and when
    ``Z`` is multiplied by a constant (``scale`` follows ``G``). The largest
    eigenvalue, rather than a trace, keeps the meaning of alpha stable as
    the number of basis functions grows: it converges to the operator norm
    of the design (about 1 for a smoother, the leading eigenvalue of the
    curves' covariance for a functional regression), while traces grow
    with the basis.
    """
    gram = np.asarray(gram, dtype=np.float64)
    k = penalty.metric.shape[0] if penalty.metric is not None else gram.shape[0]
    block = _symmetric(gram[:k, :k])
    if not np.all(np.isfinite(block)):
        raise ValueError(
            "The data's cross products are not finite (overflow); rescale the "
            "data (power_of_two_scale) before forming them."
        )
    if penalty.metric is None:
        top = np.linalg.eigvalsh(block)[-1]
    else:
        from ._bases import _whitened

        top = np.linalg.eigvalsh(_whitened(block, penalty.metric))[-1]
    return float(top) if top > 0 else 1.0


def engine_alpha(alpha, gram, penalty):
    """The weight of ``P01`` in the sum-of-squares objective for a user alpha.

    For the unnormalised objective ``||y - Z c||_W^2 + lam c' P01 c``:
    ``lam = alpha * sum(w) * penalty_scale(G)``, with ``G = Z' W Z / sum w``.
    Here ``gram`` is ``Z' W Z`` itself (not normalised) and the result is
    ``alpha * penalty_scale(gram, penalty)`` -- the normalisation cancels.
    """
    return np.asarray(alpha, dtype=np.float64) * penalty_scale(gram, penalty)


def power_of_two_scale(*arrays):
    """A power of two ``s`` with ``max |x / s|`` in [0.5, 1), ignoring NaN.

    Dividing data by ``s`` before squaring keeps cross products finite for
    values near 1e300 and normal for values near 1e-300; a power of two
    changes no digit, so fits on ``x / s`` times ``s`` equal fits on ``x``.
    """
    return power_of_two(data_exponent(*arrays))


def power_of_two(exponent):
    """``2**exponent`` as a float; 1 for :data:`ZERO_EXPONENT` (all-zero
    data are left as they are)."""
    return 1.0 if exponent == ZERO_EXPONENT else float(np.ldexp(1.0, exponent))


#: :func:`data_exponent` of all-zero data: below every float64 exponent, so
#: merging takes the other blocks' scale (zeros stay zeros at any scale)
ZERO_EXPONENT = -1100


def data_exponent(*arrays):
    """The integer ``e`` with ``max |x| / 2**e`` in [0.5, 1), ignoring NaN
    and inf (:data:`ZERO_EXPONENT` when every value is 0).

    ``np.ldexp(x, -e)`` is then ``x`` divided by a power of two: exact, and
    defined even where ``2**e`` itself would overflow (values near 1.8e308).
    """
    top = 0.0
    for a in arrays:
        a = np.asarray(a)
        if a.dtype.kind != "f":
            a = a.astype(np.float64)
        if a.size:
            # two reading passes and no temporary; NaN or inf among the
            # values takes the masked reduction
            high, low = float(np.max(a)), float(np.min(a))
            m = max(high, -low)
            if not np.isfinite([high, low]).all():
                with np.errstate(invalid="ignore"):
                    m = np.max(np.abs(a), where=np.isfinite(a), initial=0.0)
            top = max(top, float(m))
    if top == 0.0:
        return ZERO_EXPONENT
    return int(np.frexp(top)[1])


def scale_down(a, exponent):
    """``a / 2**exponent`` in float64, exactly (no-op for all-zero data)."""
    a = np.asarray(a, dtype=np.float64)
    return a if exponent == ZERO_EXPONENT else np.ldexp(a, -exponent)


#: ``(p, q)`` of each scaled statistic: it was formed from ``x / 2**ex`` and
#: ``y / 2**ey`` and so carries the factor ``2**(-p ex - q ey)``. The keys of
#: :func:`cross_products`, :func:`centered_cross_products` and the
#: curve-response statistics (``yproj``; the concurrent model's per-point
#: ``x``, ``xx``, ``y``, ``xy``; the smoother's residual sums of squares of
#: the curves ``rss``, ``pen_rss``); ``n`` and ``sw`` carry no unit.
SCALE_POWERS = {
    "z_sum": (1, 0), "y_sum": (0, 1), "zz": (2, 0), "zy": (1, 1), "yy": (0, 2),
    "czz": (2, 0), "czy": (1, 1), "cyy": (0, 2), "yproj": (0, 2),
    "x": (1, 0), "xx": (2, 0), "y": (0, 1), "xy": (1, 1),
    "rss": (2, 0), "pen_rss": (2, 0),
}

#: statistics that are counts (or degrees of freedom and log-determinants
#: of the smoother's criterion statistics), not sums of data
_UNITLESS = ("n", "sw", "x_exp", "y_exp", "edf", "logdet", "n_obs", "dof", "weight")


def scaled_statistics(statistics, X, y, sample_weight=None, **kwargs):
    """``statistics(X / 2**ex, y / 2**ey, sample_weight, **kwargs)`` with the
    power-of-two exponents of X and y (:func:`data_exponent`) stored as
    ``x_exp`` and ``y_exp``.

    Sums of squares of data near 1e300 would overflow and of data near
    1e-300 underflow; of the scaled data they cannot. Statistics of blocks
    with different exponents merge exactly (:func:`merge` brings them to the
    larger exponents by powers of two), so the scale never changes a digit.
    """
    ex, ey = data_exponent(X), data_exponent(y)
    stats = statistics(scale_down(X, ex), scale_down(y, ey), sample_weight, **kwargs)
    stats.update(x_exp=ex, y_exp=ey)
    return stats


def rescaled(stats, x_exp, y_exp):
    """Scaled statistics brought to the exponents ``(x_exp, y_exp)``, by
    powers of two (exact unless the values fall below float64's normal
    range, where they are negligible beside the data that set the scale).

    ``x_exp`` is one exponent for all columns of the design, or one per
    column (then ``z_sum`` scales per column, ``zz`` by the sum of its row's
    and column's, ``zy`` by its row's).
    """
    dx = np.asarray(stats["x_exp"]) - np.asarray(x_exp)
    dy = int(stats["y_exp"]) - int(y_exp)
    out = dict(stats, x_exp=x_exp, y_exp=y_exp)
    if not np.any(dx) and dy == 0:
        return out
    for key, value in stats.items():
        if key in _UNITLESS:
            continue
        if key not in SCALE_POWERS:
            raise KeyError(f"the statistic {key!r} has no declared scale (SCALE_POWERS)")
        p, q = SCALE_POWERS[key]
        if p == 0:  # of y only: per-column x exponents must not broadcast it
            shift = 0
        elif dx.ndim == 0:
            shift = p * dx
        elif p == 2:
            shift = dx[:, None] + dx[None, :]
        else:  # one design index: the first axis of a matrix, the only of a vector
            shift = dx if np.ndim(value) == 1 else dx[:, None]
        out[key] = np.ldexp(value, np.asarray(shift + q * dy, dtype=np.int64))
    return out


def to_data_units(value, stats, x_power, y_power, name=None):
    """A quantity computed from scaled statistics in the data's units:
    ``value * 2**(x_power ex + y_power ey)`` (coefficients ``(-1, 1)``,
    intercepts ``(0, 1)``, variances ``(0, 2)``, ...); unchanged for
    statistics without exponents. Per-column exponents ``ex`` broadcast
    along the last axis. May overflow to inf (the caller checks: see
    :func:`skfunc._fit.check_finite_fit`); where it underflows (nonzero
    values below float64's smallest normal number, 2.2e-308, so 0 or digits
    lost), the fitted attribute ``name`` gets a ``RuntimeWarning``."""
    if "x_exp" not in stats:
        return value
    exponent = np.asarray(y_power * stats["y_exp"])
    if np.any(x_power):  # (x_exp may be per column: only coefficients carry it)
        exponent = exponent + np.asarray(x_power) * np.asarray(stats["x_exp"])
    with np.errstate(over="ignore", under="ignore"):
        out = np.ldexp(value, exponent.astype(np.int64))
    if name is not None:
        warn_underflow(name, value, out)
    return out


def warn_underflow(name, scaled, value):
    """``RuntimeWarning`` when nonzero ``scaled`` values became 0 or
    subnormal in ``value`` (the data's units)."""
    scaled, value = np.asarray(scaled), np.asarray(value)
    with np.errstate(invalid="ignore"):
        lost = (scaled != 0) & np.isfinite(scaled) & (np.abs(value) < np.finfo(float).tiny)
    if lost.any():
        import warnings

        warnings.warn(
            f"{name} underflows float64 in the data's units (values below "
            "2.2e-308, as variances of y near 1e-160 or coefficients y / X "
            "that small): it is stored as 0 or with lost digits; the fit "
            "itself was computed on rescaled data. Rescale X and y, for "
            "example to units near 1, to read it.", RuntimeWarning, stacklevel=4,
        )


def _unseen_null_space(F, abs_t, abs_gram):
    """Whether the null-space block ``F = T_N' G T_N`` is singular, by tests
    that hold in any units of its coordinates (an intercept's weight total
    beside a design in the grid's units): a diagonal entry at the rounding
    level of its own column (``|T_N|' |G| |T_N|``, the size of the terms
    summed into it), or the smallest eigenvalue of ``F`` scaled to a unit
    diagonal at rounding level (collinear columns). ``F`` and ``abs_gram``
    may be stacks (..., r, r) and (..., K, K): one answer per matrix."""
    r = F.shape[-1]
    d = np.diagonal(F, axis1=-2, axis2=-1)
    noise = np.einsum("ij,...ik,kj->...j", abs_t, abs_gram, abs_t)
    low = np.any(d <= _RCOND * 1e-3 * r * noise, axis=-1)
    root = np.sqrt(np.where(low[..., None], 1.0, d))
    lam = np.linalg.eigvalsh(F / (root[..., :, None] * root[..., None, :]))
    return low | (lam[..., 0] <= _RCOND * r * lam[..., -1])


def _split(grams, penalty):
    """The simultaneous diagonalisation of :class:`SplitPath` for each matrix
    of a stack ``grams`` (n, K, K), in one stacked call per step (a batched
    eigensolve instead of n).

    Returns ``(eigvecs, g, seen)``: ``U`` (n, K, K), the diagonals ``g`` (n,
    K) of ``U' G U``, and whether each matrix determines the penalty's null
    space (where it does not, its ``U`` and ``g`` are meaningless).
    """
    r = penalty.n_null
    T = penalty.transform
    Gt = _symmetric(T.T @ grams @ T)
    F, C, R = Gt[:, :r, :r], Gt[:, :r, r:], Gt[:, r:, r:]
    if r:
        seen = ~_unseen_null_space(F, np.abs(T[:, :r]), np.abs(grams))
        # (unseen ones get the identity, so that one factorisation runs on all)
        lower = np.linalg.cholesky(np.where(seen[:, None, None], F, np.eye(r)))
        W = np.linalg.solve(lower, C)  # L^{-1} F_NC
        S = _symmetric(R - np.swapaxes(W, -1, -2) @ W)
        T_n = np.broadcast_to(T[:, :r].T, (grams.shape[0],) + T[:, :r].T.shape)
        A_n = np.swapaxes(np.linalg.solve(lower, T_n), -1, -2)  # T_N L^{-T}
    else:
        seen = np.ones(grams.shape[0], dtype=bool)
        W = np.zeros((grams.shape[0], 0, R.shape[-1]))
        S, A_n = R, np.zeros((grams.shape[0], T.shape[0], 0))
    s, V = np.linalg.eigh(S)
    s = np.clip(s, 0.0, None)
    # rounding in S = R - W'W is relative to the penalized block R, not
    # to the null-space block (an intercept of weight sum w, say), whose
    # size says nothing about it: directions below that are unseen
    top_c = np.maximum(np.abs(np.diagonal(R, axis1=-2, axis2=-1)).max(axis=-1, initial=0.0),
                       np.finfo(float).tiny)
    top = np.maximum(s.max(axis=-1, initial=0.0), top_c) * max(s.shape[-1], 1)
    s[s <= 1e-13 * top[:, None]] = 0.0
    E = (T[:, r:] - A_n @ W) @ V
    g = np.concatenate([np.ones((grams.shape[0], r)), s], axis=-1)
    return np.concatenate([A_n, E], axis=-1), g, seen


def _check_finite(gram):
    if not np.all(np.isfinite(gram)):
        raise ValueError(
            "The data's cross products are not finite (overflow or NaN); "
            "rescale the data (power_of_two_scale) before forming them."
        )


class SplitPath:
    """Penalized least squares for every alpha, null space exactly unpenalized.

    Solves ``(G + lam P) c = b`` with ``lam = alpha * scale`` for any number
    of right-hand sides and alphas. In the penalty's split coordinates
    (:class:`Penalty`) the null-space block ``F`` of ``G`` is factored
    (``F = L L'``) and profiled out; the Schur complement ``S`` of the
    penalized block is diagonalised (``S = V diag(s) V'``). With
    ``U = [A_N, E]`` (``A_N = T_N L^{-T}``, ``E = (T_C - A_N L^{-1} F_NC) V``),

        U' G U = diag(1, ..., 1, s),   U' P U = diag(0, ..., 0, 1, ..., 1),

    so ``(G + lam P)^{-1} = U diag(1 / d) U'`` with ``d = g + lam p``: the
    null-space entries of ``d`` are exactly 1 for every alpha. As alpha
    grows the coefficients tend to the least-squares fit on the null space
    with no loss of accuracy (this is the mixed-model form: fixed effects
    on the null space, random effects on the whitened complement).

    Parameters
    ----------
    gram : ndarray of shape (K, K)
        Cross products ``Z' W Z`` (centred when an intercept is fitted).
    penalty : Penalty
        The split penalty (:func:`penalty_for`, :meth:`Penalty.extend`).
    scale : float, default=None
        Engine weight of ``alpha = 1``; None means
        ``penalty_scale(gram, penalty)`` (:func:`engine_alpha`), the
        definition of alpha. Give it to share one meaning of alpha between
        several problems (a smoother's missing-value patterns).

    Attributes
    ----------
    eigvecs : ndarray of shape (K, K)
        ``U``.
    g, p : ndarray of shape (K,)
        Diagonals of ``U' G U`` and ``U' P U``.
    n_null : int
        Dimension of the null space (first ``n_null`` columns of ``U``).
    scale : float
        Engine weight of ``alpha = 1``.
    """

    def __init__(self, gram, penalty, scale=None):
        gram = _symmetric(np.asarray(gram, dtype=np.float64))
        _check_finite(gram)
        if scale is None:
            scale = penalty_scale(gram, penalty)
        (eigvecs,), (g,), (seen,) = _split(gram[None], penalty)
        if not seen:
            raise NotIdentifiableError(
                "The data do not determine the functions the roughness "
                "penalty leaves free (for example a straight line needs "
                "two distinct observed points): no alpha can fix that. "
                "Use a lower penalty_order, more observations, or remove "
                "rows with too few observed values."
            )
        self._set(eigvecs, g, penalty.n_null, scale)

    def _set(self, eigvecs, g, n_null, scale):
        self.scale, self.n_null = float(scale), n_null
        self.eigvecs, self.g = eigvecs, g
        self.p = np.concatenate([np.zeros(n_null), np.ones(g.size - n_null)])

    @classmethod
    def stack(cls, grams, penalty, scale):
        """One path per matrix of the stack ``grams`` (n, K, K), all with the
        one ``scale`` (one meaning of alpha: the folds of a cross-validation,
        say), None where a matrix does not determine the penalty's null
        space (where ``SplitPath`` raises :class:`NotIdentifiableError`).
        The decompositions run as stacked calls: the same steps as ``n``
        constructions, at the fixed cost of one."""
        grams = _symmetric(np.asarray(grams, dtype=np.float64))
        _check_finite(grams)
        out = []
        for eigvecs, g, seen in zip(*_split(grams, penalty), strict=True):
            path = None
            if seen:
                path = cls.__new__(cls)
                path._set(eigvecs, g, penalty.n_null, scale)
            out.append(path)
        return out

    @property
    def s(self):
        """Data eigenvalues of the penalized directions (engine units)."""
        return self.g[self.n_null :]

    def denominators(self, alpha):
        """``d = g + alpha * scale * p``: shape alpha.shape + (K,)."""
        lam = np.asarray(alpha, dtype=np.float64)[..., None] * self.scale
        d = self.g + lam * self.p
        if np.any(d <= 0):
            raise NotIdentifiableError(
                "alpha = 0 leaves coefficients undetermined that only the "
                "roughness penalty can fix; use alpha > 0 (or alpha='auto') or "
                "fewer basis functions."
            )
        return d

    def rotate(self, rhs):
        """Rotated right-hand sides ``b U``, one row per right-hand side.

        Directions the data do not see (``s`` set to 0: at rounding level)
        get exactly 0, their value in exact arithmetic (``u'Gu = 0`` means
        ``Z u = 0``, so ``b'u = y'W Z u = 0``). Their rounding noise would
        otherwise become coefficients ``r / lam`` at small alpha and a
        spurious drop of the residual sum of squares in GCV.
        """
        rotated = np.asarray(rhs) @ self.eigvecs
        unseen = self.g == 0
        if unseen.any():
            rotated[..., unseen] = 0.0
        return rotated

    def coef(self, rotated, alpha):
        """Coefficients ``(G + lam P)^{-1} b`` as rows; alpha scalar or per row."""
        return (rotated / self.denominators(alpha)) @ self.eigvecs.T

    def null_coef(self, rotated):
        """The alpha -> inf limit: least squares on the null space."""
        r = self.n_null
        return rotated[..., :r] @ self.eigvecs[:, :r].T

    def operator(self, alpha):
        """The matrix ``(G + lam P)^{-1}`` for a scalar alpha."""
        return (self.eigvecs / self.denominators(alpha)) @ self.eigvecs.T

    def edf(self, alphas):
        """Effective degrees of freedom ``tr (G + lam P)^{-1} G`` per alpha."""
        return (self.g / self.denominators(alphas)).sum(axis=-1)

    def rss_reduction(self, rotated, alphas):
        """``y'Wy - RSS(alpha)``: shape (rows, len(alphas))."""
        d = self.denominators(np.atleast_1d(alphas))
        factor = 2.0 / d - self.g / d**2
        return (np.asarray(rotated) ** 2) @ factor.T

    def penalized_rss_reduction(self, rotated, alphas):
        """``y'Wy - (RSS + lam c'Pc)(alpha)`` = ``b'(G + lam P)^{-1} b``."""
        d = self.denominators(np.atleast_1d(alphas))
        return (np.asarray(rotated) ** 2) @ (1.0 / d).T

    def log_det_ratio(self, alphas):
        """``log det(G + lam P)|_C - log det(lam P)|_C = sum log(1 + s / lam)``
        over the penalized directions (the REML determinant term)."""
        lam = np.atleast_1d(np.asarray(alphas, dtype=np.float64))[:, None] * self.scale
        return np.log1p(self.s / lam).sum(axis=1)
