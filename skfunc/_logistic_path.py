"""Numerics of :class:`~skfunc.linear_model.FunctionalLogisticRegression`.

Penalized Newton (iteratively reweighted least squares) in coordinates where
the roughness penalty is diagonal with an exactly unpenalized null space, a
warm-started path over candidate alphas, and the criterion that chooses one.

References
----------
Demmler, A. and Reinsch, C. (1975). Oscillation matrices with spline
smoothing. *Numerische Mathematik* 24, 375-382.

O'Sullivan, F., Yandell, B. S. and Raynor, W. J. (1986). Automatic smoothing
of regression functions in generalized linear models. *J. Amer. Statist.
Assoc.* 81, 96-103.

Gu, C. (1992). Cross-validating non-Gaussian data. *J. Comput. Graph.
Statist.* 1, 169-179.

Wood, S. N. (2008). Fast stable direct fitting and smoothness selection for
generalized additive models. *J. R. Statist. Soc. B* 70, 495-518.
"""

import contextlib

import numpy as np
from scipy.linalg import (
    LinAlgError,
    cho_factor,
    cho_solve,
    cholesky,
    solve_triangular,
)
from scipy.special import expit
from threadpoolctl import ThreadpoolController

from ._alpha import best_index, candidates_from_eigenvalues

#: Ridge on the penalty's null space (and on scalar covariates), relative to
#: the design's own variance there; see FunctionalLogisticRegression's Notes.
NULL_SPACE_RIDGE = 1e-4

#: number of candidate alphas of ``alpha="auto"``: fewer than the 25 of the
#: least-squares estimators (skfunc._alpha.N_ALPHAS), whose candidates cost a
#: closed-form score each, where here each costs a Newton fit; over the same
#: edf range. Measured on nine UCR sets, 25 moves the test accuracy by at
#: most two curves of 40 (four of 900), as often up as down (docs/open_data.rst)
N_ALPHAS = 12

#: relative Newton tolerance of the fits along the path: with warm starts and
#: the secant predictor, usually one Newton step per candidate; the chosen
#: fit is then refined to the estimator's ``tol``. Measured on nine UCR
#: sets: the same choices as 1e-3 on seven, within one test curve on the
#: small ones, at half the Newton iterations (at most 2x a fixed-alpha fit)
PATH_TOL = 1e-1


def split_coordinates(basis, penalty):
    """``c = transform @ theta`` with the penalty exactly diagonal in theta.

    The engine's split (:class:`~skfunc._penalized.Penalty`: exact null
    space, whitened complement with ``T_C' P01 T_C = I``) with its null-space
    columns made orthonormal in L2 of the unit domain (in the penalty's
    metric), so that the null-space ridge weighs every function of the null
    space alike.
    """
    transform = penalty.transform.copy()
    r = penalty.n_null
    if r:
        null = transform[:, :r]
        # the penalty's metric: the unit-domain Gram matrix (several
        # channels: each channel's scaled by its own data scale)
        lower = np.linalg.cholesky(null.T @ penalty.metric @ null)
        transform[:, :r] = solve_triangular(lower, null.T, lower=True).T
    return transform


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
        loss = sample_weight @ (np.logaddexp(0.0, eta[:, 0]) - Y[:, 0] * eta[:, 0])
        if not derivatives:
            return float(loss)
        prob = expit(eta)
        grad = ((prob - Y) * sample_weight[:, None]).T @ D
        hess = (D * (sample_weight * (prob * (1 - prob))[:, 0])[:, None]).T @ D
        return float(loss), grad.ravel(), hess
    log_norm = _logsumexp(eta)
    loss = sample_weight @ (log_norm - np.sum(Y * eta, axis=1))
    if not derivatives:
        return float(loss)
    prob = np.exp(eta - log_norm[:, None])
    grad = ((prob - Y) * sample_weight[:, None]).T @ D
    curvature = _curvature(prob) * sample_weight[:, None, None]
    # one product: H[a, :, b, :] = D' diag(curvature[:, a, b]) D
    weighted = (curvature[:, :, :, None] * D[:, None, None, :]).reshape(len(D), -1)
    hess = (D.T @ weighted).reshape(p, n_out, n_out, p).transpose(1, 0, 2, 3)
    return float(loss), grad.ravel(), hess.reshape(n_out * p, n_out * p)


def _curvature(prob):
    """Per-row Hessian of the multinomial loss in eta: diag(p) - p p'."""
    return np.einsum("ia,ab->iab", prob, np.eye(prob.shape[1])) - (
        prob[:, :, None] * prob[:, None, :]
    )


class LogisticProblem:
    """A penalized logistic likelihood in exactly split coordinates.

    Parameters
    ----------
    D : ndarray of shape (n, p)
        Design: a column of ones when the intercept is fitted, the centred
        integrated design in the coordinates of :func:`penalty_split` (null
        space first), then the centred covariates.
    Y : ndarray of shape (n, T)
    sample_weight : ndarray of shape (n,)
    blocks : tuple of int
        Numbers of columns ``(lead, null, penalized, covariates)``.
    roughness_scale : float
        Weight of the roughness at ``alpha = 1``:
        :func:`~skfunc._penalized.penalty_scale` of the centred design.
    ridge : ndarray of shape (p,)
        The null-space ridge on every column (zero on the intercept and the
        penalized columns).
    """

    def __init__(self, D, Y, sample_weight, blocks, roughness_scale, ridge):
        self.D, self.Y, self.sample_weight = D, Y, sample_weight
        self.blocks = blocks
        self.roughness_scale = roughness_scale
        self.ridge = ridge
        lead, n_null, n_pen, _ = blocks
        self.penalized = np.zeros(D.shape[1], bool)
        self.penalized[lead + n_null : lead + n_null + n_pen] = True
        n_out, p = Y.shape[1], D.shape[1]
        if n_out > 1:
            # The softmax is unchanged by a common shift of all classes'
            # coefficients; a penalty on their sum over classes selects the
            # centred solution without moving the optimum (whose sum is
            # zero) and makes the Hessian invertible.
            size = sample_weight @ D**2
            self.shift_size = np.where(size > 0, size, 1.0) / n_out
            self.shift = np.kron(np.ones((n_out, n_out)), np.diag(self.shift_size))
        else:
            self.shift_size = np.zeros(p)
            self.shift = np.zeros((p, p))

    @property
    def shape(self):
        return self.Y.shape[1], self.D.shape[1]

    def penalty(self, alpha):
        """Diagonal of the penalty's Hessian for one class at ``alpha``."""
        if alpha == 0:
            return np.zeros(self.D.shape[1])
        return np.where(self.penalized, alpha * self.roughness_scale, self.ridge)

    def start(self):
        """Coefficients of the intercept-only fit (class frequencies)."""
        n_out, p = self.shape
        theta = np.zeros((n_out, p))
        if self.blocks[0]:
            freq = self.sample_weight @ self.Y / self.sample_weight.sum()
            freq = np.clip(freq, 1e-12, 1.0)
            if n_out == 1:
                theta[0, 0] = np.log(freq[0]) - np.log1p(-min(freq[0], 1 - 1e-12))
            else:
                theta[:, 0] = np.log(freq) - np.log(freq).mean()
        return theta

    def newton(self, alpha, theta, tol, max_iter, guess=None):
        """Minimise the penalized loss from ``theta`` by damped Newton steps.

        Returns ``theta, n_iter, converged, hess`` with ``hess`` the
        likelihood's Hessian at the returned ``theta``.
        """
        n_out, p = self.shape
        quadratic = np.kron(np.eye(n_out), np.diag(self.penalty(alpha))) + self.shift
        D, Y, w = self.D, self.Y, self.sample_weight

        def objective(theta, derivatives=True):
            flat = theta.ravel()
            value = flat @ quadratic @ flat / 2
            if not derivatives:
                return value + newton_statistics(D, Y, w, theta, False)
            loss, grad, hess = newton_statistics(D, Y, w, theta)
            return value + loss, grad + quadratic @ flat, hess

        if guess is not None and objective(guess, False) < objective(theta, False):
            theta = guess
        value, grad, hess = objective(theta)
        converged, n_iter = False, 0
        while n_iter < max_iter:
            n_iter += 1
            step = _newton_step(hess + quadratic, grad)
            decrement = grad @ step
            if not decrement > 0:  # at the optimum to rounding
                converged = True
                break
            size = 1.0
            while True:
                trial = theta - size * step.reshape(n_out, p)
                trial_value = objective(trial, derivatives=False)
                if trial_value <= value - 1e-4 * size * decrement or size < 1e-10:
                    break
                size /= 2
            theta = trial
            value, grad, hess = objective(theta)
            if decrement / 2 <= tol * (1.0 + abs(value)):
                converged = True  # after a last step: Newton converges fast
                break
        return theta, n_iter, converged, hess, quadratic

    def ubre(self, alpha, theta, hess, quadratic):
        """Un-biased risk estimate of the fit and its effective degrees of freedom.

        ``UBRE = deviance / sum(w) - 1 + 2 edf / sum(w)`` with ``edf =
        trace((H + S)^-1 H)`` (Craven and Wahba's unbiased risk estimate for
        a known dispersion, 1 for Bernoulli and multinomial data, with the
        deviance in place of the residual sum of squares: O'Sullivan, Yandell
        and Raynor, 1986; Gu, 1992; Wood, 2008). For 0/1 labels the deviance
        is twice the negative log-likelihood.
        """
        # edf = dim - trace(M^-1 S), M = H + S = L L', from the rows of L^-1:
        # diag(M^-1) for the diagonal part of S, class sums for the shift
        try:
            lower = cholesky(hess + quadratic, lower=True)
        except (np.linalg.LinAlgError, LinAlgError):
            return np.inf, np.nan
        n_out, p = self.shape
        inv_lower = solve_triangular(lower, np.eye(n_out * p), lower=True)
        diagonal = np.tile(self.penalty(alpha), n_out)
        edf = n_out * p - float(np.sum(inv_lower**2, axis=0) @ diagonal)
        if n_out > 1:
            class_sums = inv_lower.reshape(-1, n_out, p).sum(axis=1)
            edf -= float(np.sum(class_sums**2, axis=0) @ self.shift_size)
        w = self.sample_weight
        deviance = 2 * float(w @ _row_loss(self.D @ theta.T, self.Y))
        return (deviance + 2 * edf) / w.sum() - 1.0, edf

    def path(self, alphas, tol, max_iter, path_tol=None, warn=True):
        """Fit at every alpha, largest first, each fit starting from the last.

        ``alphas`` is ascending. The fits along the path stop at the looser
        ``max(tol, path_tol)``; the chosen one is then refined to ``tol``.

        Returns a dict: ``criterion`` and ``edf`` (one per alpha), ``best``
        (:func:`~skfunc._alpha.best_index`, which warns when it is an end of
        several candidates and ``warn``),
        ``theta``, ``hess`` and ``converged`` of the fit there, and ``n_iter``
        (Newton iterations in all).
        """
        alphas = np.asarray(alphas, dtype=np.float64)
        criterion = np.full(alphas.size, np.inf)
        edf = np.full(alphas.size, np.nan)
        path_tol = PATH_TOL if path_tol is None else path_tol
        loose = max(tol, path_tol) if alphas.size > 1 else tol
        theta, n_iter, fits = self.start(), 0, {}
        with _single_thread(self.D.shape[1] * self.Y.shape[1]):
            for j in range(alphas.size)[::-1]:
                # the secant through the last two fits predicts the next one
                # (equal steps in log alpha); Newton starts from the better
                guess = 2 * fits[j + 1] - fits[j + 2] if j + 2 in fits else None
                theta, it, converged, hess, quadratic = self.newton(
                    alphas[j], theta, loose, max_iter, guess=guess
                )
                n_iter += it
                criterion[j], edf[j] = self.ubre(alphas[j], theta, hess, quadratic)
                fits[j] = theta
            best = (
                best_index(criterion, alphas, criterion="UBRE", warn=warn)
                if alphas.size > 1
                else 0
            )
            if loose > tol or best != 0:  # the last fit made is at index 0
                theta, it, converged, hess, _ = self.newton(
                    alphas[best], fits[best], tol, max_iter
                )
                n_iter += it
        return {
            "criterion": criterion,
            "edf": edf,
            "best": best,
            "theta": theta,
            "hess": hess,
            "converged": converged,
            "n_iter": n_iter,
        }

    def candidate_alphas(self, n_alphas=None):
        """Log-spaced alphas spanning the effective degrees of freedom.

        The engine's candidates (:func:`~skfunc._alpha.candidates_from_eigenvalues`)
        for the eigenvalues of the penalized columns after the unpenalized
        ones are profiled out, weighted by the logistic curvature of the
        intercept-only fit: from nearly the null-space fit to nearly the
        full basis.
        """
        n_alphas = N_ALPHAS if n_alphas is None else n_alphas
        D, w = self.D, self.sample_weight
        free = D[:, ~self.penalized]
        pen = D[:, self.penalized]
        if pen.shape[1] == 0:
            return np.array([1.0])
        root = np.sqrt(w)[:, None]
        if free.shape[1]:
            coef = np.linalg.lstsq(root * free, root * pen, rcond=None)[0]
            pen = pen - free @ coef
        mu = np.linalg.eigvalsh((pen * w[:, None]).T @ pen)
        mu = mu[mu > 1e-12 * max(mu[-1], np.finfo(float).tiny)]
        freq = w @ self.Y / w.sum()
        curvature = max(float(np.mean(freq * (1 - freq))), 1e-3)
        return candidates_from_eigenvalues(
            mu * curvature, self.roughness_scale, n_alphas
        )


def _logsumexp(eta):
    """``log sum_c exp(eta[:, c])`` per row, shifted by the row maximum (a
    plain numpy version: scipy's adds milliseconds of overhead per call)."""
    top = eta.max(axis=1)
    return top + np.log(np.exp(eta - top[:, None]).sum(axis=1))


def _row_loss(eta, Y):
    """Negative log-likelihood of each row."""
    if Y.shape[1] == 1:
        return np.logaddexp(0.0, eta[:, 0]) - Y[:, 0] * eta[:, 0]
    return _logsumexp(eta) - np.sum(Y * eta, axis=1)


def _single_thread(size):
    """One BLAS thread for the small dense solves of a Newton path.

    Systems of a few hundred unknowns are bound by latency; extra BLAS
    threads only add synchronisation, which on a busy machine costs many
    times the solve itself.
    """
    global _CONTROLLER
    if size <= 4000:
        if _CONTROLLER is None:  # inspecting the loaded libraries is slow: once
            _CONTROLLER = ThreadpoolController()
        return _CONTROLLER.limit(limits=1, user_api="blas")
    return contextlib.nullcontext()


_CONTROLLER = None


def _solve(matrix, rhs):
    """Solve with a symmetric positive definite matrix (Cholesky)."""
    return cho_solve(cho_factor(matrix), rhs)


def _newton_step(hess, grad):
    try:
        return _solve(hess, grad)
    except (np.linalg.LinAlgError, LinAlgError):
        return np.linalg.lstsq(hess, grad, rcond=None)[0]


def coef_covariance(problem, theta, hess, alpha):
    """Inverse penalized Hessian at the optimum, of the centred coefficients.

    The penalized Hessian maps the centred and the common-shift subspaces of
    a multinomial model to themselves and the shift penalty acts on the
    latter only, so projecting its inverse onto centred coefficients gives
    the inverse on that subspace. Returns shape (T, p, T, p).
    """
    n_out, p = problem.shape
    penalized = hess + np.kron(np.eye(n_out), np.diag(problem.penalty(alpha)))
    with _single_thread(n_out * p):
        try:
            inverse = _solve(penalized + problem.shift, np.eye(n_out * p))
        except (np.linalg.LinAlgError, LinAlgError):
            inverse = np.linalg.pinv(penalized, hermitian=True)
    inverse = inverse.reshape(n_out, p, n_out, p)
    if n_out > 1:  # centre over the class axes
        inverse = inverse - inverse.mean(axis=0, keepdims=True)
        inverse = inverse - inverse.mean(axis=2, keepdims=True)
    return inverse
