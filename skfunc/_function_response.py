"""Penalized least squares with curve-valued responses.

Both function-on-scalar and function-on-function (integral) regression are the
same problem once the inputs are reduced to a design ``z_i`` (p numbers per
observation): covariates themselves, or the basis coordinates
``z_ia = int X_i(s) psi_a(s) ds`` of an input curve. With ``zc_i = z_i - zbar``
(weighted mean), the model and criterion are

    Y_i(t) = b_0(t) + sum_j zc_ij b_j(t) + eps_i(t),  b_j(t) = sum_k B_jk phi_k(t),

    sum_i w_i int (Y_i - fit_i)^2 dt
        + alpha [ tr(B' Ps B Gq) + tr(B' Gs B Pt) ],

with the response basis ``phi`` on the response grid, ``Gq = Phi' W Phi``
(quadrature Gram on the response grid), ``Pt = int D^q phi D^q phi'`` (exact)
and the geometry ``(Gs, Ps)`` of the covariate index: ``(I, 0)`` for scalar
covariates, the exact Gram and roughness matrices of the input basis for
curves. The intercept row has ``Gs = 1, Ps = 0``: ``alpha int (D^q b_0)^2``.
Centering the design decouples the intercept and keeps the fit invariant to
shifts of the covariates.

Normal equations: ``S B Gq + alpha (Ps B Gq + Gs B Pt) = R`` with
``S = sum w zaug zaug'`` and ``R = sum w zaug (Phi' W Y_i)'``. The
Demmler-Reinsch rotation ``U`` of the pair ``(Gq, Pt)``
(the split engine, :class:`~skfunc._penalized.SplitPath`) makes them separate over response
directions k: ``A_k c_k = r_k`` with
``A_k = mu_k (S + alpha Ps) + alpha (1 - mu_k) / scale Gs``, a small
(p+1)-square system per direction and alpha. So GCV over every candidate alpha
costs almost nothing once the additive statistics
(:meth:`CurveResponseRegressor._statistics`) are known; the data are read once.

Pointwise standard errors assume independent observations whose residual
curves share one covariance (estimated in the basis from the same
statistics); they ignore the smoothing bias.

References
----------
Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*, 2nd
ed., ch. 13-16. Springer.

Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline functions.
*Numerische Mathematik* 31, 377-403.
"""

import warnings
from functools import cached_property, partial
from types import SimpleNamespace

import numpy as np
from scipy.linalg import block_diag, null_space
from sklearn.base import BaseEstimator, RegressorMixin
from sklearn.utils import check_random_state
from sklearn.utils.validation import (
    check_array,
    check_consistent_length,
    check_is_fitted,
)

from ._alpha import (
    ALPHA_CONSTRAINTS,
    AUTO,
    best_index,
    candidates_from_eigenvalues,
    check_alpha,
    gcv_in_data_units,
    reml_score,
)
from ._bands import critical_value
from ._blocks import (
    chunked_matmul,
    in_pieces,
    is_dask_array,
    row_blocks,
    single_thread_blas,
)
from ._dask import check_accepts_dask
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveFitMixin
from ._grid import check_grid, grid_from_labels, quadrature_weights, resolve_grid
from ._penalized import (
    _RCOND,
    NotIdentifiableError,
    Penalty,
    SplitPath,
    centered,
    cross_products,
    gcv_score,
    penalty_for,
    penalty_scale,
    scaled_statistics,
    to_data_units,
)
from ._validation import (
    BASIS_CONSTRAINTS,
    basis_for,
    check_labels,
    check_level,
    validate_curves,
)
from ._weights import check_sample_weight

#: eigenvalues below this fraction of the largest make a direction undetermined
#: (minimum-norm solution, as numpy.linalg.lstsq)
_PINV_RTOL = 1e-12

#: parameters shared by the curve-response regressors
RESPONSE_PARAMETER_CONSTRAINTS = {
    **{key: value for key, value in BASIS_CONSTRAINTS.items() if key != "grid"},
    **ALPHA_CONSTRAINTS,
    "response_grid": ["array-like", None],
}


def choose_from_scores(estimator, alphas, score_fn):
    """``(best index, criterion path)`` for the estimator's ``alpha`` among
    ``alphas``: the fixed alpha (index 0, no path), or the best of
    ``score_fn(alphas, criterion)`` (:func:`skfunc._alpha.best_index`)."""
    if isinstance(check_alpha(estimator.alpha), float):
        return 0, None
    scores = score_fn(alphas, estimator.criterion)
    return best_index(scores, alphas, criterion=estimator.criterion.upper()), scores


def resolve_candidates(alpha, s, scale):
    """The candidates for a user ``alpha``: ``[alpha]`` when fixed, the
    given array, or the default spanning the effective degrees of freedom
    of the data eigenvalues ``s`` (engine weight ``scale`` of alpha = 1)."""
    value = check_alpha(alpha)
    if value is AUTO:
        # eigenvalues pooled over several decompositions: those at rounding
        # level of the largest (the engine's rule, 1e-13 times the size) carry
        # no data and would tie the smallest candidate to rounding noise
        s = np.asarray(s, dtype=np.float64)
        top = s.max(initial=0.0)
        return candidates_from_eigenvalues(s[s > 1e-13 * top * max(s.size, 1)], scale)
    return np.atleast_1d(value)


def free_penalty(n):
    """A "penalty" leaving all ``n`` coordinates free (alpha fixed at 0: the
    basis' smoothness need not carry any roughness)."""
    return Penalty(np.zeros((n, n)), np.eye(n))


def response_split(basis, gram, penalty_order, penalized=True, total_weight=None):
    """``(U, g, p, s_t)`` of the response side: ``U' G U = diag(g)``,
    ``U' P01 U = diag(p)`` with ``p = 0`` exactly on the penalty's null
    space, and ``s_t`` the engine weight of the response penalty
    (``total_weight``, the sum of the quadrature weights: the response Gram
    matrix tends to that times the Gram matrix on [0, 1], as for a
    smoother; its largest eigenvalue would add the quadrature error of the
    most oscillatory basis function). A one-point grid has one unpenalized
    direction; so has every direction without a penalty."""
    if isinstance(basis, _PointBasis):
        return np.eye(1), np.ones(1), np.zeros(1), 1.0
    penalty = (penalty_for(basis, penalty_order) if penalized
               else free_penalty(basis.n_basis))
    path = SplitPath(gram, penalty, scale=total_weight)
    return path.eigvecs, path.g, path.p, path.scale


def _swap(a):
    return np.swapaxes(a, -1, -2)


def _sym(a):
    """``(a + a') / 2`` of every matrix in a stack."""
    return (a + _swap(a)) / 2


def _whitenings(gram_s, pen_s, c):
    """``T_k`` with ``T_k' Q_k T_k = I`` for every ``Q_k = Gs + c_k Ps``
    (``Ps`` None: 0), stacked: the complement transforms of
    :class:`~skfunc._penalized.Penalty` of ``Q_k`` with an empty null space.

    One decomposition of the pencil serves every k: with ``Gs = L L'`` and
    ``L^-1 Ps L^-T = V diag(e) V'``, ``Q_k = L V diag(1 + c_k e) V' L'``, so
    ``T_k = L^-T V diag(1 + c_k e)^(-1/2)``. Where ``Gs`` is not positive
    definite, each ``Q_k`` is decomposed (and the engine's error raised
    where one is singular).
    """
    p, n = gram_s.shape[0], c.size
    try:
        lower = np.linalg.cholesky(_sym(gram_s))
    except np.linalg.LinAlgError:
        lower = None
    if lower is not None:
        inv_t = np.linalg.solve(lower, np.eye(p)).T  # L^-T
        if pen_s is None:
            return np.broadcast_to(inv_t, (n, p, p))
        e, V = np.linalg.eigh(_sym(inv_t.T @ pen_s.matrix @ inv_t))
        lam = 1.0 + c[:, None] * np.clip(e, 0.0, None)
        return (inv_t @ V) / np.sqrt(lam)[:, None, :]
    matrix = np.broadcast_to(gram_s, (n, p, p)) if pen_s is None else (
        gram_s + c[:, None, None] * pen_s.matrix)
    lam, vec = np.linalg.eigh(_sym(matrix))
    if n and lam[:, 0].min() <= 0:
        Penalty(matrix[np.argmin(lam[:, 0])], np.zeros((p, 0)))  # raises its error
    return vec / np.sqrt(lam)[:, None, :]


class _StackedPaths:
    """The :class:`~skfunc._penalized.SplitPath` of many response directions
    at once, in stacked arrays (axis 0: the direction).

    Built for the regular directions (``p_k > 0``, ``g_k > 0``): the design
    block penalized by ``Q_k = Gs + g_k / s_t Ps`` (positive definite), the
    intercept (last coordinate) free. The construction is the engine's,
    step by step (:class:`~skfunc._penalized.Penalty` of ``Q_k`` with an
    empty null space, extended by the intercept; then the split of ``g_k
    S``), with one batched eigen-decomposition per step for all directions
    instead of a Python loop of small ones. ``rejected`` flags the
    directions whose intercept the data do not see: those are left to the
    engine's own path (its error or minimum-norm fallback).
    """

    n_null = 1

    def __init__(self, S, g, gram_s, pen_s, s_t, scale):
        p, n = gram_s.shape[0], g.size
        self.scale = float(scale)
        T = np.zeros((n, p + 1, p + 1))  # extended: column 0 the intercept
        T[:, p, 0] = 1.0
        T[:, :p, 1:] = _whitenings(gram_s, pen_s, g / s_t)
        # SplitPath(g_k S, that penalty): profile out the intercept, then
        # diagonalise the Schur complement of the design block
        gram = _sym(g[:, None, None] * S)
        finite = np.isfinite(gram).all(axis=(1, 2))
        if not finite.all():
            SplitPath(gram[np.argmin(finite)], free_penalty(p + 1))  # raises its error
        Gt = _sym(_swap(T) @ gram @ T)
        F, C, R = Gt[:, :1, :1], Gt[:, :1, 1:], Gt[:, 1:, 1:]
        # the engine's test of an unseen null space, for a one-column block:
        # the diagonal at the rounding level of the terms summed into it
        noise = np.einsum("dij,dik,dkj->dj", np.abs(T[:, :, :1]), np.abs(gram),
                          np.abs(T[:, :, :1]))
        self.rejected = F[:, 0, 0] <= _RCOND * 1e-3 * noise[:, 0]
        lower = np.linalg.cholesky(np.where(self.rejected[:, None, None], 1.0, F))
        W = np.linalg.solve(lower, C)
        schur = _sym(R - _swap(W) @ W)
        A_n = _swap(np.linalg.solve(lower, _swap(T[:, :, :1])))
        s, V = np.linalg.eigh(schur)
        s = np.clip(s, 0.0, None)
        top_c = np.maximum(np.abs(np.diagonal(R, axis1=1, axis2=2)).max(axis=1, initial=0.0),
                           np.finfo(float).tiny)
        floor = 1e-13 * np.maximum(s.max(axis=1, initial=0.0), top_c) * max(s.shape[1], 1)
        s[s <= floor[:, None]] = 0.0
        E = (T[:, :, 1:] - A_n @ W) @ V
        self.eigvecs = np.concatenate([A_n, E], axis=2)
        self.g = np.concatenate([np.ones((n, 1)), s], axis=1)
        self.p = np.concatenate([np.zeros((n, 1)), np.ones_like(s)], axis=1)

    def select(self, keep):
        """The directions ``keep`` (a boolean mask) only."""
        out = _StackedPaths.__new__(_StackedPaths)
        out.scale = self.scale
        out.eigvecs, out.g, out.p = self.eigvecs[keep], self.g[keep], self.p[keep]
        return out

    @property
    def s(self):
        """Data eigenvalues of the penalized directions, one row each."""
        return self.g[:, self.n_null:]

    def denominators(self, alphas):
        """``d = g + alpha * scale * p``: shape (directions, len(alphas), K)."""
        lam = np.asarray(alphas, dtype=np.float64)[:, None] * self.scale
        d = self.g[:, None, :] + lam * self.p[:, None, :]
        if np.any(d <= 0):  # the engine's error
            k = np.argmax((d <= 0).any(axis=(1, 2)))
            SplitPath.denominators(SimpleNamespace(g=self.g[k], p=self.p[k],
                                                   scale=self.scale), alphas)
        return d

    def rotate(self, rhs):
        """Rotated right-hand sides, one row per direction (exact zeros where
        the data see nothing, as :meth:`SplitPath.rotate`)."""
        rotated = (rhs[:, None, :] @ self.eigvecs)[:, 0]
        rotated[self.g == 0] = 0.0
        return rotated

    def rss_reduction(self, rotated, alphas):
        d = self.denominators(np.atleast_1d(alphas))
        factor = 2.0 / d - self.g[:, None, :] / d**2
        return (factor @ (rotated ** 2)[:, :, None])[..., 0]

    def penalized_rss_reduction(self, rotated, alphas):
        d = self.denominators(np.atleast_1d(alphas))
        return ((1.0 / d) @ (rotated ** 2)[:, :, None])[..., 0]

    def edf(self, alphas):
        return (self.g[:, None, :] / self.denominators(np.atleast_1d(alphas))).sum(axis=-1)

    def log_det_ratio(self, alphas):
        lam = np.atleast_1d(np.asarray(alphas, dtype=np.float64))[:, None] * self.scale
        return np.log1p(self.s[:, None, :] / lam).sum(axis=-1)

    def coef(self, rotated, alpha):
        """Coefficients of every direction at one alpha, one row each."""
        d = self.denominators(np.atleast_1d(alpha))[:, 0]
        return ((rotated / d)[:, None, :] @ _swap(self.eigvecs))[:, 0]

    def operator(self, alpha):
        """``(G + lam P)^{-1}`` of every direction at one alpha."""
        d = self.denominators(np.atleast_1d(alpha))[:, 0]
        return (self.eigvecs / d[:, None, :]) @ _swap(self.eigvecs)


class _Directions:
    """The live response directions of a curve-response fit: the regular
    ones stacked (:class:`_StackedPaths`), the others (the response
    penalty's null space, intercepts the data do not see) each its own
    :class:`~skfunc._penalized.SplitPath` from ``single(k)``, which returns
    ``(path, n_dropped)`` or None for a direction the data do not see.
    Sums over directions (criteria, effective degrees of freedom) add the
    two parts; the right-hand sides ``rot`` hold one column per direction.
    """

    def __init__(self, stack, stacked, single, others, rot):
        keep = ~stack.rejected
        self.stack, self.stacked = stack.select(keep), stacked[keep]
        built = {k: single(k) for k in sorted([*others, *stacked[~keep]])}
        self.paths = {k: item[0] for k, item in built.items() if item is not None}
        self.dropped = sum(item[1] for item in built.values() if item is not None)
        self.live = sorted([*self.stacked.tolist(), *self.paths])
        self.rotated = self.stack.rotate(rot[:, self.stacked].T)
        self.rotated_single = {k: path.rotate(rot[:, k])[None]
                               for k, path in self.paths.items()}

    def eigenvalues(self):
        """The data eigenvalues of every live direction, in order."""
        rows = dict(zip(self.stacked.tolist(), self.stack.s))
        rows.update({k: path.s for k, path in self.paths.items()})
        return np.concatenate([rows[k] for k in self.live])

    def _in_order(self, stacked, single):
        """Sum over the live directions in their order (as a loop would)."""
        rows = dict(zip(self.stacked.tolist(), stacked))
        rows.update({k: single(k, path) for k, path in self.paths.items()})
        return np.array([rows[k] for k in self.live]).sum(axis=0)

    def total(self, method, values):
        """``sum_k path_k.method(rotated_k, values)``."""
        return self._in_order(
            getattr(self.stack, method)(self.rotated, values),
            lambda k, path: getattr(path, method)(self.rotated_single[k], values)[0])

    def _sum(self, method, values):
        return self._in_order(getattr(self.stack, method)(values),
                              lambda k, path: getattr(path, method)(values))

    def edf(self, values):
        return self._sum("edf", values)

    def log_det_ratio(self, values):
        return self._sum("log_det_ratio", values)

    @property
    def n_null(self):
        return (self.stack.n_null * self.stacked.size
                + sum(path.n_null for path in self.paths.values()))

    def solution(self, alpha, n_directions):
        """Coefficients (columns), operators and effective degrees of
        freedom of every direction at ``alpha`` (zero for dead ones)."""
        p1 = self.stack.eigvecs.shape[1]
        C = np.zeros((p1, n_directions))
        A_inv = np.zeros((n_directions, p1, p1))
        edf = np.zeros(n_directions)
        C[:, self.stacked] = self.stack.coef(self.rotated, alpha).T
        A_inv[self.stacked] = self.stack.operator(alpha)
        edf[self.stacked] = self.stack.edf(alpha)[:, 0]
        for k, path in self.paths.items():
            C[:, k] = path.coef(self.rotated_single[k], alpha)[0]
            A_inv[k] = path.operator(alpha)
            edf[k] = path.edf(alpha)
        return C, A_inv, edf


class UndeterminedCoefficientsWarning(UserWarning):
    """The data do not determine every unpenalized coefficient; the fit is
    the minimum-norm solution."""


def min_norm_path(gram, penalty, scale, metric):
    """``(path, n_dropped)``: the :class:`~skfunc._penalized.SplitPath` of
    ``(gram, penalty)``, also when the data do not determine the penalty's
    whole null space; ``metric=None`` allows no such fallback.

    The null-space directions the data do not see are then dropped:
    eigenvalues at rounding level (the engine's own test) of the
    null-space block of ``gram`` scaled to a unit diagonal, so that columns
    in different units (covariates against the intercept's weight total)
    are not mistaken for a rank deficiency; when there are none, the
    engine's error stands. The problem is solved on the ``metric``-orthogonal
    complement of those directions, so among all minimisers the
    coefficients ``c`` have the smallest ``c' metric c``, the minimum-norm
    solution that :func:`numpy.linalg.lstsq` gives for rank-deficient least
    squares. The path's ``eigvecs`` map to the full coordinates (with
    ``n_dropped`` fewer columns), so coefficients, operators, effective
    degrees of freedom and criteria are those of the identified part.
    """
    try:
        return SplitPath(gram, penalty, scale=scale), 0
    except NotIdentifiableError as exc:
        if metric is None:
            raise
        error = exc
    r = penalty.n_null
    basis_n = penalty.transform[:, :r]  # orthonormal null-space basis
    block = basis_n.T @ gram @ basis_n
    diag = np.clip(np.diag(block), 0.0, None)
    root = np.sqrt(np.where(diag > 0, diag, 1.0))
    unit = block / np.outer(root, root)
    lam, vec = np.linalg.eigh((unit + unit.T) / 2)
    unseen = lam <= _RCOND * r * max(lam[-1], 1.0)
    if not unseen.any():
        raise error
    undetermined = basis_n @ (vec[:, unseen] / root[:, None])
    keep = null_space((metric @ undetermined).T)  # c with D' metric c = 0
    free = basis_n @ null_space(undetermined.T @ metric @ basis_n)
    reduced = Penalty(keep.T @ penalty.matrix @ keep, keep.T @ free)
    path = SplitPath(keep.T @ gram @ keep, reduced, scale=scale)
    path.eigvecs = keep @ path.eigvecs
    return path, int(unseen.sum())


class _PointBasis:
    """The basis of functions on a one-point response grid: one constant.

    A response "curve" of one grid point is a scalar; its only function is
    a constant, with no roughness, so the regression is least squares (with
    the input-side penalty of a function-on-function model).
    """

    name = "constant"
    n_basis = 1

    def __init__(self, point):
        self.domain = (float(point), float(point))

    def evaluate(self, t, derivative=0):
        t = np.asarray(t, dtype=np.float64).ravel()
        return np.full((t.size, 1), 1.0 if derivative == 0 else 0.0)

    def gram(self):
        return np.ones((1, 1))

    def penalty(self, order):
        return np.full((1, 1), 1.0 if order == 0 else 0.0)

    def unit_roughness(self, order):
        return self.penalty(order)

    def unit_gram(self):
        return self.gram()

    def null_space(self, order):
        """The constant is free of any derivative penalty (order >= 1)."""
        return np.ones((1, 1)) if order >= 1 else np.zeros((1, 0))


def _default_response_grid(n_points):
    """Evenly spaced points on [0, 1]; one point is the start, 0, as
    ``np.linspace`` gives."""
    return np.linspace(0.0, 1.0, n_points)


def _one_point_grid(grid, y_in, default):
    """The response grid of a one-column y: the given point, its numeric
    label, or ``default(1)``."""
    if grid is None:
        labels = list(getattr(y_in, "columns", []))
        try:
            grid = [float(labels[0])] if labels else None
        except (TypeError, ValueError):
            grid = None  # a word labels the column: no grid in it
    if grid is None:
        return default(1)
    grid = np.asarray(grid, dtype=np.float64).ravel()
    if grid.size != 1 or not np.isfinite(grid[0]):
        raise ValueError(
            f"response_grid has {grid.size} point(s) but y has 1 column; the "
            "response grid needs one finite point per column of y."
        )
    return grid


def validate_response(estimator, y, n_samples, *, reset,
                      default=_default_response_grid):
    """Validate curve-valued targets: 2-D and finite.

    On ``reset`` the response grid is resolved from ``estimator.response_grid``,
    numeric DataFrame column labels of ``y``, or ``default(n_columns)``
    (evenly spaced points on [0, 1]), and stored as
    ``estimator.response_grid_``; otherwise the number of columns (and numeric
    labels) must match it. A one-column y is a response of one grid point (a
    scalar outcome).
    """
    if y is None:
        raise ValueError(
            f"{type(estimator).__name__} requires y to be passed, but the target y "
            "is None; pass the response curves as a 2-D array."
        )
    y_in = y
    if is_dask_array(y):  # validated per block by validate_dask
        check_accepts_dask(estimator)
    else:
        y = check_array(
            y, ensure_2d=False, dtype=np.float64, ensure_all_finite=True,
            input_name="y",
        )
    if y.ndim != 2:
        raise ValueError(
            f"y must be 2-D: one response curve per row, its values on the response "
            f"grid as columns; got an array of shape {y.shape}. For a scalar "
            "response pass y.reshape(-1, 1) or use a scalar-outcome regressor; "
            "for a single curve pass y.reshape(1, -1)."
        )
    check_consistent_length(np.empty((n_samples, 0)), y)
    m = y.shape[1]
    labels = getattr(y_in, "columns", None)
    inferred = None
    if labels is not None and m > 1:
        inferred = grid_from_labels(list(labels))
    if reset:
        grid = getattr(estimator, "response_grid", None)
        if m == 1:
            estimator.response_grid_ = _one_point_grid(grid, y_in, default)
            return y
        if grid is not None and np.ndim(grid) == 1 and len(grid) != m:
            raise ValueError(
                f"response_grid has {len(grid)} points but y has {m} columns; the "
                "response grid needs one point per column of y."
            )
        if grid is None and inferred is None:
            estimator.response_grid_ = check_grid(default(m), m, name="response_grid")
        else:
            estimator.response_grid_ = resolve_grid(grid, y_in, m, name="response_grid",
                                                    data_name="y")
        return y
    if m != estimator.response_grid_.size:
        raise ValueError(
            f"y has {m} columns but {type(estimator).__name__} was fitted on a "
            f"response grid of {estimator.response_grid_.size} points."
        )
    check_labels(estimator, inferred, estimator.response_grid_, "y", "response grid")
    return y


def check_eval_points(points, domain, name="eval_points"):
    """Evaluation points inside the fitted domain."""
    a, b = domain
    if a == b:  # a one-point response grid
        points = np.asarray(points, dtype=np.float64).ravel()
        if points.size == 0 or not np.allclose(points, a, rtol=0, atol=0):
            raise ValueError(
                f"{name} must be the one point {a} of the fitted response grid; "
                f"got {points!r}."
            )
        return points
    return check_in_domain(check_grid(points, name=name), domain, name)


def check_in_domain(points, domain, name, what="the fitted response domain"):
    """Increasing ``points`` inside ``domain`` (up to rounding), else a
    ValueError naming ``name``: nothing is extrapolated."""
    a, b = domain
    tol = 1e-12 * max(1.0, abs(a), abs(b))
    if points[0] < a - tol or points[-1] > b + tol:
        raise ValueError(
            f"{name} must lie in {what} [{a}, {b}]; got "
            f"[{points[0]}, {points[-1]}]. Extrapolation is not supported."
        )
    return points


def _block(corner, matrix):
    p = matrix.shape[0]
    out = np.zeros((p + 1, p + 1))
    out[0, 0] = corner
    out[1:, 1:] = matrix
    return out


def _pinvh(A):
    """Batched pseudo-inverse of symmetric positive semi-definite matrices."""
    lam, vec = np.linalg.eigh(A)
    keep = lam > _PINV_RTOL * lam.shape[-1] * np.maximum(lam[..., -1:], 0)
    inv = np.zeros_like(lam)
    np.divide(1.0, lam, out=inv, where=keep & (lam > 0))
    return (vec * inv[..., None, :]) @ np.swapaxes(vec, -1, -2)


def covariance_factors(stats, U, mu, S, rot, C, A_inv, dof, transform, x_power):
    """What the covariance of the coefficients ``transform @ C @ U'`` is made
    of, small arrays (the matrix itself has ``((p + 1) K)**2`` entries): the
    operators ``A_k^+`` of the rotated directions, ``S``, ``transform``,
    ``U``, the residual covariance in the basis, ``Omega = U' sum w e e' U /
    dof`` with projected residuals ``e_i = Phi'W Y_i - Gq B' zaug_i`` (from
    the statistics), and the powers of two back to the data's units
    (``x_power`` of each row, twice the exponent of y)."""
    M = np.diag(mu)
    cross = rot.T @ C @ M
    resid = U.T @ stats["yproj"] @ U - cross - cross.T + M @ C.T @ S @ C @ M
    omega = resid / dof if dof > 0 else np.full_like(resid, np.nan)
    return {"A_inv": A_inv, "S": S, "transform": transform, "U": U, "omega": omega,
            "x_power": x_power, "x_exp": stats["x_exp"], "y_exp": stats["y_exp"]}


def _covariance_sides(factors):
    """``transform A_k^+ S`` and ``transform A_k^+``, each (K, P, P)."""
    A_inv, transform = factors["A_inv"], factors["transform"]
    return transform @ (A_inv @ factors["S"]), transform @ A_inv


def _exponents(factors, x_power):
    """:func:`~skfunc._penalized.to_data_units`'s arguments for a variance
    whose rows carry ``x_power``."""
    return {"x_exp": factors["x_exp"], "y_exp": factors["y_exp"]}, x_power


def coef_covariance(factors):
    """The covariance (P K, P K) of the coefficients, indexed [(a, b), (c,
    d)] (row a, response basis function b), in the data's units, from
    :func:`covariance_factors`: ``Cov(c_k, c_l) = A_k^+ S A_l^+ Omega_kl``
    for the rotated coefficients, mapped by ``transform`` (rows) and ``U``
    (directions) with plain matrix products. Its underflow or overflow was
    told at the fit (:func:`coef_variance`). One BLAS thread, as in the fit,
    so that the matrix is the same whenever it is formed."""
    with single_thread_blas():
        return _coef_covariance(factors)


def _coef_covariance(factors):
    left, right = _covariance_sides(factors)
    U, omega, x_power = factors["U"], factors["omega"], factors["x_power"]
    K, P = left.shape[:2]
    cov = (left.reshape(K * P, P) @ right.reshape(K * P, P).T).reshape(K, P, K, P)
    cov *= omega[:, None, :, None]
    cov = (U @ cov.reshape(K, -1)).reshape(K, P, K, P)  # [b, a, l, c]
    cov = cov.transpose(1, 0, 3, 2).reshape(-1, K) @ U.T  # [(a, b, c), d]
    scaled, power = _exponents(factors, x_power[:, None, None, None]
                               + x_power[None, None, :, None])
    cov = to_data_units(cov.reshape(P, K, P, K), scaled, power, 2)
    return cov.reshape(P * K, P * K)


def coef_variance(factors):
    """The diagonal of :func:`coef_covariance` as (P, K), in the data's
    units, at a small part of its cost: what the fit checks (a covariance
    overflows where a variance does, ``|c_ij| <= sqrt(c_ii c_jj)``; an
    underflowing variance warns, naming ``coef_covariance_``)."""
    left, right = _covariance_sides(factors)
    U, omega, x_power = factors["U"], factors["omega"], factors["x_power"]
    # [a, k, l] = sum_j left[k, a, j] right[l, a, j], weighted by Omega_kl
    inner = left.transpose(1, 0, 2) @ right.transpose(1, 2, 0) * omega
    var = ((U @ inner) * U).sum(axis=-1)  # sum_kl U_bk U_bl inner[a, k, l]
    scaled, power = _exponents(factors, 2 * x_power[:, None])
    return to_data_units(var, scaled, power, 2, "coef_covariance_")


class CurveResponseRegressor(AdditiveFitMixin, RegressorMixin, BaseEstimator):
    """What the curve-response regressors share: the fit from additive
    statistics, coefficient functions, bands and the integrated R^2 score.

    The fitted coefficient functions are ``basis_coef_`` (rows: intercept,
    then the design's coefficient functions, in the response basis) with
    covariance ``coef_covariance_``. A subclass defines

    * ``_validate_X(X, reset, **y_params)``: validated X, or ``(X, y)``
      validated together when ``y_params`` holds ``y``
      (:class:`CurveInputResponseRegressor` for input curves);
    * ``_design_effect(X, coef, points, offset=None)``: the prediction
      minus the intercept (plus ``offset``, the intercept), from validated X
      and ``coef`` shaped like ``coef_function_`` at the response
      ``points``; float32 for float32 X (``skfunc._blocks.output_dtype``);
    * ``_statistics_function()`` (optional): ``_statistics`` with a linear
      ``design`` operator when the design is not X itself;
    * ``_design_geometry()``: ``(Gs, Ps)``, the Gram and roughness matrices
      of the design index (identity and zeros for scalar covariates);
    * ``_coef_rows()``: the combination of ``basis_coef_``'s rows giving
      ``coef_function_``.
    """

    #: fit runs on skfunc._blocks.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    _batch_grids = (("response_grid", "response_grid_"),)

    #: whether the simultaneous band covers all rows of ``coef_function_`` at
    #: once (a coefficient surface) rather than each row (coefficient
    #: functions of separate covariates)
    _joint_band = False

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.target_tags.required = True
        tags.target_tags.multi_output = True
        tags.target_tags.single_output = False
        return tags

    # -- the fit: validate, statistics, solve ---------------------------------

    def _validate_batch(self, X, y, sample_weight, first):
        if first:
            check_alpha(self.alpha)
        X, y = self._validate_inputs(X, y, reset=first)
        y = validate_response(self, y, X.shape[0], reset=first)
        return X, y, check_sample_weight(sample_weight, X)

    def _validate_inputs(self, X, y, reset):
        """Validated X, and y: validated along with X when either is a dask
        array (rows aligned, not gathered), else as given (for
        :func:`validate_response`)."""
        if is_dask_array(X) or is_dask_array(y):
            return self._validate_X(X, reset=reset, y=y, multi_output=True)
        return self._validate_X(X, reset=reset), y

    def _statistics(self, X, y, sample_weight=None, design=None):
        """Additive statistics of one block of rows.

        The design is X itself, or ``X @ design`` for an operator ``design``
        (m, p). Keys of :func:`skfunc._penalized.cross_products` of the design and y
        (``n, sw, z_sum, y_sum, zz, zy, yy``) plus ``yproj``, the weighted
        cross products of the projections ``Y_i' W Phi`` (K x K): all sums
        of X and y divided by powers of two (``x_exp``, ``y_exp``:
        :func:`skfunc._penalized.scaled_statistics`, so squares of data near
        1e300 or 1e-300 stay finite and normal), merged key by key
        (:func:`skfunc._penalized.merge`). The solve works in those units.
        Formed over cache-sized row pieces (:func:`skfunc._blocks.in_pieces`).
        """
        basis, weights = self._response_basis()
        phi_w = basis.evaluate(self.response_grid_) * weights[:, None]
        return in_pieces(partial(scaled_statistics, self._scaled_statistics,
                                 design=design, phi_w=phi_w), X, y, sample_weight)

    @staticmethod
    def _scaled_statistics(X, y, sample_weight, design, phi_w):
        Y = np.asarray(y, dtype=np.float64)
        Z = X if design is None else chunked_matmul(X, design)
        stats = cross_products(Z, Y, sample_weight)
        w = np.ones(Y.shape[0]) if sample_weight is None else np.asarray(
            sample_weight, dtype=np.float64)
        proj = Y @ phi_w
        stats["yproj"] = (proj * w[:, None]).T @ proj
        return stats

    def _solve(self, stats):
        """Coefficient functions from merged statistics; alpha by GCV or REML.

        The response side is split once (:func:`response_split`); each
        response direction k is then a small penalized problem in the
        centred design and the intercept, ``(g_k S + lam Q_k) c_k = r_k``
        with ``Q_k = g_k / s_t Ps + p_k Gs`` (design geometry on [0, 1]) and
        the intercept unpenalized, solved for every alpha by its own
        :class:`~skfunc._penalized.SplitPath` with ``lam = alpha * s_S *
        s_t`` (``s_S`` the design's :func:`~skfunc._penalized.penalty_scale`),
        all directions at once where they share a form (:class:`_Directions`).
        Sets ``basis_coef_`` ((p + 1, K), row 0 the intercept, on the
        original covariates), ``coef_covariance_``, ``alpha_``,
        ``alphas_path_``, ``criterion_path_``, ``edf_`` and ``edf_path_``.

        Every matrix here is small (K or p + 1 square, batched): one BLAS
        thread, whose latency is lower than that of a team of threads
        (several times lower on a busy machine).
        """
        with single_thread_blas():
            self._solve_small(stats)

    def _solve_small(self, stats):
        basis, weights = self._response_basis()
        phi = basis.evaluate(self.response_grid_)
        phi_w = phi * weights[:, None]
        gram_s, pen_s = self._design_geometry()
        sw = stats["sw"]
        zz, zy, _, z_mean, y_mean = centered(stats)
        p = zz.shape[0]
        try:
            U, g, p_t, s_t = response_split(basis, phi_w.T @ phi, self.penalty_order,
                                            not self._unpenalized(), float(weights.sum()))
        except NotIdentifiableError as exc:
            raise self._not_identifiable("response", stats["n"]) from exc
        design_pen = pen_s if pen_s is not None else free_penalty(p)
        scale = penalty_scale(zz, design_pen) * s_t
        S = np.zeros((p + 1, p + 1))
        S[:p, :p], S[p, p] = zz, sw
        rot = (np.vstack([zy, sw * y_mean]) @ phi_w) @ U  # r_k as columns
        if stats["n"] < 2:
            raise ValueError(
                f"{type(self).__name__} was given 1 sample; the coefficient "
                "functions need n_samples >= 2 (the intercept and one slope)."
            )
        # raw sums of squares below the smallest normal number where the sums
        # are not zero: the squares underflowed, a numerical failure (the
        # engine's error stands), not a rank deficiency of the data
        underflow = np.any((np.diag(stats["zz"]) < np.finfo(float).tiny)
                           & (stats["z_sum"] != 0))
        metric = None if underflow else block_diag(gram_s, 1.0)
        regular = (p_t > 0) & (g > 0)
        # the directions of the response penalty's null space (p_k = 0) share
        # one design penalty: only Ps acts
        null_pen = None
        if np.any(p_t == 0):
            null_pen = free_penalty(p) if pen_s is None else Penalty(
                pen_s.matrix / s_t, pen_s.transform[:, :pen_s.n_null])
        try:
            directions = _Directions(
                _StackedPaths(S, g[regular], gram_s, pen_s, s_t, scale),
                np.flatnonzero(regular),
                lambda k: self._direction_path(S, g[k], p_t[k], gram_s, pen_s, s_t,
                                               scale, metric, null_pen),
                np.flatnonzero(p_t <= 0), rot)
        except NotIdentifiableError as exc:
            raise self._not_identifiable("design", stats["n"]) from exc
        if directions.dropped:
            warnings.warn(
                f"{type(self).__name__}: the {stats['n']} rows (weights summing to "
                f"{sw:g}) do not determine {directions.dropped} combination(s) of the "
                "unpenalized coefficients (the intercept and the part of every "
                "coefficient function the penalty leaves free): too few rows for "
                "the covariates, or collinear covariates. The fit is the "
                "minimum-norm solution (smallest L2 norm of the coefficient "
                "functions), as numpy.linalg.lstsq and "
                "sklearn.linear_model.LinearRegression return for rank-deficient "
                "designs. Use fewer covariates or more rows for a unique fit.",
                UndeterminedCoefficientsWarning, stacklevel=5,
            )
        alphas = resolve_candidates(self.alpha, directions.eigenvalues(), scale)
        yy_w = stats["yy"] @ weights
        m = weights.size

        def scores(values, criterion):
            if criterion == "reml":
                return reml_score(
                    yy_w - directions.total("penalized_rss_reduction", values),
                    sw * m - directions.n_null, directions.log_det_ratio(values),
                    2 * stats["y_exp"] * np.log(2.0))
            rss = np.maximum(yy_w - directions.total("rss_reduction", values), 0.0)
            return gcv_score(rss, directions.edf(values), sw * m, sw * weights.sum())

        try:
            best, criterion = choose_from_scores(self, alphas, scores)
            alpha = alphas[best]
            C, A_inv, sample_edf = directions.solution(alpha, g.size)
        except NotIdentifiableError as exc:  # alpha = 0 only (d = 0)
            raise self._not_identifiable("unpenalized", stats["n"]) from exc
        # back to the order (intercept, design)
        order = np.r_[p, np.arange(p)]
        C, S, rot = C[order], S[np.ix_(order, order)], rot[order]
        A_inv = A_inv[:, order][:, :, order]
        transform = np.eye(p + 1)
        transform[0, 1:] = -z_mean  # back to the original (uncentered) covariates
        # back to the data's units: the intercept row is in y's, the others
        # in y / x (powers of two, exact; variances may overflow: checked)
        x_power = np.r_[0.0, -np.ones(p)]
        basis_coef = to_data_units(transform @ C @ U.T, stats, x_power[:, None], 1,
                                   "basis_coef_")
        if criterion is not None and self.criterion == "gcv":
            criterion = gcv_in_data_units(criterion, stats["y_exp"])
        self._store(basis, basis_coef, alphas, criterion, directions.edf(alphas), best)
        # the covariance (((p + 1) K)**2 entries) is formed on first use
        self._covariance_factors = covariance_factors(
            stats, U, g, S, rot, C, A_inv, sw - sample_edf.max(), transform, x_power)
        self._coef_variance = coef_variance(self._covariance_factors)

    def _not_identifiable(self, side, n_samples):
        """The error for coefficients the data cannot determine, with the
        advice that fits the case: the penalty's null space needs a lower
        ``penalty_order`` (or more data), an unpenalized basis a smaller
        ``n_basis``; only alpha = 0 is told to add a penalty."""
        name, q = type(self).__name__, self.penalty_order
        if side == "unpenalized":
            detail = (
                "with alpha=0 (no penalty) the data must determine every basis "
                "coefficient and do not. Use a smaller n_basis, more observations, "
                "or a roughness penalty (alpha > 0 or 'auto')."
            )
        elif side == "response" and self._unpenalized():
            detail = (
                f"the {self.response_grid_.size} response grid points do not "
                "determine the response basis without a penalty (alpha=0). Use a "
                "smaller n_basis or a roughness penalty (alpha > 0 or 'auto')."
            )
        elif side == "response":
            detail = (
                f"the {self.response_grid_.size} response grid points do not "
                f"determine the functions of t the roughness penalty leaves free "
                f"(polynomials of degree < penalty_order={q}), whatever alpha. Use "
                "a lower penalty_order or a response grid with more points."
            )
        elif self._design_geometry()[1] is None:  # scalar covariates
            detail = (
                f"in the functions of t the roughness penalty leaves free "
                f"(degree < penalty_order={q}) the covariates' coefficients are "
                f"unpenalized, so the intercept and the {self.n_features_in_} "
                f"covariate(s) must be linearly independent over the "
                f"{n_samples} observations, whatever alpha. Use more "
                "observations, drop collinear covariates, or penalty_order=0 "
                "(which penalizes every function of t)."
            )
        else:
            detail = (
                f"the input curves must determine the input functions the "
                f"roughness penalty leaves free (degree < penalty_order={q} in "
                f"s, together with the intercept), whatever alpha; {n_samples} "
                "curves do not. Use more curves or a lower penalty_order."
            )
        return NotIdentifiableError(
            f"{name} cannot determine its coefficient functions from {n_samples} "
            f"observations: {detail}"
        )

    @staticmethod
    def _direction_path(S, g_k, p_k, gram_s, pen_s, s_t, scale, metric, null_pen):
        """``(path, n_dropped)`` of response direction k (None when the data
        do not see it): design block penalized by ``g_k / s_t Ps + p_k Gs``
        (``null_pen`` where ``p_k = 0``), the intercept (last) unpenalized;
        the minimum-norm solution in ``metric`` where the data do not
        determine the unpenalized part (:func:`min_norm_path`)."""
        p = gram_s.shape[0]
        if p_k == 0:  # the response penalty's null space: only Ps acts
            pen = null_pen
        elif g_k <= 0:
            return None
        else:
            matrix = gram_s if pen_s is None else gram_s + g_k / s_t * pen_s.matrix
            pen = Penalty(matrix, np.zeros((p, 0)))
        return min_norm_path(g_k * S, pen.extend(1), scale, metric)

    def _store(self, basis, basis_coef, alphas, criterion, edf, best):
        """Set the fitted attributes of the solution at candidate ``best``
        (the covariance: see :attr:`coef_covariance_`)."""
        for stale in ("coef_covariance_", "_covariance_factors", "_coef_variance"):
            vars(self).pop(stale, None)
        self.n_basis_ = basis.n_basis
        self.basis_coef_ = basis_coef
        self.alpha_ = float(alphas[best])
        self.alphas_path_ = alphas
        self.criterion_path_ = criterion
        self.edf_ = float(edf[best])
        self.edf_path_ = edf
        self.intercept_function_, self.coef_function_ = self._functions(
            basis.evaluate(self.response_grid_))

    @cached_property
    def coef_covariance_(self):
        """Estimated covariance of ``basis_coef_`` flattened row-major.

        Formed on first use from small fitted factors (it has ``((p + 1)
        n_basis_)**2`` entries, more work than the rest of a fit when the
        design is an input basis) and then kept with the fitted
        attributes, so it pickles with them; a refit drops it. The fit
        already checked it (a warning where its variances overflow,
        underflow or are undefined).
        """
        factors = vars(self).get("_covariance_factors")
        if factors is None:
            raise AttributeError(
                f"This {type(self).__name__} instance is not fitted yet: "
                "coef_covariance_ is set by fit."
            )
        return coef_covariance(factors)

    # -- the response basis ----------------------------------------------------

    def _response_basis(self):
        """The response basis and the quadrature weights of the response grid."""
        if self.response_grid_.size == 1:
            return _PointBasis(self.response_grid_[0]), np.ones(1)
        basis = basis_for(self, self.response_grid_, cap=self._unpenalized())
        return basis, quadrature_weights(self.response_grid_, self.quadrature)

    def _unpenalized(self):
        """Whether alpha is fixed at 0 (then n_basis is capped by the grid)."""
        value = check_alpha(self.alpha)
        return isinstance(value, float) and value == 0

    def _evaluate(self, left, eval_points=None):
        """``left @ basis_coef_`` as functions at ``eval_points`` (rows), and Phi."""
        basis = self._response_basis()[0]
        if eval_points is None:
            eval_points = self.response_grid_
        else:
            eval_points = check_eval_points(eval_points, basis.domain)
        phi = basis.evaluate(eval_points)
        return left @ self.basis_coef_ @ phi.T, phi

    def _functions(self, phi):
        """The intercept and coefficient functions (shaped like
        ``coef_function_``) where the response basis takes the values ``phi``."""
        p1 = self.basis_coef_.shape[0]
        intercept = (np.eye(p1)[:1] @ self.basis_coef_ @ phi.T)[0]
        values = self._coef_rows() @ self.basis_coef_ @ phi.T
        return intercept, values.reshape(self._coef_shape(phi.shape[0]))

    def _coef_shape(self, n_points):
        return (-1, n_points)

    # -- public helpers --------------------------------------------------------

    def coef_functions_at(self, eval_points):
        """Intercept and coefficient functions evaluated at any points.

        Parameters
        ----------
        eval_points : array-like of shape (n_points,)
            Increasing points inside the response domain.

        Returns
        -------
        intercept : ndarray of shape (n_points,)
        coef : ndarray
            Shaped like ``coef_function_`` with ``n_points`` response points.
        """
        check_is_fitted(self)
        basis = self._response_basis()[0]
        return self._functions(basis.evaluate(check_eval_points(eval_points, basis.domain)))

    @fill_doc
    def predict(self, X, eval_points=None):
        """Predicted response curves.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Inputs as at fit: scalar covariates, or input curves on ``grid_``.
        %(eval_points_response)s

        Returns
        -------
        y_pred : ndarray of shape (n_samples, n_response_points or n_points)
            A lazy dask array when X is one.
        """
        check_is_fitted(self)
        X = self._validate_X(X, reset=False)
        if eval_points is None:
            points = self.response_grid_
            intercept, coef = self.intercept_function_, self.coef_function_
        else:
            intercept, coef = self.coef_functions_at(eval_points)
            points = np.asarray(eval_points, dtype=np.float64).ravel()
        # the intercept enters the product: float32 X gives a float32
        # prediction, centered where a large mean would cost digits
        return self._design_effect(X, coef, points, offset=intercept)

    def confidence_band(self, level=0.95, intercept=False, *, simultaneous=False,
                        n_draws=4000, random_state=None):
        """Confidence band of the coefficient functions.

        ``estimate -/+ c sd`` at every grid point, from ``coef_covariance_``
        (independent observations). Pointwise, ``c`` is the normal quantile
        ``z_{(1 + level)/2}``; simultaneous, ``c`` is the ``level`` quantile
        of ``max |f~ - f_hat| / sd`` over ``n_draws`` draws ``f~`` from the
        coefficients' normal distribution (Ruppert, Wand and Carroll, 2003),
        so that the whole function lies inside at once: each coefficient
        function separately, a coefficient surface as a whole. Both ignore
        the smoothing bias: where the function is rough they are too narrow.

        Parameters
        ----------
        level : float, default=0.95
            Coverage level, in (0, 1).
        intercept : bool, default=False
            Band of ``intercept_function_`` instead of ``coef_function_``.
        simultaneous : bool, default=False
            Whether the level holds for the whole function at once (wider)
            rather than at each point.
        n_draws : int, default=4000
            Draws for the simultaneous critical value.
        random_state : int, RandomState instance or None, default=None
            Seeds the draws (simultaneous bands only).

        Returns
        -------
        lower, upper : ndarray
            Shaped like ``coef_function_`` (or ``intercept_function_``); NaN
            when the residual degrees of freedom are exhausted.
        """
        check_is_fitted(self)
        level = check_level(level)
        p1, K = self.basis_coef_.shape
        left = np.eye(p1)[:1] if intercept else self._coef_rows()
        estimate, phi = self._evaluate(left)
        sd = np.sqrt(self._band_variance(left, phi))
        joint = self._joint_band and not intercept
        groups = [np.arange(left.shape[0])] if joint else np.arange(left.shape[0])[:, None]
        rng = check_random_state(random_state)
        crit = np.empty((left.shape[0], 1))
        for rows in groups:
            crit[rows] = critical_value(
                level, simultaneous=simultaneous, covariance=self.coef_covariance_,
                evaluate=lambda e, sub=left[rows]: sub @ e.reshape(-1, p1, K) @ phi.T,
                sd=sd[rows], n_draws=n_draws, random_state=rng)
        half = crit * sd
        shape = (self.intercept_function_ if intercept else self.coef_function_).shape
        return (estimate - half).reshape(shape), (estimate + half).reshape(shape)

    def _band_variance(self, left, phi):
        """Pointwise variance (L, m) of ``left @ basis_coef_ @ phi'``."""
        p1, K = self.basis_coef_.shape
        cov = self.coef_covariance_.reshape(p1, K, p1, K)
        inner = np.einsum("la,abcd,lc->lbd", left, cov, left, optimize=True)
        var = np.empty((left.shape[0], phi.shape[0]))
        for rows in row_blocks(left.shape[0], phi.size):
            var[rows] = np.einsum("tb,lbd,td->lt", phi, inner[rows], phi,
                                  optimize=True)
        return np.maximum(var, 0)

    def score(self, X, y, sample_weight=None):
        """Integrated R^2 of the predicted curves, ``1 - int SSE / int SST``.

        Parameters
        ----------
        X : array-like
            Inputs, as for :meth:`predict`.
        y : array-like of shape (n_samples, n_response_points)
            True response curves on ``response_grid_``.
        sample_weight : array-like of shape (n_samples,), default=None
            Weights of the curves.

        Returns
        -------
        score : float
            Quadrature-weighted R^2 (see :func:`skfunc.metrics.integrated_r2_score`);
            for a one-point response grid, the ordinary R^2.
        """
        from sklearn.metrics import r2_score

        from .metrics import integrated_r2_score

        y_pred = self.predict(X)
        y = validate_response(self, y, y_pred.shape[0], reset=False)
        if self.response_grid_.size == 1:
            return float(r2_score(y, y_pred, sample_weight=sample_weight))
        return integrated_r2_score(
            y, y_pred, grid=self.response_grid_, quadrature=self.quadrature,
            sample_weight=sample_weight,
        )


class CurveInputResponseRegressor(CurveResponseRegressor):
    """A curve-response regressor whose inputs are curves on ``grid``: its
    parameters and the validation of X."""

    _parameter_constraints = {
        **RESPONSE_PARAMETER_CONSTRAINTS,
        "grid": ["array-like", None],
    }

    def __init__(self, alpha="auto", *, criterion="gcv", basis="bspline", n_basis=None,
                 degree=3, interior_knots=None, penalty_order=2, period=None, grid=None,
                 response_grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def _validate_X(self, X, reset, **y_params):
        return validate_curves(self, X, reset=reset, **y_params)
