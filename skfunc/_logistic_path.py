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

from functools import partial

import numpy as np
from scipy.linalg import (
    LinAlgError,
    cho_factor,
    cho_solve,
)
from scipy.linalg.lapack import dpotrf, dpotri
from scipy.special import expit

from ._alpha import best_index
from ._blocks import (
    KeptRows,
    cache_rows,
    in_pieces,
    is_dask_array,
    kept_blocks,
    reduce_delayed,
    row_blocks,
    scratch,
    single_thread_blas_up_to,
)
from ._integrated_design import scaled_integrated_design
from ._penalized import centered_cross_products
from ._penalized import merge as merge_sums

#: what the smallest candidate means for the classifier: training classes
#: that a smooth beta separates make the likelihood keep improving as the
#: roughness penalty vanishes, until the small ridge on beta holds the fit
SEPARABLE_EDGE_ADVICE = (
    "nearly no roughness penalty: the fit is held by the small ridge on beta "
    "alone, as happens when the training classes are (nearly) separable; "
    "compare with a fixed alpha by cross-validation (GridSearchCV) before "
    "trusting it"
)

#: the fixed ridge for alpha > 0: ``RIDGE * scale * int_0^1 beta^2`` on beta
#: and ``RIDGE`` times each covariate's own variance on the covariates; see
#: FunctionalLogisticRegression's Notes. Chosen on open test splits, then
#: checked on data not used for it (training-split 5-fold CV; statsmodels'
#: fertility and El Nino curves: tests/benchmarks/bench_logistic.py
#: --ridge): accuracy is flat between 1e-5 and 1e-2, 1e-4 and 1e-3 best on
#: held-out training folds (docs/open_data.rst)
RIDGE = 1e-3

#: number of candidate alphas of ``alpha="auto"``: fewer than the 25 of the
#: least-squares estimators (skfunc._alpha.N_ALPHAS), whose candidates cost a
#: closed-form score each, where here each costs a Newton fit; over the same
#: edf range. Measured on nine UCR sets, 25 moves the test accuracy by at
#: most two curves of 40 (four of 900), as often up as down (docs/open_data.rst)
N_ALPHAS = 12

#: relative Newton tolerance of the fits along the path: warm-started from
#: the previous candidate (whose sums over the rows serve again, the penalty
#: being added in closed form), usually one Newton step, one pass over the
#: rows, per candidate; the chosen fit is then refined to the estimator's
#: ``tol``. Measured on nine UCR sets: the same choices as 1e-3 on seven,
#: within one test curve on the small ones, at half the Newton iterations
PATH_TOL = 1e-1


def newton_statistics(D, Y, sample_weight, theta, derivatives=True):
    """Negative log-likelihood, gradient and Hessian summed over rows.

    Additive over rows: statistics of row blocks combine with
    :func:`skfunc._penalized.merge` (key by key), so a Newton step over a
    Dask array is one pass over its blocks.

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
    dict with ``loss`` (float) and, when ``derivatives``, ``grad`` (T * p,)
    and ``hess`` (T * p, T * p).
    """
    D = np.asarray(D, dtype=np.float64)
    Y = np.asarray(Y, dtype=np.float64)
    eta = D @ theta.T
    n_out, p = theta.shape
    loss = float(sample_weight @ _row_loss(eta, Y))
    if not derivatives:
        return {"loss": loss}
    prob = expit(eta) if n_out == 1 else np.exp(eta - _logsumexp(eta)[:, None])
    grad = ((prob - Y) * sample_weight[:, None]).T @ D
    # the design times the square roots of the row weights, the largest
    # temporary, in a reused buffer; A' A is one symmetric product (BLAS
    # syrk through numpy: half the flops of a general product)
    if n_out == 1:
        root = np.sqrt(sample_weight * (prob * (1 - prob))[:, 0])
        A = np.multiply(D, root[:, None], out=scratch(D.shape))
        hess = A.T @ A
    else:
        # H[a, b] = sum_i w_i (delta_ab p_ia - p_ia p_ib) d_i d_i': the
        # block diagonal D' diag(w p_a) D less F' diag(w) F, with the rows of
        # F the products p_i (x) d_i (n x T p values, not the n x T^2 p of
        # one weighted copy of the design per pair of classes)
        weighted = D * np.sqrt(sample_weight)[:, None]
        F = np.multiply(prob[:, :, None], weighted[:, None, :],
                        out=scratch((len(D), n_out, p))).reshape(len(D), -1)
        hess = -(F.T @ F)
        blocks = (weighted.T @ F).reshape(p, n_out, p).transpose(1, 0, 2)
        classes = np.arange(n_out)
        hess.reshape(n_out, p, n_out, p)[classes, :, classes, :] += blocks
    return {"loss": loss, "grad": grad.ravel(), "hess": hess.reshape(n_out * p, n_out * p)}


def design_block(X, Y, sample_weight, operator, n_covariates):
    """The integrated design of a block of curves divided by powers of two
    as the least-squares models' design
    (:func:`~skfunc._integrated_design.scaled_integrated_design`), and its
    additive statistics: ``(Z / 2**x_exp, stats)``.

    The statistics are :func:`~skfunc._penalized.centered_cross_products`
    with the class indicators as responses (their sums are the class
    totals), with the exponents ``x_exp`` per column and ``y_exp`` 0 (for
    the 0/1 indicators), merged exactly by :func:`~skfunc._penalized.merge`
    whatever each block's scale."""
    Z, z_exp = scaled_integrated_design(X, operator, n_covariates)
    stats = centered_cross_products(Z, Y, sample_weight)
    stats.update(x_exp=z_exp, y_exp=0)
    return Z, stats


def kept_split_design(block, z_exp, z_mean, U, lead):
    """Rows of the Newton design, ``[1, (Z / 2**z_exp - z_mean) U]``, from a
    :func:`design_block` result ``(Z / 2**x_exp, stats)``: its design,
    divided by its own block's powers of two, is brought to the merged
    exponents ``z_exp`` by powers of two (exact), so the rows need no second
    pass over the curves (``lead`` is 1 with an intercept column, else 0)."""
    Z, stats = block
    return _split_rows(Z, np.asarray(stats["x_exp"]) - z_exp, z_mean, U, lead)


def _split_rows(Z, shift, z_mean, U, lead):
    """``[1, (Z * 2**shift - z_mean) U]``, in cache-sized row pieces (their
    temporaries in a reused :func:`~skfunc._blocks.scratch` buffer)."""
    out = np.empty((len(Z), lead + U.shape[1]))
    out[:, :lead] = 1.0
    # times a power of two per column (exact; a fifth of np.ldexp's time),
    # np.ldexp where the power itself is not a normal float
    factor = np.ldexp(1.0, shift) if np.all(np.abs(shift) <= 1022) else None
    for rows in row_blocks(len(Z), Z.shape[1], rows=cache_rows(Z.shape[1])):
        piece = scratch((rows.stop - rows.start, Z.shape[1]))
        if factor is None:
            np.ldexp(Z[rows], shift, out=piece)
        else:
            np.multiply(Z[rows], factor, out=piece)
        piece -= z_mean
        out[rows, lead:] = piece @ U
    return out


class IntegratedDesign:
    """The integrated design of curves ``X``: its merged statistics (one pass
    over the curves, at construction) and the rows of the Newton design in
    a fit's coordinates (:meth:`newton_rows`).

    The design of each row block (n x K, small beside the curves) is kept by
    the statistics pass (for a Dask ``X`` on the workers), and the Newton
    rows are formed from it: the curves are read once (a second pass over
    them was a fifth of an in-memory fit).
    """

    def __init__(self, X, Y, sample_weight, operator, n_covariates):
        self.X = X
        block = partial(design_block, operator=operator, n_covariates=n_covariates)
        if is_dask_array(X):
            self._kept = kept_blocks(block, X, Y, sample_weight)
            self.stats = reduce_delayed(_statistics_of, [(part,) for part in self._kept])
        else:
            width = X.shape[1] + np.shape(Y)[1] + 1
            self._kept = [block(X[rows], Y[rows],
                                None if sample_weight is None else sample_weight[rows])
                          for rows in row_blocks(X.shape[0], width)]
            self.stats = merge_sums(*(_statistics_of(part) for part in self._kept))

    def newton_rows(self, z_exp, z_mean, U, lead):
        """:func:`kept_split_design` of every row (lazily, a dask array, for
        Dask X); for numpy X each kept block is let go once its rows are
        formed."""
        if not is_dask_array(self.X):
            out = np.empty((self.X.shape[0], lead + U.shape[1]))
            start = 0
            for i, part in enumerate(self._kept):
                rows = kept_split_design(part, z_exp, z_mean, U, lead)
                out[start:start + len(rows)] = rows
                start += len(rows)
                self._kept[i] = None
            return out
        import dask
        import dask.array as da

        rows = dask.delayed(kept_split_design, pure=True)
        return da.concatenate([
            da.from_delayed(rows(part, z_exp, z_mean, U, lead),
                            (n, lead + U.shape[1]), dtype=np.float64)
            for part, n in zip(self._kept, self.X.chunks[0], strict=True)
        ])


def _statistics_of(block):
    """The statistics of a :func:`design_block` result."""
    return block[1]


def saturated_rows(D, Y, sample_weight, theta, eps=1e-12):
    """Rows of positive weight whose fitted probability of some class is
    within ``eps`` of 0 or 1, the usual symptom of separation (common
    practice in GLM software); additive over row blocks."""
    eta = np.asarray(D, dtype=np.float64) @ theta.T
    if eta.shape[1] == 1:
        eta = np.column_stack([np.zeros(len(eta)), eta])
    log_prob = eta - _logsumexp(eta)[:, None]
    rows = (sample_weight > 0) & np.any(log_prob < np.log(eps), axis=1)
    return {"saturated": int(rows.sum())}


class LogisticProblem:
    """A penalized logistic likelihood in the split engine's coordinates.

    The objective of one class's coefficients ``theta`` (rows of ``(T, p)``)
    is ``sum_i w_i l_i + theta' Q(alpha) theta / 2`` with

        Q(alpha) = alpha * scale * diag(penalized) + ridge,

    the roughness exactly diagonal (the coordinates of a
    :class:`~skfunc._penalized.SplitPath`) and a fixed small ridge.

    Parameters
    ----------
    D : ndarray or dask array of shape (n, p)
        Design: a column of ones when the intercept is fitted, then the
        centred integrated design and covariates in the path's coordinates.
    Y : ndarray or dask array of shape (n, T)
    sample_weight : ndarray or dask array of shape (n,)
    penalized : ndarray of bool, shape (p,)
        Columns the roughness penalty acts on.
    scale : float
        Engine weight of ``alpha = 1``
        (:func:`~skfunc._penalized.penalty_scale` of the centred design).
    ridge : ndarray of shape (p, p)
        The fixed ridge (zero on the intercept); applied for ``alpha > 0``.
    fit_intercept : bool
        Whether the first column of ``D`` is the intercept's.
    class_sums : ndarray of shape (T,)
        ``sum_i w_i Y_i``: the class totals (the intercept-only fit).
    total_weight : float
        ``sum_i w_i``.
    column_size : ndarray of shape (p,)
        ``sum_i w_i D_ij^2`` (the multinomial shift penalty's weights).
    """

    def __init__(self, D, Y, sample_weight, *, penalized, scale, ridge,
                 fit_intercept, class_sums, total_weight, column_size):
        # read by every Newton step: Dask arrays are kept on the workers
        self.rows = KeptRows(D, Y, sample_weight)
        self.D, self.Y, self.sample_weight = self.rows.arrays
        self.penalized = np.asarray(penalized, dtype=bool)
        self.scale = float(scale)
        self.ridge = ridge
        self.fit_intercept = bool(fit_intercept)
        self.class_sums = np.atleast_1d(np.asarray(class_sums, dtype=np.float64))
        self.total_weight = float(total_weight)
        n_out, p = self.shape
        if n_out > 1:
            # The softmax is unchanged by a common shift of all classes'
            # coefficients; a penalty on their sum over classes selects the
            # centred solution without moving the optimum (whose sum is
            # zero) and makes the Hessian invertible.
            shift_size = np.where(column_size > 0, column_size, 1.0) / n_out
            self.shift = np.kron(np.ones((n_out, n_out)), np.diag(shift_size))
        else:
            self.shift = np.zeros((p, p))
        self.n_passes = 0

    @property
    def shape(self):
        return self.class_sums.size, self.penalized.size

    def quadratic(self, alpha):
        """The penalty's Hessian for all classes, ``kron(I, Q) + shift``."""
        n_out, p = self.shape
        if alpha == 0:
            Q = np.zeros((p, p))
        else:
            Q = self.ridge + np.diag(alpha * self.scale * self.penalized)
        return np.kron(np.eye(n_out), Q) + self.shift

    def sums(self, theta, derivatives=True):
        """:func:`newton_statistics` over the row blocks (one pass), each
        block in cache-sized row pieces (:func:`skfunc._blocks.in_pieces`:
        the per-row cost of a step does not grow once the design outgrows
        the cache)."""
        self.n_passes += 1
        return self.rows(partial(in_pieces, partial(
            newton_statistics, theta=theta, derivatives=derivatives)))

    def start(self):
        """Coefficients of the intercept-only fit (class frequencies)."""
        n_out, p = self.shape
        theta = np.zeros((n_out, p))
        if self.fit_intercept:
            freq = np.clip(self.class_sums / self.total_weight, 1e-12, 1.0)
            if n_out == 1:
                theta[0, 0] = np.log(freq[0]) - np.log1p(-min(freq[0], 1 - 1e-12))
            else:
                theta[:, 0] = np.log(freq) - np.log(freq).mean()
        return theta

    def newton(self, alpha, theta, tol, max_iter, current=None):
        """Minimise the penalized loss from ``theta`` by damped Newton steps.

        ``current`` is ``sums(theta)`` when already known. Every trial point
        is one pass computing loss, gradient and Hessian together, so an
        accepted step (the usual case) costs one pass over the rows.

        Returns ``theta, n_iter, converged, stats, quadratic`` with
        ``stats`` the sums at the returned ``theta``.
        """
        n_out, p = self.shape
        quadratic = self.quadratic(alpha)

        def penalized(theta, stats):
            flat = theta.ravel()
            return stats["loss"] + flat @ quadratic @ flat / 2

        if current is None:
            current = self.sums(theta)
        value = penalized(theta, current)
        converged, n_iter = False, 0
        while n_iter < max_iter:
            n_iter += 1
            grad = current["grad"] + quadratic @ theta.ravel()
            step = _newton_step(current["hess"] + quadratic, grad)
            decrement = grad @ step
            if not decrement > 0:  # at the optimum to rounding
                converged = True
                break
            # a decrease below sqrt(eps) of the objective is lost to rounding
            # in the line search's test: take the full step there, where the
            # objective is quadratic to rounding
            tiny = decrement / 2 <= 1.5e-8 * (1.0 + abs(value))
            size = 1.0
            while True:
                trial = theta - size * step.reshape(n_out, p)
                stats = self.sums(trial)
                trial_value = penalized(trial, stats)
                if tiny or trial_value <= value - 1e-4 * size * decrement or size < 1e-10:
                    break
                size /= 2
            theta, current, value = trial, stats, trial_value
            if decrement / 2 <= tol * (1.0 + abs(value)):
                converged = True  # after a last step: Newton converges fast
                break
        return theta, n_iter, converged, current, quadratic

    def ubre(self, stats, quadratic):
        """Un-biased risk estimate of the fit and its effective degrees of freedom.

        ``UBRE = deviance / sum(w) - 1 + 2 edf / sum(w)`` with ``edf =
        trace((H + S)^-1 H)`` (Craven and Wahba's unbiased risk estimate for
        a known dispersion, 1 for Bernoulli and multinomial data, with the
        deviance in place of the residual sum of squares: O'Sullivan, Yandell
        and Raynor, 1986; Gu, 1992; Wood, 2008). For 0/1 labels the deviance
        is twice the negative log-likelihood.
        """
        # edf = dim - trace(M^-1 S), M = H + S = L L'; M^-1 from the
        # Cholesky factor (LAPACK potrf and potri: 1 n^3 flops, against 3.3
        # n^3 for L, L^-1 and L^-1 S). potri writes the lower triangle of
        # M^-1 over L and leaves the upper one as it was, zero (potrf with
        # clean=1), so trace(M^-1 S), the elementwise sum of the symmetric
        # M^-1 * S, is twice the sum over the lower triangle less the diagonal
        lower, info = dpotrf(stats["hess"] + quadratic, lower=1, clean=1)
        if info == 0:
            inverse, info = dpotri(lower, lower=1)
        if info != 0 or not np.isfinite(lower).all():
            return np.inf, np.nan
        # (the factor is in Fortran order: its transpose meets S in C order)
        trace = 2 * np.vdot(inverse.T, quadratic) - np.diagonal(inverse) @ np.diagonal(quadratic)
        edf = len(lower) - float(trace)
        return (2 * stats["loss"] + 2 * edf) / self.total_weight - 1.0, edf

    def path(self, alphas, tol, max_iter, path_tol=None, warn=True):
        """Fit at every alpha, largest first, each fit starting from the last.

        ``alphas`` is ascending. The fits along the path stop at the looser
        ``max(tol, path_tol)``; the chosen one is then refined to ``tol``.

        Returns a dict: ``criterion`` and ``edf`` (one per alpha), ``best``
        (:func:`~skfunc._alpha.best_index`, which warns when it is an end of
        several candidates and ``warn``), ``theta``, ``stats`` and
        ``converged`` of the fit there, and ``n_iter`` (Newton iterations in
        all).
        """
        alphas = np.asarray(alphas, dtype=np.float64)
        criterion = np.full(alphas.size, np.inf)
        edf = np.full(alphas.size, np.nan)
        path_tol = PATH_TOL if path_tol is None else path_tol
        loose = max(tol, path_tol) if alphas.size > 1 else tol
        theta, current, n_iter, fits = self.start(), None, 0, {}
        with single_thread_blas_up_to(self.penalized.size * self.class_sums.size):
            for j in range(alphas.size)[::-1]:
                # the likelihood's sums at the last fit serve the next alpha
                # (the penalty is added in closed form): no pass to start
                theta, it, converged, current, quadratic = self.newton(
                    alphas[j], theta, loose, max_iter, current=current
                )
                n_iter += it
                criterion[j], edf[j] = self.ubre(current, quadratic)
                fits[j] = (theta, current)
            best = (
                best_index(criterion, alphas, criterion="UBRE", warn=warn,
                           low_advice=SEPARABLE_EDGE_ADVICE)
                if alphas.size > 1
                else 0
            )
            if loose > tol or best != 0:  # the last fit made is at index 0
                theta, it, converged, current, _ = self.newton(
                    alphas[best], fits[best][0], tol, max_iter, current=fits[best][1]
                )
                n_iter += it
        saturated = alphas[best] == 0 and self.rows(partial(
            in_pieces, partial(saturated_rows, theta=theta)))["saturated"] > 0
        return {
            "saturated": saturated,
            "criterion": criterion,
            "edf": edf,
            "best": best,
            "theta": theta,
            "hess": current["hess"],
            "converged": converged,
            "n_iter": n_iter,
        }


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


def _solve(matrix, rhs):
    """Solve with a symmetric positive definite matrix (Cholesky)."""
    return cho_solve(cho_factor(matrix), rhs)


def _newton_step(hess, grad):
    try:
        return _solve(hess, grad)
    except (np.linalg.LinAlgError, LinAlgError):
        return np.linalg.lstsq(hess, grad, rcond=None)[0]


def coef_covariance(problem, hess, alpha):
    """Inverse penalized Hessian at the optimum, of the centred coefficients.

    The penalized Hessian maps the centred and the common-shift subspaces of
    a multinomial model to themselves and the shift penalty acts on the
    latter only, so projecting its inverse onto centred coefficients gives
    the inverse on that subspace. Returns shape (T, p, T, p).
    """
    n_out, p = problem.shape
    penalized = hess + problem.quadratic(alpha)
    with single_thread_blas_up_to(n_out * p):
        try:
            inverse = _solve(penalized, np.eye(n_out * p))
        except (np.linalg.LinAlgError, LinAlgError):
            inverse = np.linalg.pinv(penalized - problem.shift, hermitian=True)
    inverse = inverse.reshape(n_out, p, n_out, p)
    if n_out > 1:  # centre over the class axes
        inverse = inverse - inverse.mean(axis=0, keepdims=True)
        inverse = inverse - inverse.mean(axis=2, keepdims=True)
    return inverse
