"""FunctionalRidgeCV: scalar-on-function ridge with the penalty chosen by GCV,
exact leave-one-out or K-fold cross-validation, all alphas from one
decomposition."""

import numpy as np
from sklearn.model_selection import check_cv
from sklearn.utils._param_validation import StrOptions

from ._alpha import (
    ALPHA_CONSTRAINT,
    AUTO,
    CRITERIA,
    best_index,
    candidates_for,
    check_alpha,
    gcv_in_data_units,
)
from ._blocks import is_dask_array
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import check_finite_fit
from ._functional_ridge import FunctionalRidgeBase
from ._integrated_design import DESIGN_CONSTRAINTS, PERIOD_CONSTRAINT
from ._penalized import centered_cross_products


@fill_doc
class FunctionalRidgeCV(FunctionalRidgeBase):
    """Scalar-on-function regression with the roughness penalty chosen by
    GCV, exact leave-one-out or K-fold cross-validation.

    Every candidate alpha is scored from one decomposition of the penalized
    problem, as :class:`sklearn.linear_model.RidgeCV` does for plain ridge:
    GCV costs O(K) per alpha, exact leave-one-out O(n K) per alpha (through
    the leverages), and with ``cv=`` one decomposition per fold serves every
    alpha. The model is then refitted on all data at the chosen alpha.

    Parameters
    ----------
    alpha : "auto", float or array-like of shape (n_alphas,), default="auto"
        Candidate penalties (unit-free, as for :class:`FunctionalRidge`):
        ``"auto"`` means 25 log-spaced values spanning every effective
        degrees of freedom from nearly unpenalized to the null space; a
        number is the only candidate (its criterion is still computed).
    criterion : {"gcv", "reml", "loo"}, default="gcv"
        Generalised cross-validation (Craven and Wahba, 1979), REML (Wood,
        2011) or exact leave-one-out mean squared error. Used when
        ``cv=None``.
    cv : int, cross-validation generator or iterable, default=None
        None uses ``criterion``; otherwise a scikit-learn splitter (an int
        means ``KFold(cv)``), and the criterion is the mean over folds of the
        weighted held-out mean squared error (the splitter splits rows: a
        weighted row stays whole in its fold; see Notes).
    alpha_per_target : bool, default=False
        With several targets, choose one alpha per target (as
        :class:`sklearn.linear_model.RidgeCV` does) instead of one alpha
        minimising the criterion averaged over targets.
    %(scalar_outcome)s
    %(period)s

    Attributes
    ----------
    alphas_path_ : ndarray of shape (n_alphas,)
        The candidate alphas.
    criterion_path_ : ndarray of shape (n_alphas,) or (n_targets, n_alphas)
        GCV or REML score, leave-one-out or K-fold mean squared error for
        each candidate (lower is better), averaged over targets; one row per
        target with ``alpha_per_target=True``.
    edf_path_ : ndarray of shape (n_alphas,)
        Effective degrees of freedom of each candidate.
    alpha_ : float or ndarray of shape (n_targets,)
        The chosen alpha (the minimiser of ``criterion_path_``, ties to the
        larger alpha); one per target with ``alpha_per_target=True`` and
        several targets.
    best_score_ : float or ndarray of shape (n_targets,)
        ``-criterion_path_`` at ``alpha_`` (higher is better, as in RidgeCV).
    %(scalar_outcome_attributes)s

    See Also
    --------
    FunctionalRidge : The model at a fixed alpha.
    sklearn.linear_model.RidgeCV : The same all-alpha path for plain ridge.

    %(scalar_outcome_notes)s

    GCV is ``(RSS / sum w) / (1 - edf / n)^2`` with the intercept counted in
    ``edf``. Sample weights are frequencies (weight 2 = the row twice), and
    both cross-validation criteria equal those of the duplicated rows.
    Leave-one-out leaves out one observation: one unit of a row's weight,
    or the whole row when its weight is below 1. It uses the exact identity
    ``y_i - yhat_{-i} = (y_i - yhat_i) / (1 - delta_i q_i)`` with ``delta_i
    = min(w_i, 1)`` and the leverage of one observation ``q_i(alpha) = 1 /
    sum w + sum_k (z_i u_k)^2 / d_k(alpha)`` in the engine's diagonalising
    basis, and is the weighted mean of the squared leave-one-out residuals.
    K-fold keeps a weighted row whole in one fold (its copies go together,
    as with :class:`~sklearn.model_selection.GroupKFold` grouping the copies
    of each row), so a fold's held-out error is its weighted mean squared
    error, and the criterion is the mean over folds.

    %(scalar_outcome_references)s

    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.datasets import make_smooth_regression
    >>> from skfunc.linear_model import FunctionalRidgeCV
    >>> X, y, _ = make_smooth_regression(60, grid=101, random_state=0)
    >>> model = FunctionalRidgeCV(criterion="loo").fit(X, y)
    >>> model.criterion_path_.shape
    (25,)
    >>> bool(model.alpha_ in model.alphas_path_)
    True
    """

    _parameter_constraints = {
        **DESIGN_CONSTRAINTS,
        **PERIOD_CONSTRAINT,
        "alpha": ALPHA_CONSTRAINT,
        "criterion": [StrOptions({*CRITERIA, "loo"})],
        "cv": ["cv_object"],
        "alpha_per_target": ["boolean"],
    }

    def __init__(self, alpha=AUTO, *, criterion="gcv", cv=None,
                 alpha_per_target=False, basis="bspline", n_basis=None, degree=3,
                 interior_knots=None, penalty_order=2, period=None, n_covariates=0,
                 fit_intercept=True, grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def _check_alphas(self):
        """"auto", or the candidates (a number is the one candidate: its
        criterion is computed, nothing is chosen)."""
        alphas = check_alpha(self.alpha)
        return alphas if alphas is AUTO else np.atleast_1d(alphas)

    @fill_doc
    def fit(self, X, y, sample_weight=None):
        """Score every alpha, choose one, and fit at it.

        Parameters
        ----------
        %(scalar_outcome_X)s
        y : array-like of shape (n_samples,) or (n_samples, n_targets)
            Outcomes.
        %(fit_weights_returns)s
        """
        if self.criterion in CRITERIA and self.cv is None:  # statistics suffice
            return self._fit_statistics(X, y, sample_weight)
        self._forget()
        self._validate_params()
        alphas = self._check_alphas()
        X, y, sample_weight = self._validate_fit_input(X, y, sample_weight)
        if is_dask_array(X):
            raise ValueError(self._needs_memory("a dask array X"))
        basis = self._basis()
        # X and y divided by powers of two, as in the statistics of fit
        # from sums: the criteria are computed in these units
        Z, z_exp, y2, y_exp = self._scaled_design(X, y, self._integration_operator(basis))
        y2 = y2.reshape(y.shape[0], -1)
        stats = centered_cross_products(Z, y2, sample_weight)
        stats.update(x_exp=z_exp, y_exp=y_exp)
        alphas = candidates_for(alphas, self._path(stats, basis)[0])
        if self.cv is not None:
            criterion = self._kfold_criterion(Z, y2, sample_weight, basis, alphas)
        else:
            path, part = self._path(stats, basis)
            criterion = self._held_out_error(path, part, Z, y2, sample_weight, alphas,
                                             True)
        self._keep_statistics(stats, X.shape[0])
        self._target_ndim = y.ndim
        return check_finite_fit(self._select(stats, criterion, alphas, basis, y.ndim))

    def _check_pooled(self):
        check_alpha(self.alpha)
        if self.criterion not in CRITERIA or self.cv is not None:
            raise ValueError(self._needs_memory("partial_fit"))

    def _fit_pooled(self, stats, basis, y_ndim):
        """Alpha by GCV or REML from pooled statistics, then the fit at it."""
        pooled = not (self.alpha_per_target and y_ndim == 2)
        out = self._choose(stats, basis, y_ndim, self._check_alphas(), self.criterion,
                           pooled=pooled)
        self.best_score_ = self._best_score(self.criterion_path_, self.alpha_)
        return out

    def _best_score(self, criterion, alpha):
        index = np.searchsorted(self.alphas_path_, alpha)
        if np.ndim(index) == 0:
            return -float(criterion[..., index]) if criterion.ndim == 1 else -criterion[
                np.arange(criterion.shape[0]), index]
        return -criterion[np.arange(index.size), index]

    def _needs_memory(self, what):
        return (
            f"{what} supports criterion='gcv' or 'reml' with cv=None only (alpha "
            f"chosen from pooled statistics); criterion={self.criterion!r}, "
            f"cv={self.cv!r} need all curves in one process at once."
        )

    def _select(self, stats, criterion, alphas, basis, y_ndim):
        """Choose alpha from the criterion per candidate and fit at it."""
        if not (self.alpha_per_target and y_ndim == 2):
            criterion = criterion.mean(axis=0)  # one alpha for all targets
        name = "leave-one-out" if self.cv is None else "K-fold"
        best = best_index(criterion, alphas, criterion=name)
        criterion = gcv_in_data_units(criterion, stats["y_exp"])  # a mean squared error
        self.alphas_path_ = alphas
        self.criterion_path_ = criterion
        self.edf_path_ = self._path(stats, basis)[0].edf(alphas) + self.fit_intercept
        if criterion.ndim == 1:
            self.alpha_, self.best_score_ = float(alphas[best]), -float(criterion[best])
        else:
            self.alpha_ = alphas[best]
            self.best_score_ = -criterion[np.arange(best.size), best]
        return self._solve_at(stats, self.alpha_, basis, squeeze=y_ndim == 1)

    def _held_out_error(self, path, part, Z, y2, sample_weight, alphas, leverage):
        """Weighted mean of squared (leave-one-out) residuals on rows of Z, for
        every target and alpha; ``leverage`` adds the leave-one-out factor.

        Frequency weights: a row of weight ``w_i`` is ``w_i`` observations,
        and leaving one out removes ``min(w_i, 1)`` of its weight. With
        ``q_i = z_i' (Z'WZ + lam P)^{-1} z_i`` (plus ``1 / sum w`` for the
        intercept), removing weight ``delta`` from row i changes its residual
        to ``e_i / (1 - delta q_i)`` (Sherman-Morrison), so an integer
        weight gives exactly the criterion of the duplicated rows, and a
        weight below 1 leaves the whole row out.
        """
        inv_d = 1.0 / path.denominators(alphas)  # (L, K)
        zu = (Z - part["z_mean"]) @ path.eigvecs
        zu[:, path.g == 0] = 0.0  # directions the data do not see (SplitPath.rotate)
        divisor = 1.0
        if leverage:
            q = zu**2 @ inv_d.T  # leverage of one observation, (n, L)
            if self.fit_intercept:
                q += 1.0 / sample_weight.sum()
            divisor = 1.0 - np.minimum(sample_weight, 1.0)[:, None] * q
        errors = np.zeros((y2.shape[1], len(alphas)))
        for j, rotated in enumerate(part["rotated"]):
            fitted = (zu * rotated) @ inv_d.T
            residual = (y2[:, j] - part["y_mean"][j])[:, None] - fitted
            with np.errstate(divide="ignore", invalid="ignore"):
                errors[j] = sample_weight @ (residual / divisor) ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            out = errors / sample_weight.sum()
        return np.where(np.isfinite(out), out, np.inf)

    def _kfold_criterion(self, Z, y2, sample_weight, basis, alphas):
        cv = check_cv(self.cv)
        scores = []
        for train, test in cv.split(Z, y2):
            stats = centered_cross_products(Z[train], y2[train], sample_weight[train])
            path, part = self._path(stats, basis)
            scores.append(
                self._held_out_error(
                    path, part, Z[test], y2[test], sample_weight[test], alphas, False
                )
            )
        return np.mean(scores, axis=0)
