"""CurveSmoother: roughness-penalized smoothing of sampled curves, alpha
chosen from the data by default.

Each curve ``x`` (a row of ``X``) is replaced by the function
``f = sum_k c_k phi_k`` minimising

    (1 / sum w) sum_j w_j (x_j - f(t_j))^2 + alpha * int_0^1 (D^q f)^2 du,

with data weights ``w`` (:func:`skfunc._grid.data_weights`: the mean over
the observed points by default, quadrature weights with
``data_term="integral"``), the penalty on the domain mapped to [0, 1] and
``s = 1`` (the limit of the largest eigenvalue of the data term's Gram
matrix against the unit-domain Gram matrix, which the regressors use).
One :class:`~skfunc._penalized.SplitPath` serves every candidate alpha and
every curve, so GCV or REML cost a few matrix products: no Python loop over
curves or candidates.

Missing values (NaN) get zero weight; rows are grouped by their pattern of
missing points, with one decomposition per distinct pattern, sharing the
complete pattern's scale so that alpha means the same in every pattern.
Complete rows take the single fast path.
"""

import contextlib
import warnings
from numbers import Integral

import numpy as np
from sklearn import config_context
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.validation import _check_feature_names_in, check_is_fitted

from ._alpha import (
    ALPHA_CONSTRAINTS,
    best_index,
    candidates_for,
    check_alpha,
    gcv_criterion,
    gcv_in_data_units,
    reml_criterion,
    reml_score,
)
from ._bases import GROW_EDF_FRACTION, check_unpenalized_fit, grown_n_basis
from ._blocks import (
    apply_rows,
    block_product,
    chunked_matmul,
    compute_statistics,
    output_dtype,
    row_blocks,
    single_thread_blas_up_to,
)
from ._channels import ChannelwiseMixin
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveTransformerMixin
from ._grid import DATA_TERMS, check_grid, data_weights, quadrature_weights
from ._penalized import (
    NotIdentifiableError,
    SplitPath,
    data_exponent,
    gcv_score,
    merge,
    penalty_for,
    power_of_two,
    power_of_two_scale,
)
from ._validation import (
    BASIS_CONSTRAINTS,
    CHANNEL_N_BASIS,
    MAX_N_BASIS,
    basis_for,
    validate_curves,
)


def _check_eval_points(points):
    """Output points: finite and strictly increasing; one point is allowed."""
    out = np.array(points, dtype=np.float64, ndmin=1)
    if out.ndim == 1 and out.size == 1 and np.isfinite(out[0]):
        return out
    if out.size == 0:
        raise ValueError("eval_points must hold at least one point; got none.")
    return check_grid(out, name="eval_points")


def _products(X, first_T, second_T=None, dtype=np.float64):
    """``X @ first_T`` (then ``@ second_T``) in row chunks, and a mask of the
    rows of X that hold NaN; in float64, or with ``dtype=np.float32`` (the
    transform of float32 X) in float32 (:func:`skfunc._blocks.block_product`).

    Both products run chunk by chunk, so X is read once and the (rows, K)
    intermediate stays small. An extra column of ones in ``first_T`` gives
    each row's sum in the same pass: it is NaN exactly when the row holds a
    NaN (inf is rejected on input). A row whose sum overflows is flagged
    too and takes the careful per-pattern path, which also handles complete
    rows, so nothing is misclassified.
    """
    n, m = X.shape
    extended = np.column_stack([first_T, np.ones(m)])
    missing = np.empty(n, dtype=bool)
    first = block_product(X, extended, dtype=dtype)
    if second_T is None:
        # straight into the result, with the flag column beside it (no
        # copy of each block's product)
        out = np.empty((n, extended.shape[1]), dtype=dtype)
        for part in row_blocks(n, m):
            with np.errstate(invalid="ignore", over="ignore"):  # inf is flagged
                first(X[part], out=out[part])
            missing[part] = ~np.isfinite(out[part, -1])
        return out[:, :-1], missing
    out = np.empty((n, second_T.shape[1]), dtype=dtype)
    second_T = second_T.astype(dtype, copy=False)
    for part in row_blocks(n, m):
        with np.errstate(invalid="ignore", over="ignore"):  # inf is flagged
            coef = first(X[part])
        missing[part] = ~np.isfinite(coef[:, -1])
        np.matmul(coef[:, :-1], second_T, out=out[part])
    return out, missing


def _weighted_squares(X, w, scale=1.0):
    """``sum_j w_j (x_ij / scale)^2`` per row for a power of two ``scale``,
    in row blocks (no (n, m) temporary beyond a block; dividing first keeps
    squares of values near 1e300 finite).

    float64 rows of moderate scale are squared where they are, and the
    sums divided by ``scale**2``: the same numbers (a power of two changes
    no digit), without writing a scaled copy of each block.
    """
    out = np.empty(X.shape[0])
    exponent = int(np.frexp(scale)[1]) - 1
    in_place = getattr(X, "dtype", None) == np.float64 and abs(exponent) <= 200
    for part in row_blocks(*X.shape):
        if in_place:
            block = np.asarray(X[part])
            out[part] = np.ldexp(np.einsum("ij,ij,j->i", block, block, w), -2 * exponent)
        else:
            block = np.asarray(X[part], dtype=np.float64) / scale
            out[part] = np.einsum("ij,ij,j->i", block, block, w)
    return out


def _gcv_of(stats):
    """Pooled GCV score per candidate, of the scaled curves: the criterion
    that compares basis sizes on one batch (Ruppert 2002), whatever
    ``criterion`` chooses alpha."""
    if not stats["n_obs"]:
        return np.full(np.shape(stats["rss"]), np.inf)
    return gcv_score(stats["rss"], stats["edf"], stats["n_obs"], stats["weight"])


def _choose_rows(scores, alphas, name):
    """One alpha index per row (:func:`skfunc._alpha.best_index`); rows whose
    criterion is undefined for every candidate (too few observations for any
    fit but the interpolating one) take the largest candidate."""
    scores = np.atleast_2d(scores)
    defined = np.isfinite(scores).any(axis=1)
    out = np.full(scores.shape[0], int(np.argmax(alphas)))
    if defined.any():
        out[defined] = best_index(scores[defined], alphas, criterion=name)
    return out


class _LowOrderFit:
    """Stands in for a :class:`SplitPath` for rows whose observed values are
    too few to fix the functions the penalty leaves free.

    ``k`` observed values determine a polynomial of degree ``k - 1`` (a
    constant for the periodic Fourier basis, whose free functions are the
    constants); every alpha gives that fit, which interpolates the values
    (residual 0, ``k`` degrees of freedom, no restricted likelihood). The
    "rotated" rows it takes are the curve values themselves (zero where
    missing).
    """

    def __init__(self, problem, pattern):
        k = int(pattern.sum())
        self.degree = 0 if problem.basis.name == "fourier" else k - 1
        self.n_null = self.degree + 1
        a, b = problem.basis.domain
        u = 2 * (problem.grid - a) / (b - a) - 1
        powers = u[:, None] ** np.arange(self.degree + 1)  # (m, d + 1)
        # basis coefficients of each power (exact: the basis holds them)
        coef = np.linalg.lstsq(problem.phi, powers, rcond=None)[0]  # (K, d + 1)
        weights = problem.weights(pattern)
        # least-squares polynomial through the observed values
        fit = np.linalg.pinv(powers[pattern] * np.sqrt(weights[pattern, None]))
        self.operator = np.zeros((pattern.size, problem.phi.shape[1]))
        self.operator[pattern] = (coef @ fit * np.sqrt(weights[pattern])).T
        self.weights = weights

    def coef(self, rotated, alpha):
        return rotated @ self.operator

    def rss_reduction(self, rotated, alphas):
        """The whole weighted sum of squares: the fit leaves no residual."""
        squares = (np.asarray(rotated) ** 2) @ self.weights
        return np.repeat(squares[:, None], np.size(alphas), axis=1)

    penalized_rss_reduction = rss_reduction

    def edf(self, alphas):
        return np.full(np.shape(alphas), float(self.degree + 1))

    def log_det_ratio(self, alphas):
        return np.zeros(np.size(alphas))


class _Problem:
    """The smoothing problem on the fitted grid: basis values, data weights,
    the split penalty and its decompositions. Rebuilt on demand, never stored."""

    def __init__(self, estimator, grid, penalized):
        self.grid = grid
        self.data_term = estimator.data_term
        self.quadrature = estimator.quadrature
        self.basis = basis_for(estimator, grid, cap=not penalized)
        self.phi = self.basis.evaluate(grid)
        with single_thread_blas_up_to(self.basis.n_basis):
            self._decompose(estimator.penalty_order, penalized)

    def _decompose(self, penalty_order, penalized):
        """The split penalty and the decomposition of complete curves."""
        self.penalty = penalty_for(self.basis, penalty_order)
        # functions the penalty leaves free (0 without a penalty: then every
        # coefficient needs the data, and too few values are an error)
        self.null_dimension = self.penalty.n_null if penalized else 0
        # s = 1: the data term's Gram matrix (Phi' W Phi / sum w) tends to the
        # Gram matrix on [0, 1] as the grid fills the domain, so the engine
        # weight of alpha = 1 is the total data weight. Its largest
        # eigenvalue would estimate the same 1 but picks up the quadrature
        # error of the most oscillatory basis function (1.3x on 201 points
        # with 39 cubic B-splines, 4x on 51), which is not resolution-free.
        w = self.weights()
        self.full = self.path(w, scale=float(w.sum()))
        self.full_rotation = self.rotation(self.full, w)

    def weights(self, observed=None):
        """Data weights (:func:`skfunc._grid.data_weights`), zero where missing."""
        if self.data_term == "integral":
            w = quadrature_weights(self.grid, self.quadrature)
            return w if observed is None else w * observed
        return data_weights(self.grid, self.data_term, observed)

    def path(self, weights, scale=None):
        """Split path with data weights ``weights`` (zero = missing)."""
        phi_w = self.phi * weights[:, None]
        return SplitPath(phi_w.T @ self.phi, self.penalty, scale=scale)

    def rotation(self, path, weights):
        """Operator from curve values to rotated right-hand sides, (m, K);
        0 in the directions the data do not see (as ``SplitPath.rotate``)."""
        operator = (self.phi * weights[:, None]) @ path.eigvecs
        operator[:, path.g == 0] = 0.0
        return operator

    def blocks(self, X, rows=None, scale=1.0):
        """Rows of X (divided by ``scale``) grouped by missing-value pattern.

        Yields ``(rows, rotated, yWy, path, n_obs, total_weight)`` per group:
        row indices into X, rotated right-hand sides (len(rows), K), weighted
        sums of squares, the group's path, and the number and total weight
        of observed points. ``rows=None`` means all rows, and complete rows
        come first in one group.
        """
        if rows is None:
            w, path = self.weights(), self.full
            rotated, missing = _products(X, self.full_rotation / scale)
            complete = np.flatnonzero(~missing)
            if complete.size:
                whole = complete.size == X.shape[0]
                X_c = X if whole else X[complete]
                yield (complete, rotated if whole else rotated[complete],
                       _weighted_squares(X_c, w, scale), path, w.size, float(w.sum()))
            rows = np.flatnonzero(missing)
        if not rows.size:
            return
        flagged = X[rows]
        if np.isinf(flagged).any():
            raise ValueError(
                "Input X contains infinity; curves may hold finite values and "
                "NaN (missing) only."
            )
        observed = ~np.isnan(flagged)
        patterns, inverse = np.unique(observed, axis=0, return_inverse=True)
        null = self.null_dimension
        for p, pattern in enumerate(patterns):
            group = rows[inverse.ravel() == p]
            w_p = self.weights(pattern)
            X_p = np.where(pattern, flagged[inverse.ravel() == p], 0.0) / scale
            if pattern.sum() < null:
                low = _LowOrderFit(self, pattern)
                warnings.warn(
                    f"Row(s) {group.tolist()} of X have {int(pattern.sum())} "
                    f"observed value(s), too few to fix the {null} functions the "
                    f"roughness penalty leaves free; they get the polynomial of "
                    f"degree {low.degree} those values determine.",
                    UserWarning, stacklevel=4,
                )
                yield (group, X_p, _weighted_squares(X_p, w_p), low,
                       int(pattern.sum()), float(w_p.sum()))
                continue
            try:
                path = self.path(w_p, scale=self.full.scale)
                if null == 0:  # unpenalized: every direction needs the data
                    path.denominators(0.0)
            except NotIdentifiableError as exc:
                if null == 0:  # alpha = 0: every basis function needs the data
                    advice = "use a smaller n_basis or a roughness penalty (alpha > 0 or 'auto')"
                else:  # penalized: the values cannot fix the penalty's null space
                    advice = (f"use a lower penalty_order (its {null} unpenalized "
                              "functions need observed values spread over the domain)")
                raise ValueError(
                    f"Row {int(group[0])} of X has {int(pattern.sum())} observed "
                    f"value(s) (non-NaN), too few or too close together to "
                    f"determine a smooth curve in this basis with this penalty. "
                    f"Remove the row, fill in values, or {advice}."
                ) from exc
            yield (group, X_p @ self.rotation(path, w_p),
                   _weighted_squares(X_p, w_p), path, int(pattern.sum()),
                   float(w_p.sum()))


class PenalizedFitMixin:
    """Alpha for a basis fit of curves from additive criterion statistics:
    what :class:`CurveSmoother` and
    :class:`~skfunc.preprocessing.BasisFeatures` share.

    The estimator has the basis parameters, ``alpha``, ``criterion``,
    ``data_term``, ``quadrature`` and ``grid_``.
    """

    #: whether curves may miss values (NaN)
    _allow_nan = False

    #: whether ``n_basis=None`` with a chosen alpha may grow the basis on the
    #: first batch (:meth:`_first_batch`)
    _grows_default_basis = False

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = self._allow_nan
        return tags

    def _alpha(self):
        return check_alpha(self.alpha)

    def _validate_batch(self, X, y, sample_weight, first):
        X = validate_curves(self, X, reset=first, allow_nan=self._allow_nan)
        if first:
            vars(self).pop("_grown_n_basis", None)
            self._setup(X)
        return (X,)

    def _first_batch(self, stats, arrays):
        """Grow a default basis that limits the fit, on the first batch.

        Ruppert (2002)'s "myopic" algorithm: when the chosen fit uses nearly
        all of the basis (mean ``edf`` per curve at the chosen alpha above
        ``GROW_EDF_FRACTION`` of ``n_basis_``: the penalty then barely
        acts, so the basis size, not alpha, decides the smooth), double the
        interior knots (:func:`skfunc._bases.grown_n_basis`) and keep the
        larger basis while its smallest GCV score is lower, repeating the
        test on the kept one. Only B-splines with ``n_basis`` and
        ``interior_knots`` left at None and alpha chosen from the data; a
        fit that does not trigger costs nothing more (the test reads the
        statistics already computed). Each larger basis costs one more pass
        over the batch. The size is fixed here, before later batches'
        statistics are summed, so ``partial_fit`` decides it on its first
        batch. Needs ``n_basis_`` from ``_setup`` (CurveSmoother's).
        """
        if not (self._grows_default_basis and self.n_basis is None
                and self.interior_knots is None and self.basis == "bspline"
                and not isinstance(self._alpha(), float)):
            return stats
        n_rows = arrays[0].shape[0]
        best = np.min(_gcv_of(stats))
        while True:
            with warnings.catch_warnings():  # _solve warns about the final choice
                warnings.simplefilter("ignore")
                chosen = _choose_rows(self._scores(stats), self.alphas_path_,
                                      self.criterion.upper())[0]
            if stats["edf"][chosen] <= GROW_EDF_FRACTION * self.n_basis_ * n_rows:
                return stats
            larger = grown_n_basis(self.n_basis_, self.grid_.size, self.degree,
                                   limit=MAX_N_BASIS)
            if larger is None:
                return stats
            kept = getattr(self, "_grown_n_basis", None)
            self._resize(larger, arrays[0])
            trial = compute_statistics(self._statistics_function(), *arrays,
                                       merge=self._merge_statistics)
            score = np.min(_gcv_of(trial))
            if not score < best:  # no improvement: back to the kept basis
                self._resize(kept, arrays[0])
                return stats
            stats, best = trial, score

    def _resize(self, n_basis, X):
        """Set up anew with a grown default basis of ``n_basis`` functions
        (None: the default size); the problem of the old size is dropped."""
        if n_basis is None:
            vars(self).pop("_grown_n_basis", None)
        else:
            self._grown_n_basis = n_basis
        vars(self).get("_problem_cache", []).clear()
        self._setup(X)

    def _setup(self, X):
        """Everything that depends on the parameters and grid only."""
        self._setup_alphas(X, self._problem())

    def _setup_alphas(self, X, problem):
        """Candidates (``alphas_path_``)."""
        alpha = self._alpha()
        with single_thread_blas_up_to(problem.basis.n_basis):
            self.alphas_path_ = candidates_for(alpha, problem.full)
            if isinstance(alpha, float) and alpha == 0:
                phi_w = problem.phi * problem.weights()[:, None]
                check_unpenalized_fit(phi_w.T @ problem.phi, problem.basis.gram())

    def _problem(self):
        """The :class:`_Problem` of the parameters and ``grid_``; built once
        per batch of a fit (:meth:`_one_problem`), else anew."""
        cache = vars(self).get("_problem_cache")
        if cache:
            return cache[0]
        alpha = self._alpha()
        penalized = not isinstance(alpha, float) or alpha > 0
        problem = _Problem(self, self.grid_, penalized)
        if cache is not None:
            cache.append(problem)
        return problem

    @contextlib.contextmanager
    def _one_problem(self):
        """Within: :meth:`_problem` builds the problem once (basis values,
        penalty, decomposition: milliseconds) and every step of the fit and
        every row block reuses it; the estimator keeps no problem after."""
        if "_problem_cache" in vars(self):  # nested: the outer one owns it
            yield
            return
        self._problem_cache = []
        try:
            yield
        finally:
            del self._problem_cache

    def _partial_fit_statistics(self, *args, **kwargs):
        with self._one_problem():
            return super()._partial_fit_statistics(*args, **kwargs)

    def _statistics_function(self):
        self._problem()  # built here, before the blocks (and Dask's copies) use it
        return self._statistics

    def _solve_statistics(self):
        with self._one_problem(), single_thread_blas_up_to(self._problem().basis.n_basis):
            return super()._solve_statistics()

    def _statistics(self, X):
        """Additive criterion statistics of the curves in X, per candidate.

        Keys ``rss`` and ``pen_rss`` (weighted residual and penalized
        residual sums of squares per candidate), ``edf`` and ``logdet``
        (effective degrees of freedom and REML determinant terms per
        candidate), ``n_obs``, ``dof`` (observed points less unpenalized
        functions) and ``weight`` (total data weight): sums over curves,
        merged key by key (:func:`skfunc._penalized.merge`), in the units of
        X divided by a power of two ``2**x_exp``: each block's own
        (:func:`skfunc._penalized.data_exponent`), so no square overflows or
        underflows, and merging brings blocks and batches of any magnitudes
        to the largest exactly.
        """
        alphas = self.alphas_path_
        zeros = np.zeros(alphas.size)
        x_exp = data_exponent(X)
        stats = [{"rss": zeros, "pen_rss": zeros, "edf": zeros, "logdet": zeros,
                  "n_obs": 0, "dof": 0, "weight": 0.0}]
        for rows, rotated, yy, path, n_obs, weight in self._problem().blocks(
                X, scale=power_of_two(x_exp)):
            # the reductions are quadratic in each rotated column, so their
            # sums over rows are the reductions of the column norms
            norms = np.linalg.norm(rotated, axis=0)[None]
            penalized = alphas > 0
            pen_rss = np.zeros(alphas.size)
            logdet = np.zeros(alphas.size)
            if penalized.all():
                pen_rss = yy.sum() - path.penalized_rss_reduction(norms, alphas)[0]
                logdet = rows.size * path.log_det_ratio(alphas)
            stats.append({
                "rss": np.maximum(yy.sum() - path.rss_reduction(norms, alphas)[0], 0.0),
                "pen_rss": np.maximum(pen_rss, 0.0),
                "edf": rows.size * path.edf(alphas),
                "logdet": logdet,
                "n_obs": rows.size * n_obs,
                "dof": rows.size * (n_obs - path.n_null),
                "weight": rows.size * weight,
            })
        return dict(merge(*stats), x_exp=x_exp, y_exp=0)

    def _scores(self, stats, data_units=False):
        """The pooled criterion per candidate, of the scaled curves (the
        statistics are of X divided by ``2**x_exp``) or, with
        ``data_units``, of X itself."""
        x_exp = stats.get("x_exp", 0) if data_units else 0
        if self.criterion == "reml":
            return reml_score(stats["pen_rss"], stats["dof"], stats["logdet"],
                              log_scale=2 * x_exp * np.log(2.0))
        scores = _gcv_of(stats)
        return gcv_in_data_units(scores, x_exp) if data_units else scores

    def _choose(self, stats):
        """Set ``alpha_``, ``criterion_path_``, ``edf_path_`` and ``edf_``
        from pooled statistics; return the problem and the operator
        ``(G + lam P)^{-1}`` at ``alpha_`` for complete curves."""
        alphas = self.alphas_path_
        if isinstance(self._alpha(), float):
            self.criterion_path_ = None
            self.alpha_ = float(alphas[0])
        else:
            best = _choose_rows(self._scores(stats), alphas, self.criterion.upper())
            self.alpha_ = float(alphas[best[0]])
            self.criterion_path_ = self._scores(stats, data_units=True)
        problem = self._problem()
        path = problem.full
        self.edf_path_ = path.edf(alphas)
        self.edf_ = float(path.edf(self.alpha_))
        try:
            operator = path.operator(self.alpha_)
        except NotIdentifiableError as exc:
            raise ValueError(
                f"alpha=0 (no penalty) leaves coefficients undetermined on this "
                f"grid: {problem.basis.n_basis} basis functions for "
                f"{self.grid_.size} points. Use a smaller n_basis or alpha > 0 "
                "(or 'auto')."
            ) from exc
        return problem, operator


@fill_doc
class CurveSmoother(ChannelwiseMixin, PenalizedFitMixin, AdditiveTransformerMixin,
                    TransformerMixin, BaseEstimator):
    """Smooth sampled curves with a roughness penalty chosen from the data.

    Each row of ``X`` is a curve sampled on a grid, possibly with missing
    values (NaN). It is replaced by the function ``f`` in a basis (B-splines,
    Fourier or Legendre polynomials) that minimises the penalized criterion

    ``(1 / sum w) sum_j w_j (x_j - f(t_j))^2 + alpha * int_0^1 (D^q f)^2 du``

    with data weights ``w_j`` (``data_term``), ``q = penalty_order`` and the
    penalty on the domain mapped to [0, 1] (``u = (t - t_0) / L``), and
    ``f`` (or its derivative of order ``derivative``) is returned on
    ``eval_points``. The same alpha gives the same smooth whatever the
    grid's unit or origin, the data's scale or the number of grid points.

    By default alpha is chosen from the training curves (``alpha="auto"``)
    by generalized cross-validation or REML, pooled over the curves at fit,
    or, with ``per_curve=True``, for each curve at transform time; a number
    fixes it (a hyperparameter to tune in, for example, ``GridSearchCV``).

    Parameters
    ----------
    %(alpha)s
    per_curve : bool, default=False
        When alpha is not fixed, choose it for each curve separately at
        transform time (among ``alphas_path_``) instead of once at fit.
    data_term : {"mean", "integral"}, default="mean"
        ``"mean"``: the mean squared error over the observed points (noise
        of the same variance at every observation, the usual measurement
        model, and what GCV assumes). ``"integral"``: quadrature weights,
        so the data term approximates ``int (x - f)^2`` (for curves known as
        functions; noise then effectively weighs less where points are
        dense).
    %(basis)s
    %(period)s
    derivative : int, default=0
        Order of the derivative of the smoothed curve that :meth:`transform`
        returns (1 for rates, such as a cooling rate in degrees per unit of
        the grid). At most the basis' smoothness (the degree for B-splines).
        Knots at every interior grid point (``interior_knots``) with
        ``degree=3`` and ``penalty_order=2`` give the cubic smoothing spline.
    eval_points : array-like of shape (n_outputs,), default=None
        Points at which :meth:`transform` evaluates the smoothed curves
        (resampling); strictly increasing and inside the fitted grid's
        domain. None means the fitted grid.
    %(grid_channels)s
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule of the weights with ``data_term="integral"``.

    Attributes
    ----------
    eval_points_ : ndarray of shape (n_outputs,)
        Points at which :meth:`transform` evaluates the curves.
    n_basis_ : int
        Number of basis functions: with ``n_basis=None``, the default or the
        larger basis the fit chose (Notes).
    %(alpha_attributes)s
    edf_ : float
        Effective degrees of freedom (trace of the hat matrix) of the smoother
        at ``alpha_`` for a complete curve on ``grid_``.
    projection_ : ndarray of shape (n_basis_, n_features)
        Linear operator from a complete curve's values to the basis
        coefficients of its smooth at ``alpha_``.
    evaluation_ : ndarray of shape (n_outputs, n_basis_)
        Values (or derivatives of order ``derivative``) of the basis
        functions at ``eval_points_``.
    %(n_samples_seen)s
    %(channelwise_attributes)s
    %(curve_input_attributes)s

    See Also
    --------
    skfunc.preprocessing.BasisFeatures : Basis coordinates of the curves
        instead of curve values.
    scipy.interpolate.make_smoothing_spline : Cubic smoothing spline of one
        curve, with its own GCV.

    Notes
    -----
    All candidate alphas and all curves share one decomposition of the
    penalized problem (Demmler and Reinsch, 1975) per pattern of missing
    values, in the basis split into the penalty's null space and its
    complement, so the null space (straight lines for ``penalty_order=2``)
    is exactly unpenalized and criteria for ``n`` curves of ``m`` points
    with ``K`` basis functions and ``L`` candidates cost ``O(n m K + n K L)``.

    The GCV score of a candidate is ``(RSS / sum w) / (1 - edf / m)^2``
    with the weighted residual sum of squares ``RSS`` and the trace ``edf``
    of the hat matrix (Craven and Wahba, 1979); pooled over curves, ``RSS``,
    ``edf``, ``m`` and ``sum w`` are sums over the curves. REML pools the
    restricted likelihoods of the curves with one noise variance. Where a
    curve's criterion is undefined for every candidate (no more
    observations than unpenalized functions), the largest candidate is
    used. A choice at an end of the candidates warns
    (:class:`skfunc._alpha.AlphaAtEdgeWarning`).

    A missing value (NaN) is an unobserved point: it gets zero weight and the
    smooth there follows the neighbouring observations and the penalty
    (linearly across long gaps and beyond the last observation, for
    ``penalty_order=2``).

    With ``n_basis=None`` the fit starts from at most 39 cubic B-splines (35
    interior knots; :doc:`/bases_and_penalties`). Long records with fine
    structure may need more, and then the basis, not alpha, limits the
    smooth: the chosen alpha gives nearly the unpenalized fit. So when
    alpha is chosen from the data, a default B-spline basis grows, following
    the "myopic" rule of Ruppert (2002): if the mean effective degrees of
    freedom per training curve at the chosen alpha exceed 0.9 of the basis
    size, the interior knots double (at most one knot per four grid points),
    and the larger basis is kept while its smallest pooled GCV score is lower
    (GCV also with ``criterion="reml"``: restricted likelihoods of different
    bases are not compared). ``n_basis_`` reports the size used. Smooth
    curves choose far fewer degrees of freedom than the basis holds and
    never try a larger one, so their fit costs nothing more; each larger
    basis tried costs one more pass over the curves. The size is decided on
    the first batch (``fit``'s curves, ``partial_fit``'s first call, a Dask
    array as a whole), because later batches' statistics must be summed in
    a fixed basis. An explicit ``n_basis`` or ``interior_knots``, a fixed
    alpha and the other bases are never changed. A trigger needs a basis
    that partly follows the curves: where the default basis cannot follow
    them at all (many more cycles than knots), GCV sees noise, chooses a
    nearly straight line, and an explicit larger ``n_basis`` is the remedy.

    On the open PigCVP set (2,000 points of a pressure signal per curve)
    the default basis of 39 functions chose ``edf_`` 38.7 and removed a
    residual of root mean square 1.34 from curves whose values vary by
    1.55 (standard deviation within a curve), detail a classifier used:
    ``CurveSmoother()``, ``StandardScaler()`` and ``LogisticRegression()``
    scored 0.082 against 0.096 on the raw values. The grown default uses
    504 functions (``edf_`` 498.5) and scores 0.101. The smoothed values
    keep the scale of the raw ones, so a model downstream needs no
    rescaling that the raw values would not need (:doc:`/open_data`).

    %(cautions)s

    References
    ----------
    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

    Demmler, A. and Reinsch, C. (1975). Oscillation matrices with spline
    smoothing. *Numerische Mathematik* 24, 375-382.

    Wood, S. N. (2011). Fast stable restricted maximum likelihood and
    marginal likelihood estimation of semiparametric generalized linear
    models. *Journal of the Royal Statistical Society, Series B* 73(1), 3-36.

    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 5. Springer.

    Ruppert, D. (2002). Selecting the number of knots for penalized splines.
    *Journal of Computational and Graphical Statistics* 11(4), 735-757.

    Examples
    --------
    An invented kiln firing log: one reading a minute over 10 hours, with
    thermocouple noise and a drop-out.

    >>> import numpy as np
    >>> from skfunc.preprocessing import CurveSmoother
    >>> t = np.linspace(0, 10, 601)                        # hours
    >>> profile = 20 + 1180 * np.sin(np.pi * t / 10) ** 2  # degrees C
    >>> rng = np.random.default_rng(0)
    >>> X = profile + rng.normal(scale=5.0, size=(4, t.size))
    >>> X[0, 100:110] = np.nan                              # missing readings
    >>> smoother = CurveSmoother(grid=t).fit(X)
    >>> smoother.transform(X).shape
    (4, 601)

    The cooling rate at 7.5 h (degrees C per hour) against the true one:

    >>> rates = CurveSmoother(grid=t, derivative=1, eval_points=[7.5]).fit(X)
    >>> np.round(rates.transform(X) / (-118 * np.pi), 1)
    array([[1.],
           [1.],
           [1.],
           [1.]])
    >>> rates.alpha_ == smoother.alpha_  # chosen on the training curves
    True
    """

    #: fit runs on skfunc._dask.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    #: with channels, these may be mappings {channel: value}
    _channel_params = ("n_basis", "eval_points", "interior_knots")

    #: missing values are filled in
    _allow_nan = True

    #: n_basis=None grows a basis the fit finds too small
    _grows_default_basis = True

    _parameter_constraints = {
        **BASIS_CONSTRAINTS,
        **CHANNEL_N_BASIS,
        **ALPHA_CONSTRAINTS,
        "per_curve": ["boolean"],
        "data_term": [StrOptions(set(DATA_TERMS))],
        "derivative": [Interval(Integral, 0, None, closed="left")],
        "eval_points": ["array-like", None],
    }

    def __init__(self, alpha="auto", *, criterion="gcv", per_curve=False,
                 data_term="mean", basis="bspline", n_basis=None, degree=3,
                 interior_knots=None, penalty_order=2, period=None, derivative=0,
                 eval_points=None, grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    # -- fitting: grid-only setup, additive statistics, solve ----------------

    def _setup(self, X):
        """Everything that depends on the parameters and grid only."""
        alpha = self._alpha()
        if self.per_curve and isinstance(alpha, float):
            raise ValueError(
                f"per_curve=True chooses alpha for each curve and needs alpha="
                f'"auto" or candidates; got alpha={self.alpha!r}. Use alpha="auto" '
                "or per_curve=False."
            )
        problem = self._problem()
        basis = problem.basis
        if self.eval_points is None:
            self.eval_points_ = self.grid_.copy()
        else:
            out = _check_eval_points(self.eval_points)
            a, b = basis.domain
            tol = 1e-12 * max(1.0, abs(a), abs(b))
            if out[0] < a - tol or out[-1] > b + tol:
                raise ValueError(
                    f"eval_points must lie inside the fitted grid's domain "
                    f"[{a}, {b}]; got points in [{out[0]}, {out[-1]}]. "
                    "Extrapolation is not supported."
                )
            self.eval_points_ = out
        self.evaluation_ = basis.evaluate(self.eval_points_, self.derivative)
        self.n_basis_ = basis.n_basis
        self._setup_alphas(X, problem)

    def _solve(self, stats):
        """Choose alpha from pooled statistics and build the operator."""
        problem, operator = self._choose(stats)
        self.projection_ = operator @ (problem.phi * problem.weights()[:, None]).T
        return self

    # -- transforming --------------------------------------------------------

    def transform(self, X):
        """Smoothed curves (or their derivatives) on ``eval_points_``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves on the fitted grid; NaN marks a missing value.

        Returns
        -------
        X_smooth : ndarray of shape (n_samples, n_outputs)
            A lazy dask array when X is one.
        """
        check_is_fitted(self)
        if hasattr(self, "channel_estimators_"):
            return self._per_channel(X, "transform")
        X = self._validate_fast(X)
        return apply_rows(self._smooth, X, self.evaluation_.shape[0], dtype=output_dtype(X))

    def _smooth(self, X):
        """The smoothed curves of validated in-memory rows."""
        if self.per_curve:
            return chunked_matmul(self._per_curve(X)[0], self.evaluation_.T,
                                  dtype=output_dtype(X))
        out, missing = _products(X, self.projection_.T, self.evaluation_.T,
                                 output_dtype(X))
        if missing.any():
            rows = np.flatnonzero(missing)
            scale = power_of_two_scale(X[rows])
            for group, rotated, _, path, _, _ in self._problem().blocks(X, rows, scale):
                out[group] = (path.coef(rotated, self.alpha_) @ self.evaluation_.T) * scale
        return out

    def choose_alphas(self, X):
        """The alpha the criterion chooses for each curve among ``alphas_path_``.

        This is the choice :meth:`transform` uses with ``per_curve=True``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves, as for :meth:`transform`.

        Returns
        -------
        alphas : ndarray of shape (n_samples,) or (n_samples, n_channels)
            A lazy dask array when X is one; with channels, one column per
            channel.
        """
        check_is_fitted(self)
        if hasattr(self, "channel_estimators_"):
            return self._per_channel(X, "choose_alphas", columns=True)
        return apply_rows(self._chosen_alphas, self._validate_fast(X))

    def _chosen_alphas(self, X):
        return self._per_curve(X)[1]

    def _validate_fast(self, X):
        """Validate curves at transform time without a separate pass for inf.

        The products in :func:`_products` flag every row with a non-finite
        value in the same pass over X, and :meth:`_Problem.blocks` rejects
        inf among those rows, so scikit-learn's own finiteness scan would
        only read X once more.
        """
        with config_context(assume_finite=True):
            return validate_curves(self, X, reset=False, allow_nan=True)

    def _per_curve(self, X):
        """Basis coefficients (n, K) and alphas (n,) chosen curve by curve."""
        coef = np.empty((X.shape[0], self.n_basis_))
        chosen = np.empty(X.shape[0])
        alphas = self.alphas_path_
        scale = power_of_two_scale(X)
        for rows, rotated, yy, path, n_obs, weight in self._problem().blocks(X, scale=scale):
            if self.criterion == "reml":
                scores = reml_criterion(path, rotated, yy, n_obs, alphas)
            else:
                scores = gcv_criterion(path, rotated, yy, n_obs, alphas,
                                       total_weight=weight)
            chosen[rows] = alphas[_choose_rows(scores, alphas, self.criterion.upper())]
            coef[rows] = path.coef(rotated, chosen[rows]) * scale
        return coef, chosen

    def get_feature_names_out(self, input_features=None):
        """Names of the output columns: the output grid points.

        The input feature names when the output grid is the fitted grid and
        X had string column names; otherwise each point of ``eval_points_``
        written as a number, so that a DataFrame output carries its grid in
        its column labels.

        Parameters
        ----------
        input_features : array-like of str or None, default=None
            Input feature names, validated against ``feature_names_in_``.

        Returns
        -------
        feature_names_out : ndarray of str objects
        """
        check_is_fitted(self)
        if hasattr(self, "channel_estimators_"):
            return self._channel_feature_names(input_features)
        names = _check_feature_names_in(self, input_features, generate_names=False)
        if self.eval_points is None and names is not None:
            return np.asarray(names, dtype=object)
        return np.asarray([repr(float(t)) for t in self.eval_points_], dtype=object)
