"""FunctionalRidge and FunctionalRidgeCV: a scalar outcome from a curve.

The model is ``y_i = b0 + int x_i(t) beta(t) dt + gamma' s_i + e_i`` with beta
in a basis and a roughness penalty ``alpha int (D^q beta)^2``; it is a
penalized least-squares problem on the integrated design (see
:mod:`skfunc._integrated_design`) solved by the shared engine, whose one
decomposition gives GCV, exact leave-one-out and K-fold criteria for every
alpha at once.
"""

from functools import partial

import numpy as np
from sklearn.base import BaseEstimator, RegressorMixin
from sklearn.model_selection import check_cv
from sklearn.utils._param_validation import StrOptions
from sklearn.utils.validation import _check_sample_weight

from ._dask import (
    compute_statistics,
    is_dask_array,
    running_statistics,
    start_partial_fit,
)
from ._integrated_design import (
    ALPHA_CONSTRAINT,
    DESIGN_CONSTRAINTS,
    IntegratedDesignMixin,
)
from ._penalized import (
    centered,
    centered_cross_products,
    cross_products,
    gcv_score,
)

_SHARED_DOC = """
    basis : {"bspline", "fourier", "legendre"}, default="bspline"
        Basis for the coefficient function beta(t).
    n_basis : int, default=None
        Number of basis functions for beta. None means the basis' default
        (20 B-splines, 21 Fourier functions, 12 Legendre polynomials) capped
        by the number of grid points.
    degree : int, default=3
        Degree of the B-splines. Ignored by the other bases.
    knots : array-like of shape (n_knots,), default=None
        Interior B-spline knots; None means evenly spaced.
    penalty_order : int, default=2
        Derivative order ``q`` of the roughness penalty ``int (D^q beta)^2``.
    n_covariates : int, default=0
        Number of trailing columns of X that are scalar covariates rather
        than curve values (partial functional linear model). They enter
        linearly and unpenalized; the grid covers the columns before them.
        Put curve columns first (e.g. a ColumnTransformer with the curve
        columns first and the scalar columns last).
    fit_intercept : bool, default=True
        Whether to fit an unpenalized intercept.
    grid : array-like of shape (n_features - n_covariates,), default=None
        Sampling points of the curve columns. None means their numeric
        DataFrame column labels, else evenly spaced points on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule for the integrals ``int x_i(t) phi_k(t) dt``."""

_SHARED_ATTRIBUTES = """
    coef_function_ : ndarray of shape (n_grid,) or (n_targets, n_grid)
        The estimated beta(t) on ``grid_``.
    basis_coef_ : ndarray of shape (n_basis_,) or (n_targets, n_basis_)
        Coefficients of beta in the basis.
    covariate_coef_ : ndarray of shape (n_covariates,) or (n_targets, n_covariates)
        Coefficients of the scalar covariates.
    coef_ : ndarray of shape (n_features_in_,) or (n_targets, n_features_in_)
        Weights the prediction applies to the columns of X: quadrature weight
        times beta on the curve columns, then ``covariate_coef_``, so that
        ``predict(X) = X @ coef_.T + intercept_``.
    intercept_ : float or ndarray of shape (n_targets,)
        The intercept b0 (0.0 when ``fit_intercept=False``).
    edf_ : float or ndarray of shape (n_targets,)
        Effective degrees of freedom, the trace of the hat matrix (including
        the intercept and the covariates); one per target when alpha is.
    noise_variance_ : float or ndarray of shape (n_targets,)
        ``sum w_i r_i^2 / (n_samples - edf_)``; NaN when ``edf_ >= n_samples``.
    coef_covariance_ : ndarray of shape (n_basis_, n_basis_) or (n_targets, ...)
        Bayesian posterior covariance of ``basis_coef_`` (see Notes), used by
        :meth:`confidence_band`.
    grid_ : ndarray of shape (n_grid,)
        The grid of the curve columns.
    quadrature_weights_ : ndarray of shape (n_grid,)
        Quadrature weights on ``grid_``.
    n_basis_ : int
        Number of basis functions for beta.
    n_samples_seen_ : int
        Number of curves fitted (by ``fit``, or by all calls of
        ``partial_fit`` since the first).
    n_features_in_ : int
        Number of columns of X (grid points plus covariates).
    feature_names_in_ : ndarray of shape (n_features_in_,)
        Column names of X when they are all strings."""

_SHARED_NOTES = """
    The fit minimises ``sum_i w_i (y_i - b0 - int x_i beta - gamma' s_i)^2 +
    alpha int (D^q beta)^2``; with the identity penalty (``penalty_order=0``)
    in an orthonormal basis this is :class:`sklearn.linear_model.Ridge` on
    the basis coordinates of the curves, and alpha has the same scale.

    The confidence band uses the Bayesian posterior covariance
    ``sigma^2 (G + alpha P)^{-1}`` of the basis coefficients (Wahba, 1983;
    Nychka, 1988), with ``G`` the centered cross products of the integrated
    design and ``sigma^2 = noise_variance_``. Unlike the frequentist
    (sandwich) covariance ``sigma^2 A G A``, it accounts on average for the
    smoothing bias, so its coverage holds on average over the grid rather
    than at every point. Bands are conditional on alpha.

    The data enter through additive statistics (centred cross products of
    the integrated design, merged exactly), so ``partial_fit`` over batches
    equals ``fit`` on all of them, and a dask array ``X`` is fitted on the
    workers block by block and predicted lazily (alpha by GCV only).

    Predictions are statistical estimates: validate them on your own process
    data before they drive a quality or safety decision, and follow the
    applicable standards and qualified practice."""

_SHARED_REFERENCES = """
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 15. Springer.

    Wahba, G. (1983). Bayesian "confidence intervals" for the cross-validated
    smoothing spline. *J. R. Statist. Soc. B* 45, 133-150.

    Nychka, D. (1988). Bayesian confidence intervals for smoothing splines.
    *J. Amer. Statist. Assoc.* 83, 1134-1143."""


def _docstring(cls):
    """Fill the shared sections (placeholders ``    %(name)s``) of a docstring."""
    shared = {
        "shared": _SHARED_DOC,
        "attributes": _SHARED_ATTRIBUTES,
        "notes": _SHARED_NOTES,
        "references": _SHARED_REFERENCES,
    }
    for key, text in shared.items():
        cls.__doc__ = cls.__doc__.replace(f"    %({key})s", text.strip("\n"))
    return cls


class _FunctionalRidgeBase(IntegratedDesignMixin, RegressorMixin, BaseEstimator):
    """Fit = statistics of the integrated design, merged, then solved."""

    #: fit runs on skfunc._dask.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.target_tags.multi_output = True
        return tags

    def _validate_fit_input(self, X, y, sample_weight, reset=True):
        X, y = self._validate_curves(
            X, y, reset=reset, y_numeric=True, multi_output=True,
            ensure_min_samples=2 if reset else 1,
        )
        sample_weight = _check_sample_weight(
            sample_weight, X, dtype=np.float64, ensure_non_negative=True
        )
        return X, y, sample_weight

    def _statistics(self, X, y, sample_weight, operator):
        """Additive statistics of one chunk of curves (see ``merge``)."""
        return centered_cross_products(self._design(X, operator), y, sample_weight)

    def partial_fit(self, X, y, sample_weight=None):
        """Add a batch of curves and refit from the statistics of all batches.

        The fit depends on the curves only through additive statistics, so
        after the last batch it equals :meth:`fit` on all of them. For
        ``FunctionalRidgeCV`` alpha is chosen by GCV from the pooled
        statistics; ``criterion="loo"`` and ``cv`` need every curve at once.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            A batch of curves on the grid of the first batch; then
            ``n_covariates`` scalar columns.
        y : array-like or dask array of shape (n_samples,) or (n_samples, n_targets)
            Outcomes of the batch, with the targets of the first.
        sample_weight : array-like of shape (n_samples,), default=None
            Non-negative weights of the batch's curves.

        Returns
        -------
        self : object
            The estimator, fitted on all batches so far.
        """
        self._check_pooled()
        first = start_partial_fit(self)
        X, y, sample_weight = self._validate_fit_input(X, y, sample_weight, first)
        if not first:
            self._check_same_targets(y)
        basis = self._basis()
        # statistics per row block (on the workers for a dask X), merged
        block = partial(self._statistics, operator=self._integration_operator(basis))
        stats = compute_statistics(block, X, y, sample_weight)
        stats = running_statistics(self, stats, first, X.shape[0])
        return self._fit_pooled(stats, basis, y.ndim)

    def _check_pooled(self):
        """Raise if the estimator's settings need every curve at once."""

    def _check_same_targets(self, y):
        targets = self._partial_statistics["zy"].shape[1]
        if (y.ndim == 1) != (np.ndim(self.intercept_) == 0) or (
            y.ndim == 2 and y.shape[1] != targets
        ):
            raise ValueError(
                f"y of this partial_fit batch has shape {y.shape}; earlier "
                f"batches had {targets} target(s) "
                f"{'as a 1-D y' if np.ndim(self.intercept_) == 0 else 'as columns'}"
                "; every batch needs the same targets."
            )

    def _path(self, stats, penalty, alphas):
        """The engine's path for the (centered) statistics, and the centered
        means, ``y'Wy`` and rotated right-hand sides."""
        if self.fit_intercept:
            zz, zy, yy, z_mean, y_mean = centered(stats)
        else:
            zz, zy, yy = stats["zz"], stats["zy"], stats["yy"]
            z_mean, y_mean = np.zeros(zz.shape[0]), np.zeros(zy.shape[1])
        path = self._checked_path(zz, penalty, alphas, stats["n"])
        return path, {
            "z_mean": z_mean,
            "y_mean": y_mean,
            "yy": yy,
            "rotated": path.rotate(zy.T),
        }

    def _solve(self, stats, alpha, basis, squeeze):
        """Coefficients, degrees of freedom, noise variance and posterior
        covariance at ``alpha`` (a scalar, or one per target) from merged
        statistics; sets the attributes."""
        path, part = self._path(stats, self._penalty(basis), alpha)
        rotated = part["rotated"]
        per_target = np.broadcast_to(alpha, rotated.shape[:1])
        theta = path.coef(rotated, per_target)
        intercept = part["y_mean"] - theta @ part["z_mean"]
        reduction = np.empty(len(rotated))
        for value in np.unique(per_target):
            rows = per_target == value
            reduction[rows] = path.rss_reduction(rotated[rows], [value])[:, 0]
        rss = np.maximum(part["yy"] - reduction, 0.0)
        edf = path.edf(per_target) + self.fit_intercept
        dof = stats["n"] - edf
        sigma2 = np.where(dof > 0, rss / np.where(dof > 0, dof, 1.0), np.nan)
        k = basis.n_basis
        u = path.eigvecs[:k]
        inv_d = 1.0 / path.denominators(per_target)
        covariance = np.einsum("t,kj,tj,lj->tkl", sigma2, u, inv_d, u)
        self._set_coefficients(basis, theta, intercept, covariance, squeeze)
        self.edf_ = float(edf[0]) if np.ndim(alpha) == 0 else edf
        self.noise_variance_ = float(sigma2[0]) if squeeze else sigma2
        return self

    def predict(self, X):
        """Predicted outcomes ``b0 + int x beta + gamma' s``.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves on the fitted grid, then the covariates.

        Returns
        -------
        y_pred : ndarray of shape (n_samples,) or (n_samples, n_targets)
        """
        return self._linear_predictor(X)


@_docstring
class FunctionalRidge(_FunctionalRidgeBase):
    """Scalar-on-function regression with a roughness penalty.

    Predicts a number from a curve (and optional scalar covariates) with the
    functional linear model ``y = b0 + int x(t) beta(t) dt + gamma' s``,
    where beta is expanded in a basis and kept smooth by the penalty
    ``alpha int (D^q beta)^2``, so that beta(t) can be read: where on the
    curve's domain the outcome depends on the curve, and how.

    Parameters
    ----------
    alpha : float, default=1.0
        Roughness penalty weight; 0 for unpenalized least squares (which
        needs fewer basis functions than curves).
    %(shared)s

    Attributes
    ----------
    %(attributes)s

    See Also
    --------
    FunctionalRidgeCV : Chooses alpha by GCV, leave-one-out or K-fold.
    FunctionalLogisticRegression : The same model for class labels.
    sklearn.linear_model.Ridge : Ridge regression on ordinary features.

    Notes
    -----
    %(notes)s

    References
    ----------
    %(references)s

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.linear_model import FunctionalRidge
    >>> rng = np.random.default_rng(0)
    >>> t = np.linspace(0, 1, 101)
    >>> X = rng.normal(size=(60, 6)) @ np.sin(np.outer(np.arange(1, 7), np.pi * t))
    >>> y = X @ (np.gradient(t) * np.sin(np.pi * t)) + 0.01 * rng.normal(size=60)
    >>> model = FunctionalRidge(alpha=1e-6, n_basis=8).fit(X, y)
    >>> model.coef_function_.shape
    (101,)
    >>> lower, upper = model.confidence_band(level=0.95)
    >>> bool(np.all(lower <= upper))
    True
    """

    _parameter_constraints = {**DESIGN_CONSTRAINTS, "alpha": ALPHA_CONSTRAINT}

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        # scikit-learn's score check uses make_regression: columns with one
        # informative spike, which a roughness penalty at a fixed alpha is
        # meant to smooth away (FunctionalRidgeCV, choosing alpha, passes it).
        tags.regressor_tags.poor_score = True
        return tags

    def __init__(
        self,
        alpha=1.0,
        *,
        basis="bspline",
        n_basis=None,
        degree=3,
        knots=None,
        penalty_order=2,
        n_covariates=0,
        fit_intercept=True,
        grid=None,
        quadrature="trapezoid",
    ):
        self.alpha = alpha
        self.basis = basis
        self.n_basis = n_basis
        self.degree = degree
        self.knots = knots
        self.penalty_order = penalty_order
        self.n_covariates = n_covariates
        self.fit_intercept = fit_intercept
        self.grid = grid
        self.quadrature = quadrature

    def fit(self, X, y, sample_weight=None):
        """Fit beta(t) (and the covariate coefficients) at the given alpha.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves, one per row, sampled on the grid; then ``n_covariates``
            scalar columns.
        y : array-like of shape (n_samples,) or (n_samples, n_targets)
            Outcomes.
        sample_weight : array-like of shape (n_samples,), default=None
            Non-negative weights of the curves.

        Returns
        -------
        self : object
            Fitted estimator.
        """
        vars(self).pop("n_samples_seen_", None)  # start afresh: fit is a first batch
        return self.partial_fit(X, y, sample_weight)

    def _fit_pooled(self, stats, basis, y_ndim):
        return self._solve(stats, self.alpha, basis, squeeze=y_ndim == 1)


@_docstring
class FunctionalRidgeCV(_FunctionalRidgeBase):
    """Scalar-on-function regression with the roughness penalty chosen by
    GCV, exact leave-one-out or K-fold cross-validation.

    Every candidate alpha is scored from one decomposition of the penalized
    problem, as :class:`sklearn.linear_model.RidgeCV` does for plain ridge:
    GCV costs O(K) per alpha, exact leave-one-out O(n K) per alpha (through
    the leverages), and with ``cv=`` one decomposition per fold serves every
    alpha. The model is then refitted on all data at the chosen alpha.

    Parameters
    ----------
    alphas : array-like of shape (n_alphas,), default=None
        Positive candidate penalties. None means 25 log-spaced values
        spanning ``1e-8 .. 1e4`` times the ratio of the traces of the data's
        cross products and the roughness matrix.
    criterion : {"gcv", "loo"}, default="gcv"
        Generalised cross-validation (Craven and Wahba, 1979) or exact
        leave-one-out mean squared error. Used when ``cv=None``.
    cv : int, cross-validation generator or iterable, default=None
        None uses ``criterion``; otherwise a scikit-learn splitter (an int
        means ``KFold(cv)``), and the criterion is the mean over folds of the
        weighted held-out mean squared error.
    alpha_per_target : bool, default=False
        With several targets, choose one alpha per target (as
        :class:`sklearn.linear_model.RidgeCV` does) instead of one alpha
        minimising the criterion averaged over targets.
    %(shared)s

    Attributes
    ----------
    alphas_ : ndarray of shape (n_alphas,)
        The candidate alphas.
    criterion_ : ndarray of shape (n_alphas,) or (n_targets, n_alphas)
        GCV score, leave-one-out or K-fold mean squared error for each
        candidate (lower is better), averaged over targets; one row per
        target with ``alpha_per_target=True``.
    alpha_ : float or ndarray of shape (n_targets,)
        The chosen alpha (the first minimiser of ``criterion_``); one per
        target with ``alpha_per_target=True`` and several targets.
    best_score_ : float or ndarray of shape (n_targets,)
        ``-criterion_`` at ``alpha_`` (higher is better, as in RidgeCV).
    %(attributes)s

    See Also
    --------
    FunctionalRidge : The model at a fixed alpha.
    sklearn.linear_model.RidgeCV : The same all-alpha path for plain ridge.

    Notes
    -----
    %(notes)s

    GCV is ``(RSS / sum w) / (1 - edf / n)^2`` with the intercept counted in
    ``edf``. Leave-one-out uses the exact identity ``y_i - yhat_{-i} =
    (y_i - yhat_i) / (1 - h_ii)`` with leverages ``h_ii(alpha) = w_i / sum w
    + w_i sum_k (z_i u_k)^2 / d_k(alpha)`` in the engine's diagonalising
    basis; it is the weighted mean of the squared leave-one-out residuals.

    References
    ----------
    %(references)s

    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.linear_model import FunctionalRidgeCV
    >>> rng = np.random.default_rng(0)
    >>> t = np.linspace(0, 1, 101)
    >>> X = rng.normal(size=(60, 6)) @ np.sin(np.outer(np.arange(1, 7), np.pi * t))
    >>> y = X @ (np.gradient(t) * np.sin(np.pi * t)) + 0.1 * rng.normal(size=60)
    >>> model = FunctionalRidgeCV(alphas=np.logspace(-8, 0, 9), n_basis=8).fit(X, y)
    >>> model.criterion_.shape
    (9,)
    >>> bool(model.alpha_ in model.alphas_)
    True
    """

    _parameter_constraints = {
        **DESIGN_CONSTRAINTS,
        "alphas": ["array-like", None],
        "criterion": [StrOptions({"gcv", "loo"})],
        "cv": ["cv_object"],
        "alpha_per_target": ["boolean"],
    }

    def __init__(
        self,
        alphas=None,
        *,
        criterion="gcv",
        cv=None,
        alpha_per_target=False,
        basis="bspline",
        n_basis=None,
        degree=3,
        knots=None,
        penalty_order=2,
        n_covariates=0,
        fit_intercept=True,
        grid=None,
        quadrature="trapezoid",
    ):
        self.alphas = alphas
        self.criterion = criterion
        self.cv = cv
        self.alpha_per_target = alpha_per_target
        self.basis = basis
        self.n_basis = n_basis
        self.degree = degree
        self.knots = knots
        self.penalty_order = penalty_order
        self.n_covariates = n_covariates
        self.fit_intercept = fit_intercept
        self.grid = grid
        self.quadrature = quadrature

    def _check_alphas(self):
        alphas = np.asarray(self.alphas, dtype=np.float64)
        if alphas.ndim != 1 or alphas.size == 0:
            raise ValueError(
                f"alphas must be a non-empty 1-D array of positive numbers; got "
                f"an array of shape {alphas.shape}."
            )
        if not np.all(np.isfinite(alphas)) or np.any(alphas <= 0):
            raise ValueError(
                "alphas must be finite and strictly positive (use FunctionalRidge "
                f"with alpha=0 for unpenalized least squares); got {alphas.tolist()}."
            )
        return alphas

    def fit(self, X, y, sample_weight=None):
        """Score every alpha, choose one, and fit at it.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves, one per row, sampled on the grid; then ``n_covariates``
            scalar columns.
        y : array-like of shape (n_samples,) or (n_samples, n_targets)
            Outcomes.
        sample_weight : array-like of shape (n_samples,), default=None
            Non-negative weights of the curves.

        Returns
        -------
        self : object
            Fitted estimator.
        """
        if self.criterion == "gcv" and self.cv is None:  # GCV: statistics suffice
            vars(self).pop("n_samples_seen_", None)  # fit is a first batch
            return self.partial_fit(X, y, sample_weight)
        self._validate_params()
        alphas = None if self.alphas is None else self._check_alphas()
        X, y, sample_weight = self._validate_fit_input(X, y, sample_weight)
        if is_dask_array(X):
            raise ValueError(self._needs_memory("a dask array X"))
        basis = self._basis()
        penalty = self._penalty(basis)
        Z = self._design(X, self._integration_operator(basis))
        y2 = y.reshape(y.shape[0], -1)
        stats = centered_cross_products(Z, y2, sample_weight)
        if alphas is None:
            path, _ = self._path(stats, penalty, 1.0)
            alphas = path.default_alphas(25)
        if self.cv is not None:
            criterion = self._kfold_criterion(Z, y2, sample_weight, penalty, alphas)
        else:
            criterion = self._path_criterion(
                stats, penalty, alphas, Z, y2, sample_weight
            )
        running_statistics(self, stats, True, X.shape[0])
        return self._select(stats, criterion, alphas, basis, y.ndim)

    def _check_pooled(self):
        if self.criterion != "gcv" or self.cv is not None:
            raise ValueError(self._needs_memory("partial_fit"))

    def _fit_pooled(self, stats, basis, y_ndim):
        """Alpha by GCV from pooled statistics, then the fit at it."""
        alphas = None if self.alphas is None else self._check_alphas()
        penalty = self._penalty(basis)
        if alphas is None:
            path, _ = self._path(stats, penalty, 1.0)
            alphas = path.default_alphas(25)
        criterion = self._path_criterion(stats, penalty, alphas, None, None, None)
        return self._select(stats, criterion, alphas, basis, y_ndim)

    def _needs_memory(self, what):
        return (
            f"{what} supports criterion='gcv' with cv=None only (alpha chosen by "
            f"GCV from pooled statistics); criterion={self.criterion!r}, "
            f"cv={self.cv!r} need all curves in one process at once."
        )

    def _select(self, stats, criterion, alphas, basis, y_ndim):
        """Choose alpha from the criterion per candidate and fit at it."""
        if not (self.alpha_per_target and y_ndim == 2):
            criterion = criterion.mean(axis=0)  # one alpha for all targets
        best = np.argmin(criterion, axis=-1)
        self.alphas_ = alphas
        self.criterion_ = criterion
        if criterion.ndim == 1:
            self.alpha_, self.best_score_ = float(alphas[best]), -float(criterion[best])
        else:
            self.alpha_ = alphas[best]
            self.best_score_ = -criterion[np.arange(best.size), best]
        return self._solve(stats, self.alpha_, basis, squeeze=y_ndim == 1)

    def _path_criterion(self, stats, penalty, alphas, Z, y2, sample_weight):
        """GCV or exact leave-one-out for every target and alpha, from one
        decomposition: shape (n_targets, n_alphas)."""
        path, part = self._path(stats, penalty, alphas)
        if self.criterion == "gcv":
            rss = part["yy"][:, None] - path.rss_reduction(part["rotated"], alphas)
            edf = path.edf(alphas) + self.fit_intercept
            return gcv_score(rss, edf, stats["n"], stats["sw"])
        return self._held_out_error(path, part, Z, y2, sample_weight, alphas, True)

    def _held_out_error(self, path, part, Z, y2, sample_weight, alphas, leverage):
        """Weighted mean of squared (leave-one-out) residuals on rows of Z, for
        every target and alpha; ``leverage`` adds the leave-one-out factor."""
        inv_d = 1.0 / path.denominators(alphas)  # (L, K)
        zu = (Z - part["z_mean"]) @ path.eigvecs
        divisor = 1.0
        if leverage:
            h = sample_weight[:, None] * (zu**2 @ inv_d.T)
            if self.fit_intercept:
                h += (sample_weight / sample_weight.sum())[:, None]
            divisor = 1.0 - h
        errors = np.zeros((y2.shape[1], len(alphas)))
        for j, rotated in enumerate(part["rotated"]):
            fitted = (zu * rotated) @ inv_d.T
            residual = (y2[:, j] - part["y_mean"][j])[:, None] - fitted
            with np.errstate(divide="ignore", invalid="ignore"):
                errors[j] = sample_weight @ (residual / divisor) ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            out = errors / sample_weight.sum()
        return np.where(np.isfinite(out), out, np.inf)

    def _kfold_criterion(self, Z, y2, sample_weight, penalty, alphas):
        cv = check_cv(self.cv)
        scores = []
        for train, test in cv.split(Z, y2):
            stats = cross_products(Z[train], y2[train], sample_weight[train])
            path, part = self._path(stats, penalty, alphas)
            scores.append(
                self._held_out_error(
                    path, part, Z[test], y2[test], sample_weight[test], alphas, False
                )
            )
        return np.mean(scores, axis=0)
