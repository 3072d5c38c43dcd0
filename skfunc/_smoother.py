"""CurveSmoother: roughness-penalized smoothing of sampled curves, with GCV.

Each curve ``x`` (a row of ``X``) is replaced by the function
``f = sum_k c_k phi_k`` minimising

    sum_j w_j (x_j - f(t_j))^2 + alpha int (D^q f)^2,

with quadrature weights ``w`` (trapezoid by default), so ``alpha`` means the same thing
whatever the number or spacing of the grid points. One simultaneous
diagonalisation of the problem (:class:`~skfunc._penalized.PenalizedPath`)
serves every candidate alpha and every curve, so generalised cross-validation
costs a few matrix products: no Python loop over curves or candidates.

Missing values (NaN) get zero weight; rows are grouped by their pattern of
missing points, with one diagonalisation per distinct pattern. Complete rows
take the single fast path.
"""

import warnings
from numbers import Integral, Real

import numpy as np
from scipy.linalg import eigh
from sklearn import config_context
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.validation import _check_feature_names_in, check_is_fitted

from ._blocks import apply_rows, chunked_matmul, row_blocks
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveTransformerMixin
from ._grid import check_grid, quadrature_weights
from ._penalized import NotIdentifiableError, PenalizedPath, gcv_score, merge
from ._validation import BASIS_CONSTRAINTS, basis_for, validate_curves

#: default number of candidate alphas for GCV
N_ALPHAS = 25


def _unpenalized_dimension(basis, order):
    """Dimension of the functions in ``basis`` that ``D^order`` annihilates.

    Polynomials of degree below ``order`` (B-splines, Legendre polynomials);
    the constants for the periodic Fourier basis.
    """
    if order == 0:
        return 0
    return 1 if basis.name == "fourier" else min(order, basis.n_basis)


def _roughness(basis, order):
    """The exact roughness matrix of ``basis`` for derivative ``order``.

    A single polynomial piece of degree below ``order`` (what the adaptive
    ``n_basis=None`` gives on grids of fewer than ``degree + 1`` points) has
    ``D^order f = 0``: its roughness matrix is zero.
    """
    single_piece = getattr(basis, "degree", None) == basis.n_basis - 1
    if single_piece and order > basis.degree:
        return np.zeros((basis.n_basis, basis.n_basis))
    return basis.penalty(order)


def default_alphas(basis, order, n_alphas=N_ALPHAS):
    """Log-spaced candidate alphas spanning rough to smooth, from the basis alone.

    With ``rho`` the eigenvalues of the exact roughness matrix relative to the
    exact Gram matrix, the penalty halves the weight of eigenfunction ``k`` at
    ``alpha = 1 / rho_k``. Candidates run from ``0.01 / max(rho)`` (almost no
    smoothing) to ``100 / min(rho > 0)`` (almost only the unpenalized
    functions, e.g. a straight line for ``order=2``). They depend on the
    basis and domain, not on the grid, so they are resolution-invariant.
    """
    rho = eigh(_roughness(basis, order), basis.gram(), eigvals_only=True)
    null = _unpenalized_dimension(basis, order)
    if null >= rho.size or rho[-1] <= 0:
        low, high = 1e-2, 1e2  # nothing is penalized: every alpha fits alike
    else:
        low, high = 1e-2 / rho[-1], 1e2 / rho[null]
    return np.logspace(np.log10(low), np.log10(high), n_alphas)


def _check_eval_points(points):
    """Output points: finite and strictly increasing; one point is allowed."""
    out = np.array(points, dtype=np.float64, ndmin=1)
    if out.ndim == 1 and out.size == 1 and np.isfinite(out[0]):
        return out
    if out.size == 0:
        raise ValueError("eval_points must hold at least one point; got none.")
    return check_grid(out, name="eval_points")


def _products(X, first_T, second_T=None):
    """``X @ first_T`` (then ``@ second_T``) in row chunks, and a mask of the
    rows of X that hold NaN.

    Both products run chunk by chunk, so X is read once and the (rows, K)
    intermediate stays small. An extra column of ones in ``first_T`` gives
    each row's sum in the same pass: it is NaN exactly when the row holds a
    NaN (inf is rejected on input). A row whose sum overflows is flagged
    too and takes the careful per-pattern path, which also handles complete
    rows, so nothing is misclassified.
    """
    n, m = X.shape
    extended = np.column_stack([first_T, np.ones(m)])
    width = first_T.shape[1] if second_T is None else second_T.shape[1]
    out = np.empty((n, width))
    missing = np.empty(n, dtype=bool)
    for part in row_blocks(n, m):
        with np.errstate(invalid="ignore", over="ignore"):  # inf is flagged
            coef = np.asarray(X[part], dtype=np.float64) @ extended
        missing[part] = ~np.isfinite(coef[:, -1])
        if second_T is None:
            out[part] = coef[:, :-1]
        else:
            np.matmul(coef[:, :-1], second_T, out=out[part])
    return out, missing


def _weighted_squares(X, w):
    """``sum_j w_j x_ij^2`` per row, without an (n, m) temporary."""
    return np.einsum("ij,ij,j->i", X, X, w)


def _gcv_choice(scores, alphas):
    """Index of the GCV minimum per row; the largest alpha where GCV is
    undefined for every candidate (too few observations for any fit)."""
    best = np.argmin(scores, axis=-1)
    undefined = ~np.isfinite(np.min(scores, axis=-1))
    return np.where(undefined, int(np.argmax(alphas)), best)


class _LowOrderFit:
    """Stands in for a :class:`PenalizedPath` for rows whose observed values
    are too few to fix the functions the penalty leaves free.

    ``k`` observed values determine a polynomial of degree ``k - 1`` (a
    constant for the periodic Fourier basis, whose free functions are the
    constants); every alpha gives that fit, which interpolates the values
    (residual 0, ``k`` degrees of freedom). The "rotated" rows it takes are
    the curve values themselves (zero where missing).
    """

    def __init__(self, problem, pattern):
        k = int(pattern.sum())
        self.degree = 0 if problem.basis.name == "fourier" else k - 1
        a, b = problem.basis.domain
        u = 2 * (problem.grid - a) / (b - a) - 1
        powers = u[:, None] ** np.arange(self.degree + 1)  # (m, d + 1)
        # basis coefficients of each power (exact: the basis holds them)
        coef = np.linalg.lstsq(problem.phi, powers, rcond=None)[0]  # (K, d + 1)
        # least-squares polynomial through the observed values
        fit = np.linalg.pinv(powers[pattern] * np.sqrt(problem.weights[pattern, None]))
        self.operator = np.zeros((pattern.size, problem.phi.shape[1]))
        self.operator[pattern] = (coef @ fit * np.sqrt(problem.weights[pattern])).T
        self.weights = problem.weights * pattern
        self.n_obs = k

    def coef(self, rotated, alpha):
        return rotated @ self.operator

    def rss_reduction(self, rotated, alphas):
        """The whole weighted sum of squares: the fit leaves no residual."""
        squares = (np.asarray(rotated) ** 2) @ self.weights
        return np.repeat(squares[:, None], np.size(alphas), axis=1)

    def edf(self, alphas):
        return np.full(np.shape(alphas), float(self.degree + 1))


class _Problem:
    """The smoothing problem on the fitted grid: basis values, weights,
    penalty and their diagonalisations. Rebuilt on demand, never stored."""

    def __init__(self, estimator, grid, penalized):
        self.grid = grid
        self.basis = basis_for(estimator, grid, cap=not penalized)
        self.weights = quadrature_weights(grid, estimator.quadrature)
        self.phi = self.basis.evaluate(grid)
        self.penalty = (
            _roughness(self.basis, estimator.penalty_order) if penalized else None
        )
        # functions the penalty leaves free (0 without a penalty: then every
        # coefficient needs the data, and too few values are an error)
        self.null_dimension = (
            _unpenalized_dimension(self.basis, estimator.penalty_order)
            if penalized else 0
        )

    def path(self, weights):
        """Diagonalised problem with data weights ``weights`` (zero = missing)."""
        phi_w = self.phi * weights[:, None]
        return PenalizedPath(phi_w.T @ self.phi, self.penalty)

    def rotation(self, path, weights):
        """Operator from curve values to rotated right-hand sides, (m, K)."""
        return (self.phi * weights[:, None]) @ path.eigvecs

    def blocks(self, X, rows=None):
        """Rows of X grouped by missing-value pattern.

        Yields ``(rows, rotated, yWy, path, n_obs, total_weight)`` per group:
        row indices into X, rotated right-hand sides (len(rows), K), weighted
        sums of squares, the group's :class:`PenalizedPath`, and the number
        and total weight of observed points. ``rows=None`` means all rows,
        and complete rows come first in one group.
        """
        w = self.weights
        if rows is None:
            path = self.path(w)
            rotated, missing = _products(X, self.rotation(path, w))
            complete = np.flatnonzero(~missing)
            if complete.size:
                whole = complete.size == X.shape[0]
                X_c = X if whole else X[complete]
                yield (complete, rotated if whole else rotated[complete],
                       _weighted_squares(X_c, w), path, w.size, float(w.sum()))
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
            w_p = w * pattern
            X_p = np.where(pattern, flagged[inverse.ravel() == p], 0.0)
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
                path = self.path(w_p)
            except NotIdentifiableError as exc:
                raise ValueError(
                    f"Row {int(group[0])} of X has {int(pattern.sum())} observed "
                    f"value(s) (non-NaN), too few to determine a smooth curve in "
                    f"this basis with this penalty. Remove the row, fill in "
                    f"values, or use a smaller n_basis or a positive alpha."
                ) from exc
            yield (group, X_p @ self.rotation(path, w_p),
                   _weighted_squares(X_p, w_p), path, int(pattern.sum()),
                   float(w_p.sum()))


@fill_doc
class CurveSmoother(AdditiveTransformerMixin, TransformerMixin, BaseEstimator):
    """Smooth sampled curves with a roughness penalty chosen by GCV or given.

    Each row of ``X`` is a curve sampled on a grid, possibly with missing
    values (NaN). It is replaced by the function ``f`` in a basis (B-splines,
    Fourier or Legendre polynomials) that minimises the penalized criterion

    ``sum_j w_j (x_j - f(t_j))^2 + alpha * int (D^q f)^2``,

    with quadrature weights ``w_j`` (``quadrature``) and ``q = penalty_order``, and
    ``f`` (or its derivative of order ``derivative``) is returned on
    ``eval_points``. The data term approximates ``int (x - f)^2``, so
    ``alpha`` means the same thing whatever the number or spacing of the
    grid points, and results agree across samplings of the same curves.

    ``alpha`` is either fixed (a hyperparameter to tune in, for example,
    ``GridSearchCV``) or ``"gcv"``: chosen among ``alphas`` by generalized
    cross-validation, once for all curves at fit (pooled over the training
    curves) or, with ``per_curve=True``, for each curve at transform time.

    Parameters
    ----------
    alpha : float >= 0 or "gcv", default="gcv"
        Weight of the roughness penalty, or ``"gcv"`` to choose it from
        ``alphas`` by generalized cross-validation. 0 means least squares
        without a penalty.
    alphas : array-like of shape (n_alphas,) or int, default=None
        Positive candidate alphas for ``alpha="gcv"``; an int asks for that
        many default candidates. None means 25 log-spaced candidates scaled
        to the basis and domain (from nearly no smoothing to nearly only the
        unpenalized functions; see Notes). Unused with a fixed alpha.
    per_curve : bool, default=False
        With ``alpha="gcv"``, choose alpha for each curve separately at
        transform time instead of once at fit.
    %(basis)s
    derivative : int, default=0
        Order of the derivative of the smoothed curve that :meth:`transform`
        returns (1 for rates, such as a cooling rate in degrees per unit of
        the grid). At most the basis' smoothness (the degree for B-splines).
    eval_points : array-like of shape (n_outputs,), default=None
        Points at which :meth:`transform` evaluates the smoothed curves
        (resampling); strictly increasing and inside the fitted grid's
        domain. None means the fitted grid.
    %(grid)s
    %(quadrature)s

    Attributes
    ----------
    grid_ : ndarray of shape (n_features,)
        The grid used at fit.
    eval_points_ : ndarray of shape (n_outputs,)
        Points at which :meth:`transform` evaluates the curves.
    n_basis_ : int
        Number of basis functions.
    alphas_ : ndarray of shape (n_alphas,)
        Candidate alphas; with a fixed ``alpha``, the array ``[alpha]``.
    criterion_ : ndarray of shape (n_alphas,)
        GCV score of each candidate, pooled over the training curves (lower
        is better; inf where undefined). Plot it against ``alphas_`` to see
        the choice.
    alpha_ : float
        The alpha used by :meth:`transform` for every curve: the GCV choice
        (the minimiser of ``criterion_``) or the given alpha. With
        ``per_curve=True`` it is only the pooled choice; :meth:`transform`
        uses :meth:`choose_alphas` instead.
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
    %(curve_input_attributes)s

    See Also
    --------
    skfunc.preprocessing.BasisFeatures : Basis coordinates of the curves
        instead of curve values.
    scipy.interpolate.make_smoothing_spline : Cubic smoothing spline of one
        curve, with its own GCV.

    Notes
    -----
    Interior knots at every interior grid point with ``degree=3`` and
    ``penalty_order=2`` give the cubic smoothing spline.

    All candidate alphas and all curves share one simultaneous
    diagonalisation of the penalized problem (Demmler and Reinsch, 1975) per
    pattern of missing values, so GCV for ``n`` curves of ``m`` points with
    ``K`` basis functions and ``L`` candidates costs ``O(n m K + n K L)``.

    The GCV score of a candidate is
    ``(RSS / sum w) / (1 - edf / m)^2`` with the weighted residual sum of
    squares ``RSS`` and the trace ``edf`` of the hat matrix (Craven and
    Wahba, 1979); pooled over curves, ``RSS``, ``edf``, ``m`` and ``sum w``
    are sums over the curves. Where every candidate's score is undefined
    (a curve with no more observations than unpenalized functions), the
    largest candidate is used.

    Default candidates: with ``rho`` the eigenvalues of the roughness
    matrix relative to the Gram matrix of the basis, 25 log-spaced values
    from ``0.01 / max(rho)`` to ``100 / min(rho > 0)``.

    A missing value (NaN) is an unobserved point: it gets zero weight and the
    smooth there follows the neighbouring observations and the penalty
    (linearly across long gaps and beyond the last observation, for
    ``penalty_order=2``).

    Smoothed values and especially derivatives are estimates; validate them
    on your own process data before they drive a quality or safety decision,
    and follow the applicable standards and qualified practice.

    References
    ----------
    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

    Demmler, A. and Reinsch, C. (1975). Oscillation matrices with spline
    smoothing. *Numerische Mathematik* 24, 375-382.

    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 5. Springer.

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
    >>> rates.alpha_ == smoother.alpha_  # chosen by GCV on the training curves
    True
    """

    #: fit runs on skfunc._dask.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    _parameter_constraints = {
        **BASIS_CONSTRAINTS,
        "alpha": [Interval(Real, 0, None, closed="left"), StrOptions({"gcv"})],
        "alphas": ["array-like", Interval(Integral, 1, None, closed="left"), None],
        "per_curve": ["boolean"],
        "derivative": [Interval(Integral, 0, None, closed="left")],
        "eval_points": ["array-like", None],
    }

    def __init__(self, alpha="gcv", *, alphas=None, per_curve=False, basis="bspline",
                 n_basis=None, degree=3, interior_knots=None, penalty_order=2,
                 derivative=0, eval_points=None, grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = True
        return tags

    # -- fitting: grid-only setup, additive statistics, solve ----------------

    def _validate_batch(self, X, y, sample_weight, first):
        X = validate_curves(self, X, reset=first, allow_nan=True)
        if first:
            self._setup()
        return (X,)

    def _setup(self):
        """Everything that depends on the parameters and grid only."""
        if self.per_curve and self.alpha != "gcv":
            raise ValueError(
                f"per_curve=True chooses alpha for each curve by GCV and needs "
                f'alpha="gcv"; got alpha={self.alpha!r}. Use alpha="gcv" or '
                "per_curve=False."
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
        self.alphas_ = self._candidates(basis)

    def _candidates(self, basis):
        if self.alpha != "gcv":
            return np.array([float(self.alpha)])
        if self.alphas is None or isinstance(self.alphas, Integral):
            return default_alphas(basis, self.penalty_order, self.alphas or N_ALPHAS)
        alphas = np.asarray(self.alphas, dtype=np.float64)
        if alphas.ndim != 1 or alphas.size == 0 or not np.all(np.isfinite(alphas)):
            raise ValueError(
                "alphas must be a non-empty 1-D array of finite positive "
                f"numbers, an int, or None; got {self.alphas!r}."
            )
        if np.any(alphas <= 0):
            raise ValueError(
                "alphas must all be positive (candidate roughness penalties); "
                f"got {alphas[alphas <= 0].tolist()}."
            )
        return alphas

    def _problem(self):
        penalized = self.alpha == "gcv" or self.alpha > 0
        return _Problem(self, self.grid_, penalized)

    def _statistics(self, X):
        """Additive GCV statistics of the curves in X, for every candidate.

        Keys ``rss``, ``edf`` (weighted residual sums of squares and effective
        degrees of freedom per candidate, summed over curves), ``n_obs`` and
        ``weight`` (observed points and their total weight): sums over
        curves, merged key by key (:func:`skfunc._penalized.merge`).
        """
        zeros = np.zeros(self.alphas_.size)
        stats = [{"rss": zeros, "edf": zeros, "n_obs": 0, "weight": 0.0}]
        for rows, rotated, yy, path, n_obs, weight in self._problem().blocks(X):
            # the reduction is quadratic in each rotated column, so its sum
            # over rows is the reduction of the column norms
            norms = np.linalg.norm(rotated, axis=0)[None]
            reduction = path.rss_reduction(norms, self.alphas_)[0]
            stats.append({
                "rss": np.maximum(yy.sum() - reduction, 0.0),
                "edf": rows.size * path.edf(self.alphas_),
                "n_obs": rows.size * n_obs,
                "weight": rows.size * weight,
            })
        return merge(*stats)

    def _solve(self, stats):
        """Choose alpha from pooled statistics and build the operators."""
        if stats["n_obs"]:
            self.criterion_ = gcv_score(
                stats["rss"], stats["edf"], stats["n_obs"], stats["weight"]
            )
        else:
            self.criterion_ = np.full(self.alphas_.size, np.inf)
        best = _gcv_choice(self.criterion_, self.alphas_)
        self.alpha_ = float(self.alphas_[best])
        problem = self._problem()
        w = problem.weights
        path = problem.path(w)
        self.edf_ = float(path.edf(self.alpha_))
        self.projection_ = path.operator(self.alpha_) @ (problem.phi * w[:, None]).T
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
        X = self._validate_fast(X)
        return apply_rows(self._smooth, X, self.evaluation_.shape[0])

    def _smooth(self, X):
        """The smoothed curves of validated in-memory rows."""
        if self.per_curve:
            return chunked_matmul(self._per_curve(X)[0], self.evaluation_.T)
        out, missing = _products(X, self.projection_.T, self.evaluation_.T)
        if missing.any():
            rows = np.flatnonzero(missing)
            for group, rotated, _, path, _, _ in self._problem().blocks(X, rows):
                out[group] = path.coef(rotated, self.alpha_) @ self.evaluation_.T
        return out

    def choose_alphas(self, X):
        """The alpha GCV chooses for each curve among ``alphas_``.

        This is the choice :meth:`transform` uses with ``per_curve=True``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves, as for :meth:`transform`.

        Returns
        -------
        alphas : ndarray of shape (n_samples,)
            A lazy dask array when X is one.
        """
        check_is_fitted(self)
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
        """Basis coefficients (n, K) and alphas (n,) chosen by per-curve GCV."""
        coef = np.empty((X.shape[0], self.n_basis_))
        chosen = np.empty(X.shape[0])
        alphas = self.alphas_
        for rows, rotated, yy, path, n_obs, weight in self._problem().blocks(X):
            rss = yy[:, None] - path.rss_reduction(rotated, alphas)
            scores = gcv_score(np.maximum(rss, 0.0), path.edf(alphas), n_obs, weight)
            chosen[rows] = alphas[_gcv_choice(scores, alphas)]
            coef[rows] = path.coef(rotated, chosen[rows])
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
        names = _check_feature_names_in(self, input_features, generate_names=False)
        if self.eval_points is None and names is not None:
            return np.asarray(names, dtype=object)
        return np.asarray([repr(float(t)) for t in self.eval_points_], dtype=object)
