"""FunctionalLogisticRegression: a class label from a curve.

Penalized maximum likelihood on the integrated design (see
:mod:`skfunc._integrated_design`), solved by Newton's method (penalized
iteratively reweighted least squares) with a backtracking line search. What
each iteration needs from the data — loss, gradient and Hessian — is a sum
over rows (:func:`newton_statistics`), so chunked or distributed fits can
reuse it.
"""

import warnings
from numbers import Integral, Real

import numpy as np
from scipy.special import expit, logsumexp
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.exceptions import ConvergenceWarning
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.class_weight import compute_sample_weight
from sklearn.utils.multiclass import check_classification_targets

from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import check_finite_fit
from ._integrated_design import (
    ALPHA_CONSTRAINT,
    DESIGN_CONSTRAINTS,
    IntegratedDesignMixin,
)
from ._penalized import centered, cross_products
from ._weights import check_sample_weight


def newton_statistics(D, Y, sample_weight, theta, derivatives=True):
    """Negative log-likelihood, gradient and Hessian summed over rows.

    Parameters
    ----------
    D : ndarray of shape (n, p)
        Design rows (first column: ones for the intercept).
    Y : ndarray of shape (n, T)
        0/1 labels: one column for the binary (logistic) model, one column
        per class for the multinomial model.
    sample_weight : ndarray of shape (n,)
    theta : ndarray of shape (T, p)
    derivatives : bool, default=True
        False to compute the loss only.

    Returns
    -------
    loss : float
    grad : ndarray of shape (T * p,)
        Only when ``derivatives``.
    hess : ndarray of shape (T * p, T * p)
        Only when ``derivatives``.
    """
    eta = D @ theta.T
    n_out, p = theta.shape
    if n_out == 1:
        prob = expit(eta)
        loss = sample_weight @ (np.logaddexp(0.0, eta[:, 0]) - Y[:, 0] * eta[:, 0])
        curvature = (prob * (1 - prob))[:, :, None]  # (n, 1, 1)
    else:
        log_norm = logsumexp(eta, axis=1)
        prob = np.exp(eta - log_norm[:, None])
        loss = sample_weight @ (log_norm - np.sum(Y * eta, axis=1))
        curvature = (
            np.eye(n_out) * prob[:, :, None] - prob[:, :, None] * prob[:, None, :]
        )
    if not derivatives:
        return float(loss)
    grad = ((prob - Y) * sample_weight[:, None]).T @ D
    hess = np.zeros((n_out, p, n_out, p))
    for a in range(n_out):
        for b in range(a, n_out):
            block = (D * (sample_weight * curvature[:, a, b])[:, None]).T @ D
            hess[a, :, b, :] = block
            hess[b, :, a, :] = block.T
    return float(loss), grad.ravel(), hess.reshape(n_out * p, n_out * p)


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
    alpha : float, default=1.0
        Roughness penalty weight; 0 for unpenalized maximum likelihood.
        With ``penalty_order=0`` in an orthonormal basis, ``alpha`` equals
        ``1 / C`` of :class:`sklearn.linear_model.LogisticRegression`.
    %(scalar_outcome)s
    class_weight : dict, "balanced" or None, default=None
        Weights of the classes, multiplied into ``sample_weight``, as in
        scikit-learn's classifiers.
    max_iter : int, default=100
        Maximum number of Newton iterations.
    tol : float, default=1e-10
        Stop after a Newton step whose half squared Newton decrement (the
        predicted decrease of the objective) is below
        ``tol * (1 + |objective|)``.

    Attributes
    ----------
    classes_ : ndarray of shape (n_classes,)
        Class labels.
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
        Number of Newton iterations run.
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
    The objective is ``sum_i w_i l_i + alpha/2 sum_c c_c' P c_c`` (``l_i`` the
    negative log-likelihood of curve ``i``); it is minimised by Newton's
    method, which is penalized iteratively reweighted least squares. The
    multinomial model uses one coefficient set per class and the centered
    solution (sum over classes zero), as the softmax leaves a common shift
    undetermined.

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

    Examples
    --------
    >>> from skfunc.datasets import make_smooth_regression
    >>> from skfunc.linear_model import FunctionalLogisticRegression
    >>> X, outcome, _ = make_smooth_regression(200, grid=101, noise=0.5, random_state=0)
    >>> y = (outcome > 0).astype(int)
    >>> clf = FunctionalLogisticRegression(alpha=1e-4, n_basis=8).fit(X, y)
    >>> clf.predict_proba(X[:2]).shape
    (2, 2)
    """

    _parameter_constraints = {
        **DESIGN_CONSTRAINTS,
        "alpha": ALPHA_CONSTRAINT,
        "class_weight": [dict, StrOptions({"balanced"}), None],
        "max_iter": [Interval(Integral, 1, None, closed="left")],
        "tol": [Interval(Real, 0, None, closed="left")],
    }

    def __init__(self, alpha=1.0, *, basis="bspline", n_basis=None, degree=3,
                 interior_knots=None, penalty_order=2, n_covariates=0,
                 fit_intercept=True, class_weight=None, max_iter=100, tol=1e-10,
                 grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    @fill_doc
    def fit(self, X, y, sample_weight=None):
        """Fit the coefficient functions by penalized maximum likelihood.

        Parameters
        ----------
        %(scalar_outcome_X)s
        y : array-like of shape (n_samples,)
            Class labels.
        %(fit_weights_returns)s
        """
        self._validate_params()
        X, y = self._validate_curves(X, y, reset=True, ensure_min_samples=2)
        check_classification_targets(y)
        self.classes_, y_index = np.unique(y, return_inverse=True)
        if self.classes_.size < 2:
            raise ValueError(
                "FunctionalLogisticRegression needs samples of at least 2 classes "
                f"in y; got only one class: {self.classes_[0]!r}."
            )
        sample_weight = check_sample_weight(sample_weight, X)
        if self.class_weight is not None:
            sample_weight = sample_weight * compute_sample_weight(self.class_weight, y)
        basis = self._basis()
        Z = self._design(X, self._integration_operator(basis))
        if self.classes_.size == 2:
            Y = (y_index == 1).astype(np.float64)[:, None]
        else:
            Y = np.eye(self.classes_.size)[y_index]
        return check_finite_fit(self._solve(Z, Y, sample_weight, basis))

    def _solve(self, Z, Y, sample_weight, basis):
        penalty = self._penalty(basis)
        stats = cross_products(Z, Y, sample_weight)
        zz = centered(stats)[0] if self.fit_intercept else stats["zz"]
        self._checked_path(zz, penalty, self.alpha, stats["n"])
        # design of the centered curves, led by a column for the intercept
        z_mean = stats["z_sum"] / stats["sw"] if self.fit_intercept else 0.0
        lead = int(self.fit_intercept)
        D = np.hstack([np.ones((Z.shape[0], lead)), Z - z_mean])
        n_out, p = Y.shape[1], D.shape[1]
        roughness = np.kron(
            np.eye(n_out), self.alpha * np.pad(penalty, ((lead, 0),) * 2)
        )
        # The softmax is unchanged by a common shift of all classes'
        # coefficients; a penalty on their sum over classes selects the
        # centered solution without moving the optimum (whose sum is zero)
        # and makes the Hessian invertible.
        scale = np.diag(np.maximum(sample_weight @ D**2, 1.0)) / n_out
        shift = np.kron(np.ones((n_out, n_out)), scale) if n_out > 1 else 0.0
        quadratic = roughness + shift

        def objective(theta, derivatives=True):
            """Penalized loss (, gradient, Hessian of the likelihood part)."""
            flat = theta.ravel()
            value = flat @ quadratic @ flat / 2
            if not derivatives:
                return value + newton_statistics(D, Y, sample_weight, theta, False)
            loss, grad, hess = newton_statistics(D, Y, sample_weight, theta)
            return value + loss, grad + quadratic @ flat, hess

        theta = np.zeros((n_out, p))
        value, grad, hess = objective(theta)
        converged = False
        for n_iter in range(1, self.max_iter + 1):
            self.n_iter_ = n_iter
            step = _newton_step(hess + quadratic, grad)
            decrement = grad @ step
            size = 1.0
            while True:
                trial = theta - size * step.reshape(n_out, p)
                trial_value = objective(trial, derivatives=False)
                if trial_value <= value - 1e-4 * size * decrement or size < 1e-10:
                    break
                size /= 2
            theta = trial
            value, grad, hess = objective(theta)
            if decrement / 2 <= self.tol * (1.0 + abs(value)):
                converged = True  # after a last step: Newton converges fast
                break
        if not converged:
            warnings.warn(
                f"FunctionalLogisticRegression did not converge in max_iter="
                f"{self.max_iter} Newton iterations (the classes may be "
                "separable by the curves); increase alpha or max_iter.",
                ConvergenceWarning,
                stacklevel=3,
            )
        elif _saturated(D @ theta.T, sample_weight):
            warnings.warn(
                "FunctionalLogisticRegression did not converge to a finite "
                "maximum: fitted probabilities numerically 0 or 1 occurred, so "
                "the classes are probably separable by the unpenalized part of "
                "the model and the coefficients diverge; increase alpha.",
                ConvergenceWarning,
                stacklevel=3,
            )
        k = basis.n_basis
        covariance = np.linalg.pinv(hess + roughness).reshape(n_out, p, n_out, p)
        blocks = np.stack(
            [covariance[c, lead : lead + k, c, lead : lead + k] for c in range(n_out)]
        )
        coef = theta[:, lead:]
        intercept = theta[:, 0] - coef @ z_mean if lead else np.zeros(n_out)
        self._set_coefficients(basis, coef, intercept, blocks, squeeze=False)
        return self

    def decision_function(self, X):
        """Log-odds of ``classes_[1]`` (binary) or class scores (multinomial).

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)

        Returns
        -------
        scores : ndarray of shape (n_samples,) or (n_samples, n_classes)
        """
        scores = self._linear_predictor(X)
        return scores[:, 0] if scores.shape[1] == 1 else scores

    def predict_proba(self, X):
        """Class probabilities of the curves in X, shape (n_samples, n_classes)."""
        scores = self.decision_function(X)
        if scores.ndim == 1:
            p = expit(scores)
            return np.column_stack([1 - p, p])
        return np.exp(scores - logsumexp(scores, axis=1, keepdims=True))

    def predict_log_proba(self, X):
        """Logarithms of :meth:`predict_proba`, shape (n_samples, n_classes)."""
        scores = self.decision_function(X)
        if scores.ndim == 1:
            return -np.logaddexp(0.0, np.column_stack([scores, -scores]))
        return scores - logsumexp(scores, axis=1, keepdims=True)

    def predict(self, X):
        """Most probable class.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)

        Returns
        -------
        labels : ndarray of shape (n_samples,)
        """
        scores = self.decision_function(X)
        index = (scores > 0).astype(int) if scores.ndim == 1 else scores.argmax(axis=1)
        return self.classes_[index]


def _saturated(eta, sample_weight, eps=1e-12):
    """Whether a weighted row has a fitted probability within eps of 0 or 1,
    the usual symptom of separation (common practice in GLM software)."""
    if eta.shape[1] == 1:
        eta = np.column_stack([np.zeros(len(eta)), eta])
    log_prob = eta - logsumexp(eta, axis=1, keepdims=True)
    rows = sample_weight > 0
    return bool(np.any(log_prob[rows] < np.log(eps)))


def _newton_step(hess, grad):
    try:
        return np.linalg.solve(hess, grad)
    except np.linalg.LinAlgError:
        return np.linalg.lstsq(hess, grad, rcond=None)[0]
