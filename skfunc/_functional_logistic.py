"""FunctionalLogisticRegression: a class label from a curve.

Penalized maximum likelihood on the integrated design (see
:mod:`skfunc._integrated_design`), solved by Newton's method (penalized
iteratively reweighted least squares) with a backtracking line search. What
each iteration needs from the data — loss, gradient and Hessian — is a sum
over rows (:func:`newton_statistics`), so chunked or distributed fits can
reuse it.
"""

import contextlib
import warnings
from functools import partial
from numbers import Integral, Real

import numpy as np
from scipy.special import logsumexp
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.exceptions import ConvergenceWarning
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.class_weight import compute_class_weight
from sklearn.utils.multiclass import check_classification_targets

from ._alpha import ALPHA_CONSTRAINT, candidates_for, check_alpha
from ._blocks import (
    _along_rows_of,
    apply_rows,
    compute_statistics,
    is_dask_array,
    single_thread_blas,
)
from ._channels import channel_penalty
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import check_finite_fit
from ._integrated_design import (
    DESIGN_CONSTRAINTS,
    PERIOD_CONSTRAINT,
    IntegratedDesignMixin,
)
from ._logistic_path import (
    N_ALPHAS,
    RIDGE,
    IntegratedDesign,
    LogisticProblem,
    coef_covariance,
)
from ._penalized import SplitPath, centered, penalty_scale, to_data_units
from ._weights import check_sample_weight


@fill_doc
class FunctionalLogisticRegression(
    IntegratedDesignMixin, ClassifierMixin, BaseEstimator
):
    """Classification from curves by penalized functional logistic regression.

    The log-odds (binary) or the class scores (multinomial, softmax) are
    ``b0 + int x(t) beta(t) dt + gamma' s``, with each beta expanded in a
    basis and kept smooth by the penalty ``alpha/2 int (D^q beta)^2`` added to
    the negative log-likelihood.

    Parameters
    ----------
    alpha : "auto", float or array-like of shape (n_alphas,), default="auto"
        Weight of the roughness penalty. ``"auto"`` chooses it from the
        training data: the fit is computed along candidate alphas spanning
        the effective degrees of freedom, from nearly the null-space fit (a
        straight line for ``penalty_order=2``) to nearly the whole basis, and
        the one with the smallest unbiased risk estimate (UBRE) is kept; see
        Notes. A number fixes it; 0 means unpenalized maximum likelihood.
        An array of positive numbers is the candidates to choose from.
        The penalty is measured on the domain mapped to [0, 1] and against
        the spread of the data (Notes), so a value means the same smoothing
        whatever the grid's unit or origin and the scale of X.
    %(scalar_outcome)s
    %(period)s
    class_weight : dict, "balanced" or None, default=None
        Weights of the classes, multiplied into ``sample_weight``, as in
        scikit-learn's classifiers.
    max_iter : int, default=100
        Maximum number of Newton iterations per fit (per candidate alpha
        with ``alpha="auto"``).
    tol : float, default=1e-10
        Stop after a Newton step whose half squared Newton decrement (the
        predicted decrease of the objective) is below
        ``tol * (1 + |objective|)``.

    Attributes
    ----------
    classes_ : ndarray of shape (n_classes,)
        Class labels.
    alpha_ : float
        The roughness penalty used: the chosen one with ``alpha="auto"``,
        else ``alpha``.
    alphas_path_ : ndarray of shape (n_alphas,)
        Candidate alphas, ascending (just ``alpha`` when it is a number).
    criterion_path_ : ndarray of shape (n_alphas,)
        UBRE of the fit at each candidate alpha (smaller is better).
    edf_path_ : ndarray of shape (n_alphas,)
        Effective degrees of freedom of the fit at each candidate alpha,
        intercept(s) included.
    coef_function_ : ndarray of shape (1, n_grid) or (n_classes, n_grid)
        beta(t) on ``grid_``: one row for two classes (log-odds of
        ``classes_[1]``), else one per class (centered over classes).
    basis_coef_ : ndarray of shape (1 or n_classes, n_basis_)
        Coefficients of beta in the basis.
    covariate_coef_ : ndarray of shape (1 or n_classes, n_covariates)
        Coefficients of the scalar covariates.
    coef_ : ndarray of shape (1 or n_classes, n_features_in_)
        Weights applied to the columns of X: quadrature weight times beta on
        the curve columns, then the covariate coefficients.
    intercept_ : ndarray of shape (1 or n_classes,)
        Intercepts.
    coef_covariance_ : ndarray of shape (1 or n_classes, n_basis_, n_basis_)
        Approximate posterior covariance of ``basis_coef_``: the inverse
        penalized Hessian at the optimum (see Notes).
    n_iter_ : int
        Number of Newton iterations run, over all candidate alphas.
    grid_ : ndarray of shape (n_grid,)
        The grid of the curve columns.
    quadrature_weights_ : ndarray of shape (n_grid,)
        Quadrature weights on ``grid_``.
    n_basis_ : int
        Number of basis functions.
    n_features_in_ : int
        Number of columns of X.
    feature_names_in_ : ndarray of shape (n_features_in_,)
        Column names of X when they are all strings.

    See Also
    --------
    FunctionalRidge : The same model for a numeric outcome.
    sklearn.linear_model.LogisticRegression : Logistic regression on
        ordinary features.

    Notes
    -----
    The objective is ``sum_i w_i l_i + (alpha s / 2) int_0^1 (D^q beta)^2``
    (``l_i`` the negative log-likelihood of curve ``i``, beta mapped to the
    unit domain) with ``s`` the largest eigenvalue of ``G``, the centred,
    sample-weighted cross products of the integrated design, relative to
    the Gram matrix of the basis on [0, 1]: the definition of alpha shared
    by every skfunc estimator (see :doc:`/bases_and_penalties`), the
    Gaussian case of which is the mean squared error plus ``alpha s`` times
    the roughness. ``s`` and the data term scale alike when the grid changes
    unit or X changes scale, so fits at a fixed alpha do not change, and
    ``s`` hardly moves with ``n_basis``. It is minimised by Newton's method
    (penalized iteratively reweighted least squares) in the coordinates of
    the engine's split path (:class:`~skfunc._penalized.SplitPath`; Demmler
    and Reinsch, 1975), where the roughness is exactly diagonal and the
    design's cross products are the identity on the null space: the
    intercept and the penalty's null space (functions with ``D^q beta = 0``)
    are never shrunk by alpha, so a large alpha gives the null-space fit.
    Newton stops after a step whose half squared Newton decrement is below
    ``tol * (1 + |objective|)``; near the optimum Newton converges
    quadratically, so the answer is then exact to rounding (weighted and
    duplicated curves give the same fit to about 1e-14).

    The loss, gradient and Hessian are sums over the rows, so a Dask array
    is fitted on its workers: the design is computed and kept there, and
    each Newton step is one pass of summed statistics over the blocks (only
    arrays of the size of the Hessian travel).

    Separable classes have no finite maximum likelihood. For ``alpha > 0``
    (and ``"auto"``) the objective carries a small fixed ridge
    ``(RIDGE s / 2) int_0^1 beta^2`` with ``RIDGE = 1e-3`` and the same ``s``
    as alpha (so it is unit-free too), and ``RIDGE`` times each scalar
    covariate's own weighted variance on the covariates: the functional
    counterpart of the ``C`` of :class:`sklearn.linear_model.LogisticRegression`,
    which penalizes every coefficient. The coefficients are then always
    finite, and where the training classes are separable (common with a few
    dozen curves) the fit tends, as alpha falls, to the separating direction
    of smallest ``int beta^2`` rather than the smoothest one: a direction the
    curves vary along, not one they hardly vary along. As alpha grows the
    fit tends to the null-space fit with this ridge. ``alpha=0`` keeps plain
    maximum likelihood and warns when it diverges.

    ``alpha="auto"`` fits the candidates from the largest alpha down, each
    fit starting from the previous one, and keeps the alpha minimising the
    unbiased risk estimate ``UBRE = deviance / n - 1 + 2 edf / n`` with
    ``edf = trace((H + S)^-1 H)`` (``H`` the likelihood's Hessian, ``S`` the
    penalty's; ``n`` the weight total): Craven and Wahba's criterion for a
    known dispersion, 1 for class labels, applied to penalized likelihood as
    in O'Sullivan, Yandell and Raynor (1986), Gu (1992) and Wood (2008). The
    candidates are the engine's (:func:`~skfunc._alpha.candidate_alphas` of
    the split path of the design weighted by the logistic curvature of the
    intercept-only fit, ridge included) and the choice follows the rules of
    every skfunc estimator: ties go to the larger alpha, and an ``AlphaAtEdgeWarning`` names the end
    of the candidates when the choice is there.

    The multinomial model uses one coefficient set per class and the
    centered solution (sum over classes zero), as the softmax leaves a
    common shift undetermined.

    The confidence band uses the inverse penalized Hessian at the optimum,
    the large-sample Bayesian posterior covariance (Wahba, 1983, for the
    Gaussian case); its coverage is approximate and holds on average over
    the grid. For the multinomial model it refers to the centered
    coefficients.

    %(cautions)s

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 15. Springer.

    Green, P. J. and Silverman, B. W. (1994). *Nonparametric Regression and
    Generalized Linear Models*, ch. 5. Chapman & Hall.

    Wahba, G. (1983). Bayesian "confidence intervals" for the cross-validated
    smoothing spline. *J. R. Statist. Soc. B* 45, 133-150.

    O'Sullivan, F., Yandell, B. S. and Raynor, W. J. (1986). Automatic
    smoothing of regression functions in generalized linear models. *J.
    Amer. Statist. Assoc.* 81, 96-103.

    Gu, C. (1992). Cross-validating non-Gaussian data. *J. Comput. Graph.
    Statist.* 1, 169-179.

    Wood, S. N. (2008). Fast stable direct fitting and smoothness selection
    for generalized additive models. *J. R. Statist. Soc. B* 70, 495-518.

    Demmler, A. and Reinsch, C. (1975). Oscillation matrices with spline
    smoothing. *Numerische Mathematik* 24, 375-382.

    Examples
    --------
    >>> from skfunc.datasets import make_smooth_regression
    >>> from skfunc.linear_model import FunctionalLogisticRegression
    >>> X, outcome, _ = make_smooth_regression(200, grid=101, noise=0.5, random_state=0)
    >>> y = (outcome > 0).astype(int)
    >>> clf = FunctionalLogisticRegression().fit(X, y)
    >>> clf.predict_proba(X[:2]).shape
    (2, 2)
    >>> bool(clf.alphas_path_[0] <= clf.alpha_ <= clf.alphas_path_[-1])
    True
    """

    #: each Newton step is one pass of summed statistics over the row blocks,
    #: so dask arrays are fitted where they are
    _accepts_dask = True

    _parameter_constraints = {
        **DESIGN_CONSTRAINTS,
        **PERIOD_CONSTRAINT,
        "alpha": ALPHA_CONSTRAINT,
        "class_weight": [dict, StrOptions({"balanced"}), None],
        "max_iter": [Interval(Integral, 1, None, closed="left")],
        "tol": [Interval(Real, 0, None, closed="left")],
    }

    def __init__(self, alpha="auto", *, basis="bspline", n_basis=None, degree=3,
                 interior_knots=None, penalty_order=2, period=None, n_covariates=0,
                 fit_intercept=True, class_weight=None, max_iter=100, tol=1e-10,
                 grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    @fill_doc
    def fit(self, X, y, sample_weight=None):
        """Fit the coefficient functions by penalized maximum likelihood.

        Parameters
        ----------
        %(scalar_outcome_X)s
            A Dask array is fitted where its blocks are: each Newton step is
            one pass of summed gradients and Hessians over the row blocks.
        y : array-like of shape (n_samples,)
            Class labels.
        %(fit_weights_returns)s
        """
        self._validate_params()
        X, y = self._validate_curves(X, y, reset=True, ensure_min_samples=2)
        self.classes_ = _classes(y)
        if self.classes_.size < 2:
            raise ValueError(
                "FunctionalLogisticRegression needs samples of at least 2 classes "
                f"in y; got only one class: {self.classes_[0]!r}."
            )
        sample_weight = check_sample_weight(sample_weight, X)
        Y, weight = _indicators(y, self.classes_, sample_weight, self.class_weight)
        basis = self._basis()
        operator = self._integration_operator(basis)
        # Dask workers in this process (a LocalCluster of threads) would run
        # multi-threaded BLAS on top of one another: one thread each
        with single_thread_blas() if is_dask_array(X) else contextlib.nullcontext():
            design = IntegratedDesign(X, Y, weight, operator, self.n_covariates)
            self._solve(design, Y, weight, basis)
        return check_finite_fit(self)

    def _solve(self, design, Y, weight, basis):
        stats = design.stats
        totals = np.r_[stats["sw"] - stats["y_sum"].sum(), stats["y_sum"]] \
            if self.classes_.size == 2 else stats["y_sum"]
        if np.any(totals <= 0):
            raise ValueError(
                "FunctionalLogisticRegression needs a positive total sample weight "
                f"in every class of y; class {self.classes_[np.argmin(totals)]!r} "
                "has total weight 0. Drop its rows from X and y, or give them weight."
            )
        alpha = check_alpha(self.alpha)
        k = basis.n_basis
        lead = int(self.fit_intercept)
        if lead:
            gram, _, _, z_mean, _ = centered(stats)
        else:
            gram, z_mean = stats["zz"], np.zeros(stats["zz"].shape[0])
        # (several channels: each channel's roughness on its own scale)
        penalty = channel_penalty(basis, self.penalty_order, gram).extend(self.n_covariates)
        scale = penalty_scale(gram, penalty)
        fixed = isinstance(alpha, float)
        ridge = (np.zeros_like(gram) if fixed and alpha == 0
                 else self._ridge(gram, basis, scale, penalty.metric))
        path = self._split_path(gram + ridge, basis, stats["n"], scale=scale)
        if fixed and alpha == 0:
            self._check_identified(path, stats["n"])
        U = path.eigvecs
        # the design in the path's coordinates: U' (G + R) U = diag(g), and
        # the roughness is exactly diag(p) (the null space first, exactly 0)
        # (in the units of the statistics: the design divided by the merged
        # powers of two, so no square of X overflows or underflows)
        z_exp = np.asarray(stats["x_exp"])
        D = design.newton_rows(z_exp, z_mean, U, lead)
        column_size = np.concatenate([[stats["sw"]] * lead, np.diag(U.T @ gram @ U)])
        ridge_theta = np.zeros((lead + U.shape[1],) * 2)
        ridge_theta[lead:, lead:] = U.T @ ridge @ U
        problem = LogisticProblem(
            D, Y, weight, penalized=np.concatenate([np.zeros(lead, bool), path.p > 0]),
            scale=scale, ridge=ridge_theta, fit_intercept=lead,
            class_sums=stats["y_sum"], total_weight=stats["sw"],
            column_size=column_size,
        )
        # the engine's candidates for the curvature of the intercept-only
        # fit: from nearly the null-space fit to nearly the full basis
        freq = stats["y_sum"] / stats["sw"]
        curvature = max(float(np.mean(freq * (1 - freq))), 1e-3)
        alphas = candidates_for(
            alpha, SplitPath(curvature * gram + ridge, penalty, scale=scale), N_ALPHAS)
        fit = problem.path(alphas, self.tol, self.max_iter)
        j, theta = fit["best"], fit["theta"]
        self.alpha_ = float(alphas[j])
        self.alphas_path_ = alphas
        self.criterion_path_ = fit["criterion"]
        self.edf_path_ = fit["edf"]
        self.n_iter_ = fit["n_iter"]
        self._warn_convergence(fit["converged"], fit["saturated"])
        n_out = theta.shape[0]
        covariance = coef_covariance(problem, fit["hess"], self.alpha_)
        U_f = U[:k]
        blocks = np.stack([U_f @ covariance[c, lead:, c, lead:] @ U_f.T
                           for c in range(n_out)])
        coef = theta[:, lead:] @ U.T
        intercept = theta[:, 0] - coef @ z_mean if lead else np.zeros(n_out)
        # back to the data's units: coefficients of Z / 2**z_exp are those of
        # Z times 2**-z_exp (the curves' share one exponent, z_exp[0])
        curves = {"x_exp": int(z_exp[0]), "y_exp": 0}
        self._set_coefficients(
            basis, to_data_units(coef, stats, -1, 0, "coef_"), intercept,
            to_data_units(blocks, curves, -2, 0, "coef_covariance_"), squeeze=False)
        return self

    def _ridge(self, gram, basis, scale, metric):
        """The fixed ridge ``R`` in the coefficients ``[c, gamma]``.

        ``RIDGE * scale * int_0^1 beta^2`` on beta (scale: the engine weight
        of alpha = 1, so the ridge is unit-free like alpha; ``metric`` the
        penalty's unit-domain Gram matrix, with several channels each
        channel's scaled by its own data scale) and ``RIDGE`` times each
        covariate's own weighted variance on the covariates.
        """
        k = basis.n_basis
        ridge = np.zeros_like(gram)
        ridge[:k, :k] = RIDGE * scale * metric
        size = np.diag(gram)[k:]
        ridge[k:, k:] = np.diag(RIDGE * np.where(size > 0, size, 1.0))
        return ridge

    def _warn_convergence(self, converged, saturated):
        if not converged:
            advice = (
                " alpha=0 has no finite optimum when the classes are separable by "
                "the curves: use alpha='auto' or alpha > 0."
                if self.alpha_ == 0
                else ""
            )
            warnings.warn(
                f"FunctionalLogisticRegression did not converge in max_iter="
                f"{self.max_iter} Newton iterations at alpha={self.alpha_:.3g}; "
                f"increase max_iter.{advice}",
                ConvergenceWarning,
                stacklevel=4,
            )
        elif saturated:
            warnings.warn(
                "FunctionalLogisticRegression did not converge to a finite "
                "maximum: fitted probabilities numerically 0 or 1 occurred, so "
                "the classes are probably separable by the curves and the "
                "unpenalized (alpha=0) coefficients diverge; use alpha='auto' or "
                "alpha > 0, which keep them finite.",
                ConvergenceWarning,
                stacklevel=4,
            )

    @fill_doc
    def decision_function(self, X):
        """Log-odds of ``classes_[1]`` (binary) or class scores (multinomial).

        %(scalar_outcome_predict_X)s

        Returns
        -------
        scores : ndarray of shape (n_samples,) or (n_samples, n_classes)
            Positive log-odds favour ``classes_[1]``; with more than two
            classes, the largest score is the most probable class.
        """
        scores = self._linear_predictor(X)
        return scores[:, 0] if scores.shape[1] == 1 else scores

    def predict_proba(self, X):
        """Class probabilities of the curves in X, shape (n_samples, n_classes)
        (a lazy Dask array for Dask input)."""
        return apply_rows(probabilities, self._linear_predictor(X), self.classes_.size)

    def predict_log_proba(self, X):
        """Logarithms of :meth:`predict_proba`, shape (n_samples, n_classes)."""
        return apply_rows(log_probabilities, self._linear_predictor(X),
                          self.classes_.size)

    @fill_doc
    def predict(self, X):
        """Most probable class.

        %(scalar_outcome_predict_X)s

        Returns
        -------
        labels : ndarray of shape (n_samples,)
            Entries of ``classes_`` (a lazy Dask array for Dask input).
        """
        eta = self._linear_predictor(X)
        if is_dask_array(eta):
            return eta.map_blocks(labels, classes=self.classes_, drop_axis=1,
                                  dtype=self.classes_.dtype)
        return labels(eta, self.classes_)


def log_probabilities(eta):
    """Log class probabilities from the linear predictor (n, 1 or T) (a
    row-block function): the log-odds of ``classes_[1]`` for one column."""
    if eta.shape[1] == 1:
        return -np.logaddexp(0.0, np.column_stack([eta[:, 0], -eta[:, 0]]))
    return eta - logsumexp(eta, axis=1, keepdims=True)


def probabilities(eta):
    """Class probabilities from the linear predictor (a row-block function)."""
    return np.exp(log_probabilities(eta))


def labels(eta, classes):
    """The most probable class of each row (a row-block function)."""
    index = (eta[:, 0] > 0).astype(int) if eta.shape[1] == 1 else eta.argmax(axis=1)
    return classes[index]


def _classes(y):
    """Sorted class labels of y, checked to be labels (computed on the
    workers for a Dask y, whose labels alone are checked)."""
    if not is_dask_array(y):
        check_classification_targets(y)
        return np.unique(y)
    import dask.array as da

    classes = np.asarray(da.unique(y).compute())
    with warnings.catch_warnings():
        # the distinct labels are all unique, which the check would call a
        # hint of a regression target: only the values are checked here
        warnings.filterwarnings("ignore", "The number of unique classes",
                                UserWarning)
        check_classification_targets(classes)
    return classes


def _indicators(y, classes, sample_weight, class_weight):
    """0/1 indicators of the classes (one column for two classes) and the
    row weights times the class weights, lazily for a Dask y."""
    if class_weight is None:
        factors = np.ones(classes.size)
    elif isinstance(class_weight, str):  # "balanced": n / (n_classes * count)
        counts = compute_statistics(partial(class_counts, classes=classes), y)["counts"]
        factors = counts.sum() / (classes.size * np.where(counts > 0, counts, 1))
    else:
        factors = compute_class_weight(class_weight, classes=classes, y=classes)
    n_out = 1 if classes.size == 2 else classes.size
    Y = apply_rows(indicators, y[:, None], n_out, classes=classes)
    if is_dask_array(y):
        sample_weight = _along_rows_of(y, sample_weight)
    weight = sample_weight * apply_rows(class_factors, y[:, None], classes=classes,
                                        factors=factors)
    if is_dask_array(y):
        import dask

        # read by the design pass and by every Newton step: computed once,
        # kept where the rows are
        Y, weight = dask.persist(Y, weight)
    return Y, weight


def indicators(y, classes):
    """0/1 indicators of ``classes`` for a column of labels; the column of
    ``classes[1]`` alone for two classes (a row-block function)."""
    Y = (y == classes[None, :]).astype(np.float64)
    return Y[:, 1:] if classes.size == 2 else Y


def class_factors(y, classes, factors):
    """Class weight of each row (a row-block function)."""
    return factors[np.searchsorted(classes, y[:, 0])]


def class_counts(y, classes):
    """Row counts per class (additive statistics)."""
    return {"counts": np.bincount(np.searchsorted(classes, y), minlength=classes.size)}
