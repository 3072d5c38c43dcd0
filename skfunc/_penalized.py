"""The penalized least-squares engine and its all-alpha path.

Every estimator in skfunc solves, for one or many right-hand sides ``b``,

    minimize  ||y - Z c||_W^2 + alpha * c' P c    =>   (G + alpha P) c = b,

with ``G = Z' W Z`` (K x K, the data's cross products), ``b = Z' W y`` and a
roughness matrix ``P``. One simultaneous diagonalisation of ``G`` and ``P``
(Demmler and Reinsch, 1975) serves every alpha: with ``U' G U = diag(mu)`` and
``U' P U = diag(1 - mu) / scale``,

    (G + alpha P)^{-1} = U diag(1 / d(alpha)) U',   d = mu + alpha/scale (1 - mu),

so coefficients, effective degrees of freedom ``sum mu / d`` and residual sums
of squares for a whole grid of alphas cost O(K) per right-hand side and alpha.

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
    return (a + a.T) / 2


class PenalizedPath:
    """Simultaneous diagonalisation of a cross-product matrix and a penalty.

    Parameters
    ----------
    gram : ndarray of shape (K, K)
        Symmetric positive semi-definite cross products ``Z' W Z``.
    penalty : ndarray of shape (K, K) or None
        Symmetric positive semi-definite roughness matrix; None for none.

    Attributes
    ----------
    eigvecs : ndarray of shape (K, K)
        ``U`` with ``U' (G + scale P) U = I``.
    mu : ndarray of shape (K,)
        Eigenvalues of ``G`` relative to ``G + scale P``, in [0, 1].
    scale : float
        ``trace(G) / trace(P)``, so that alpha / scale is dimensionless.
    """

    def __init__(self, gram, penalty=None):
        gram = _symmetric(np.asarray(gram, dtype=np.float64))
        k = gram.shape[0]
        if penalty is None:
            penalty = np.zeros_like(gram)
        penalty = _symmetric(np.asarray(penalty, dtype=np.float64))
        trace_g, trace_p = np.trace(gram), np.trace(penalty)
        self.scale = float(trace_g / trace_p) if trace_p > 0 and trace_g > 0 else 1.0
        combined = gram + self.scale * penalty
        eig = np.linalg.eigvalsh(combined)
        if eig[0] <= _RCOND * max(eig[-1], np.finfo(float).tiny) * k:
            raise NotIdentifiableError(
                "The data do not determine all basis coefficients: the cross-"
                "product matrix is singular on functions the roughness penalty "
                "does not penalise (or there is no penalty). Use fewer basis "
                "functions, more observations, or a roughness penalty alpha > 0."
            )
        lower = np.linalg.cholesky(combined)
        inv_lower = np.linalg.inv(lower)
        mu, vecs = np.linalg.eigh(_symmetric(inv_lower @ gram @ inv_lower.T))
        self.mu = np.clip(mu, 0.0, 1.0)
        self.eigvecs = inv_lower.T @ vecs

    def denominators(self, alpha):
        """``d = mu + alpha / scale (1 - mu)``: shape alpha.shape + (K,)."""
        alpha = np.asarray(alpha, dtype=np.float64)[..., None]
        d = self.mu + alpha / self.scale * (1.0 - self.mu)
        if np.any(d <= 0):
            raise NotIdentifiableError(
                "alpha = 0 leaves coefficients undetermined that only the "
                "roughness penalty can fix; use alpha > 0 or fewer basis functions."
            )
        return d

    def rotate(self, rhs):
        """Rotated right-hand sides ``r = b U``, one row per right-hand side."""
        return np.asarray(rhs) @ self.eigvecs

    def coef(self, rotated, alpha):
        """Coefficients ``(G + alpha P)^{-1} b`` as rows, from rotated ``b``.

        ``alpha`` is a scalar, or one value per row of ``rotated``.
        """
        return (rotated / self.denominators(alpha)) @ self.eigvecs.T

    def operator(self, alpha):
        """The matrix ``(G + alpha P)^{-1}`` for a scalar alpha."""
        return (self.eigvecs / self.denominators(alpha)) @ self.eigvecs.T

    def edf(self, alphas):
        """Effective degrees of freedom ``trace of the hat matrix`` per alpha."""
        return (self.mu / self.denominators(alphas)).sum(axis=-1)

    def rss_reduction(self, rotated, alphas):
        """``y'Wy - RSS(alpha)`` for every row of ``rotated`` and every alpha.

        Uses ``RSS = y'Wy - 2 c'b + c'Gc`` in the rotated coordinates; the
        result has shape (rows, len(alphas)).
        """
        d = self.denominators(np.atleast_1d(alphas))
        factor = 2.0 / d - self.mu / d**2
        return (np.asarray(rotated) ** 2) @ factor.T

    def default_alphas(self, n_alphas=25, low=1e-8, high=1e4):
        """Log-spaced candidate alphas scaled to the problem."""
        return self.scale * np.logspace(np.log10(low), np.log10(high), n_alphas)


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
    Zw = np.column_stack([w, Z * w[:, None]])
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
    if "czz" in stats[0]:
        return _merge_centered(*stats)
    out = dict(stats[0])
    for s in stats[1:]:
        for key in out:
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
    """
    stats = cross_products(Z, y, sample_weight)
    Z = np.asarray(Z, dtype=np.float64)
    y2 = np.asarray(y, dtype=np.float64).reshape(Z.shape[0], -1)
    w = np.ones(Z.shape[0]) if sample_weight is None else np.asarray(
        sample_weight, dtype=np.float64)
    sw = stats["sw"]
    Zc = Z - (stats["z_sum"] / sw if sw > 0 else 0.0)
    yc = y2 - (stats["y_sum"] / sw if sw > 0 else 0.0)
    Zcw = Zc * w[:, None]
    stats.update(czz=Zcw.T @ Zc, czy=Zcw.T @ yc, cyy=np.einsum("i,ij,ij->j", w, yc, yc))
    return stats


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
