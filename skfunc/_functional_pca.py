"""FunctionalPCA: curves in, principal component scores out.

The numeric core (coordinates, eigensolvers) is :mod:`skfunc._fpca`.
"""

from functools import partial
from numbers import Integral, Real

import numpy as np
from sklearn.base import (
    BaseEstimator,
    ClassNamePrefixFeaturesOutMixin,
    TransformerMixin,
)
from sklearn.utils import check_random_state
from sklearn.utils._param_validation import Interval, RealNotInt, StrOptions
from sklearn.utils.validation import check_is_fitted

from ._alpha import ALPHA_CONSTRAINT, check_alpha
from ._bases import BASES
from ._blocks import chunked_matmul, is_dask_array, output_dtype, single_thread_blas_up_to
from ._channels import CHANNEL_WEIGHTS, channel_coordinates, curve_weights
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveTransformerMixin
from ._fpca import (
    ComponentCurvesMixin,
    CurveCoordinates,
    covariance_directions,
    cross_validate_alpha,
    merge_fold_moments,
    pooled_moments,
    sign_convention,
    svd_directions,
)
from ._validation import (
    BASIS_CONSTRAINTS,
    CHANNEL_N_BASIS,
    basis_for,
    product_of_curves,
    validate_curves,
)

SVD_SOLVERS = ("auto", "full", "covariance_eigh", "randomized")

#: variances below this (squares of values near 1e-145) have lost their
#: digits to float64's underflow (its smallest normal number is 2.2e-308)
_SMALLEST_VARIANCE = 1e-290


@fill_doc
class FunctionalPCA(AdditiveTransformerMixin, ComponentCurvesMixin,
                    ClassNamePrefixFeaturesOutMixin, TransformerMixin, BaseEstimator):
    """Functional principal components: the main modes of variation of curves.

    Each row of ``X`` is a curve sampled on a grid. The components are the
    eigenfunctions ``phi_k`` of the sample covariance operator of the curves,
    orthonormal in L2 (``int phi_j phi_k dt = delta_jk``, integrated with
    quadrature weights, so uneven grids are handled correctly), and
    :meth:`transform` returns the scores ``<x - mean, phi_k>``. Eigenvalues
    are variances of integrals, not of sums over grid points, so they do not
    depend on how densely or evenly the curves were sampled.

    Optionally the curves are expanded in a basis, and the components are
    then smoothed with a roughness penalty (Silverman's method) whose weight
    is chosen from the training curves by cross-validation by default.

    Parameters
    ----------
    n_components : int, float or None, default=None
        Number of components to keep. An int in ``[1, min(n_samples, K)]``,
        where ``K`` is the number of grid points (no basis) or of basis
        functions; a float in (0, 1] keeps the fewest components whose
        explained variance ratios add up to at least that fraction (1.0: all
        components with variance); None keeps ``min(n_samples, K)``.
    basis : {"bspline", "fourier", "legendre"} or None, default=None
        Basis in which curves and components are expanded. None means no
        expansion: the grid values themselves are the coordinates, nothing
        is smoothed (``alpha_`` is 0), and ``n_basis``, ``interior_knots``,
        ``alpha > 0`` or candidate alphas are an error (they describe a
        basis; pass one, e.g. ``basis="bspline"``).
    n_basis : int or dict, default=None
        Number of basis functions; None means the basis' default (20
        B-splines, 21 Fourier functions, 12 Legendre polynomials) capped by
        the number of grid points. Must not exceed the number of grid points:
        each curve is fitted by least squares. With channels, a dict
        ``{channel: n_basis}`` gives each channel its own (a channel left
        out takes None).
    degree : int, default=3
        Degree of the B-splines. Ignored without a B-spline basis.
    interior_knots : array-like of shape (n_knots,) or dict, default=None
        Interior B-spline knots; None means evenly spaced. With channels, a
        dict ``{channel: knots}`` (a channel left out takes None).
    alpha : "auto", float or array-like, default="auto"
        Roughness penalty of smoothed components (with a basis): they
        maximise ``var <x, phi>`` subject to ``||phi||^2 + alpha ||D^q
        phi||^2 = 1`` with both norms taken on the domain mapped to [0, 1]
        (Silverman, 1996), then are re-orthonormalised in L2 in order. So
        alpha is unit-free: the same number smooths alike whatever the
        grid's unit or origin and the data's scale (see
        :doc:`/bases_and_penalties`); the penalty's null space (straight
        lines for ``penalty_order=2``) is never penalized. ``"auto"`` chooses
        it by 10-fold cross-validation over curves of the reconstruction
        error (see Notes) among candidates spanning every fit from nearly
        unsmoothed to nearly the null space; an array of numbers > 0 gives
        the candidates; a number >= 0 fixes it (0: ordinary components).
        Without a basis nothing is smoothed and ``"auto"`` means 0.
    penalty_order : int, default=2
        Derivative order ``q`` of the roughness penalty.
    svd_solver : {"auto", "full", "covariance_eigh", "randomized"}, default="auto"
        As in :class:`sklearn.decomposition.PCA`: "covariance_eigh" takes the
        eigendecomposition of the K x K covariance of the coordinates (the
        route of :meth:`partial_fit`); "full" an exact SVD of the centered
        coordinates; "randomized" :func:`sklearn.utils.extmath.randomized_svd`
        (Halko et al., 2011). "auto" chooses like PCA: "covariance_eigh" when
        ``K <= 1000`` and ``n_samples >= 10 K``, else "full" for small
        problems (``max(n_samples, K) <= 500``) or when ``n_components`` is
        None or a fraction, else "randomized" when ``n_components < 0.8
        min(n_samples, K)``, else "full". Smoothed components (``alpha > 0``)
        are always computed from the covariance ("auto" or "covariance_eigh"),
        and :meth:`partial_fit` always takes the "covariance_eigh" route.
        So does ``alpha="auto"`` with a basis.
    n_oversamples : int, default=10
        Extra random vectors of the randomized solver.
    iterated_power : int or "auto", default="auto"
        Power iterations of the randomized solver ("auto": 7 when
        ``n_components < 0.1 min(n_samples, K)``, else 4).
    random_state : int, RandomState instance or None, default=None
        Seed of the randomized solver; pass an int for reproducible results.
    grid : array-like of shape (n_features,) or dict, default=None
        Sampling points of the columns of ``X``. None means the numeric column
        labels of a DataFrame, else evenly spaced points on [0, 1]. A dict
        ``{channel: grid}`` (or ``(channel, time)`` DataFrame labels)
        declares several channels: multivariate components, see
        ``channel_weights``.
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule for integrals over the grid. Without a basis the
        weights must be positive.
    channel_weights : {"inverse_variance", "equal"} or dict, default="inverse_variance"
        With several channels (``grid`` a mapping ``{channel: grid}``, or
        (channel, time) DataFrame columns; see :doc:`/channels`): the
        weights ``v_c`` of the inner product ``sum_c v_c <f_c, g_c>`` in
        which the multivariate components are found and orthonormal.
        "inverse_variance": one over each channel's integrated variance
        (Happ and Greven, 2018), so a change of units of one channel changes
        no score; "equal": 1 for every channel (channels in one unit on a
        shared domain, Ramsay and Silverman, 2005, sec. 8.5); a dict gives a
        positive weight per channel name. Ignored without channels.
        Smoothed components (a basis and ``alpha`` "auto" or > 0) maximise
        the weighted variance subject to ``sum_c v_c (||phi_c||^2 + alpha
        ||D^q phi_c||^2) = 1``, each channel's norms taken on its own
        domain mapped to [0, 1]: one alpha means the same smoothing in
        every channel, whatever its unit, and the components are
        orthonormal in the weighted inner product.

    Attributes
    ----------
    quadrature_weights_ : ndarray of shape (n_features,)
        Quadrature weights on ``grid_``.
    mean_ : ndarray of shape (n_features,)
        The mean function on ``grid_`` (with a basis: the mean of the fitted
        basis expansions).
    mean_basis_coef_ : ndarray of shape (K,)
        The mean function's basis coefficients (without a basis: its grid
        values).
    components_ : ndarray of shape (n_components_, n_features)
        The principal component functions on ``grid_``, in decreasing order
        of explained variance (for ``alpha = 0``), L2-orthonormal. Signs
        follow a fixed convention: the value of largest magnitude of each
        component on ``grid_`` is positive.
    components_basis_coef_ : ndarray of shape (n_components_, K)
        The components' basis coefficients (without a basis: their grid
        values).
    explained_variance_ : ndarray of shape (n_components_,)
        Variance of the scores of each component (the eigenvalues of the
        covariance operator for ``alpha = 0``), with denominator
        ``n_samples - 1``.
    explained_variance_ratio_ : ndarray of shape (n_components_,)
        ``explained_variance_`` divided by the total variance
        ``int var(x(t)) dt``.
    singular_values_ : ndarray of shape (n_components_,)
        ``sqrt((n_samples - 1) * explained_variance_)``: the singular values
        of the centered curves in L2-orthonormal coordinates.
    n_components_ : int
        Number of components kept.
    alpha_ : float
        The alpha used: the cross-validated choice, or the given number (0
        without a basis).
    alphas_path_ : ndarray of shape (n_alphas,)
        The candidates (``[alpha_]`` when alpha is fixed).
    criterion_path_ : ndarray of shape (n_alphas,) or None
        Cross-validated reconstruction error of each candidate (lower is
        better); None when alpha is fixed.
    edf_path_ : ndarray of shape (n_alphas,)
        Effective dimension of each candidate's penalized norm,
        ``tr (G + lam R)^{-1} G``: from the number of basis functions
        (unsmoothed) down to the null space's dimension.
    projection_ : ndarray of shape (n_components_, n_features)
        The operator of :meth:`transform`: scores are
        ``(X - mean_) @ projection_.T``.
    n_samples_seen_ : int
        Number of curves the fit is based on (summed over ``partial_fit``).
    coordinate_mean_ : ndarray of shape (K,)
        Mean of the curves' L2-orthonormal coordinates.
    coordinate_scatter_ : ndarray of shape (K, K) or None
        Centered sums of squares and products of those coordinates: with
        ``n_samples_seen_`` and ``coordinate_mean_``, the statistics
        :meth:`partial_fit` continues from. None after a randomized fit,
        which does not compute them.
    channel_weights_ : ndarray of shape (n_channels,)
        With channels only: the channel weights used.
    channel_names_, channel_sizes_ : list
        With channels only: the channels' names and numbers of grid points,
        in column order; ``grid_`` holds their grids side by side.
    %(curve_input_attributes)s

    See Also
    --------
    sklearn.decomposition.PCA : Principal components of grid values as
        unrelated features; its eigenvalues grow with the number of grid
        points.
    skfunc.preprocessing.BasisFeatures : L2-orthonormal basis coordinates of
        curves, without reduction.

    Notes
    -----
    Let ``z`` be the coordinates of a curve in which Euclidean inner
    products are L2 inner products: ``sqrt(w) * x`` for quadrature weights
    ``w`` (no basis), or ``G^{1/2} c`` for the least-squares basis
    coefficients ``c`` and the exact Gram matrix ``G``. The components are
    the principal directions ``y_k`` of ``z`` mapped back to functions
    (``y_k / sqrt(w)`` on the grid), so they are L2-orthonormal and the
    eigenvalues are integrals. Plain PCA of the grid values instead sums
    over grid points: its eigenvalues scale with the number of points, and on
    uneven grids densely sampled stretches weigh more (see Examples).

    For the same reason the scores are about ``1 / sqrt(m)`` times the
    scores of ``PCA`` on ``m`` evenly spaced values (an L2 norm on the
    domain mapped to [0, 1] is the root mean square of the values), and
    they stay the same on every grid. A model downstream with a fixed
    penalty sees them at another size than PCA's scores:
    ``LogisticRegression()`` (``C=1``) penalizes them about ``m`` times
    harder than after ``PCA``. As scikit-learn advises for penalized linear
    models, put a ``StandardScaler`` between them
    (``make_pipeline(FunctionalPCA(10), StandardScaler(),
    LogisticRegression())``), which whitens the scores, or choose ``C`` by
    cross-validation; :doc:`/open_data` compares the recipe with ``PCA`` on
    open data.

    With a basis and ``alpha="auto"``, alpha is chosen by cross-validation
    over curves (Rice and Silverman, 1991; Ramsay and Silverman, 2005, sec.
    9.3.3): curves are dealt to 10 folds by their row position (row ``i``
    to fold ``i mod 10``, counted across :meth:`partial_fit` batches), and
    for each fold and candidate the components computed without the fold
    reconstruct the fold's curves; the criterion is the summed squared L2
    reconstruction error with ``n_components`` components (with
    ``n_components`` None or a fraction, summed over every number of
    components, 1, 2, ..., so that each counts; with channels, in the
    weighted norm ``sum_c v_c ||.||^2``). It needs only the count,
    mean and scatter of ``z`` per fold, so it runs from the same additive
    statistics as the fit. A choice at the smallest or largest candidate
    gives an ``AlphaAtEdgeWarning``; at the smallest,
    the curves need no smoothing (or too few curves are seen to tell).

    :meth:`partial_fit` accumulates the count, mean and centered scatter
    (K x K) of ``z`` over chunks (merged exactly, Chan et al., 1979), so its
    memory is one chunk plus K x K, and its result equals :meth:`fit` on the
    stacked data up to rounding when the coordinates represent the curves
    exactly (always without a basis).

    Principal component scores are statistical summaries of the curves seen
    in fit. Validate what they predict on your own process data before they
    drive a quality or safety decision, and follow the applicable standards
    and qualified practice.

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 8-9. Springer.

    Rice, J. A. and Silverman, B. W. (1991). Estimating the mean and
    covariance structure nonparametrically when the data are curves.
    *Journal of the Royal Statistical Society, Series B* 53(1), 233-243.

    Silverman, B. W. (1996). Smoothed functional principal components
    analysis by choice of norm. *The Annals of Statistics* 24(1), 1-24.

    Happ, C. and Greven, S. (2018). Multivariate functional principal
    component analysis for data observed on different (dimensional) domains.
    *Journal of the American Statistical Association* 113(522), 649-659.

    Halko, N., Martinsson, P.-G. and Tropp, J. A. (2011). Finding structure
    with randomness: probabilistic algorithms for constructing approximate
    matrix decompositions. *SIAM Review* 53(2), 217-288.

    Chan, T. F., Golub, G. H. and LeVeque, R. J. (1979). Updating formulae
    and a pairwise algorithm for computing sample variances. Technical report
    STAN-CS-79-773, Stanford University.

    Examples
    --------
    Invented kiln-firing runs: temperature (°C) over a 10-hour cycle, one
    reading a minute; runs differ in peak temperature and cooling rate.

    >>> import numpy as np
    >>> from skfunc.decomposition import FunctionalPCA
    >>> rng = np.random.default_rng(0)
    >>> peak = 1200 + 25 * rng.standard_normal((40, 1))
    >>> cooling = 3 + 0.5 * rng.standard_normal((40, 1))  # hours to cool
    >>> def firing(hours):
    ...     return 20 + (peak - 20) * np.minimum(
    ...         np.minimum(1, hours / 4), np.clip((10 - hours) / cooling, 0, 1))
    >>> minutes = np.linspace(0, 10, 601)
    >>> fpca = FunctionalPCA(n_components=2, grid=minutes).fit(firing(minutes))
    >>> fpca.components_.shape
    (2, 601)
    >>> np.round(fpca.explained_variance_ratio_, 2)
    array([0.91, 0.04])

    The same runs logged every 5 minutes give the same eigenvalues;
    plain PCA of the grid values does not (its eigenvalues are sums over
    grid points):

    >>> from sklearn.decomposition import PCA
    >>> coarse = np.linspace(0, 10, 121)
    >>> ev_fine = fpca.explained_variance_
    >>> coarse_fit = FunctionalPCA(2, grid=coarse).fit(firing(coarse))
    >>> ev_coarse = coarse_fit.explained_variance_
    >>> np.round(ev_coarse / ev_fine, 2)
    array([1., 1.])
    >>> pca_ratio = (PCA(2).fit(firing(coarse)).explained_variance_
    ...              / PCA(2).fit(firing(minutes)).explained_variance_)
    >>> np.round(pca_ratio, 1)
    array([0.2, 0.2])
    """

    #: fit runs on skfunc._dask.compute_statistics, so dask arrays are accepted
    _accepts_dask = True

    _parameter_constraints = {
        "n_components": [
            Interval(Integral, 1, None, closed="left"),
            Interval(RealNotInt, 0, 1, closed="right"),
            None,
        ],
        **BASIS_CONSTRAINTS,
        **CHANNEL_N_BASIS,
        "basis": [StrOptions(set(BASES)), None],
        "alpha": ALPHA_CONSTRAINT,
        "svd_solver": [StrOptions(set(SVD_SOLVERS))],
        "n_oversamples": [Interval(Integral, 1, None, closed="left")],
        "iterated_power": [Interval(Integral, 0, None, closed="left"),
                           StrOptions({"auto"})],
        "random_state": ["random_state"],
        "channel_weights": [StrOptions(set(CHANNEL_WEIGHTS)), dict],
    }

    #: a layout of several channels is accepted (skfunc._channels)
    _accepts_channels = True

    def __init__(self, n_components=None, *, basis=None, n_basis=None, degree=3,
                 interior_knots=None, alpha="auto", penalty_order=2, svd_solver="auto",
                 n_oversamples=10, iterated_power="auto", random_state=None, grid=None,
                 quadrature="trapezoid", channel_weights="inverse_variance"):
        store_init_params(self, locals())

    # ------------------------------------------------------------------ fit
    #: keys ``n``, ``mean``, ``scatter`` (count, mean and centered scatter of
    #: the coordinates; per fold of rows when alpha is chosen by
    #: cross-validation), merged exactly in any order (Chan et al., 1979)
    _merge_statistics = staticmethod(merge_fold_moments)
    _statistics_thread_safe = True  # the coordinate maps only read
    _finite_from_statistics = True  # every value enters the coordinates

    @fill_doc
    def fit(self, X, y=None):
        """Compute the mean function and the principal components of X
        (complete curves: no NaN).

        %(transformer_fit)s
        """
        self._validate_params()
        self._check_basis_parameters()
        if is_dask_array(X):
            return self._fit_statistics(X)
        self._forget()
        X = self._validate(X, reset=True)
        coords = self._coordinates()
        self._n_wanted(X.shape[0], coords.n_coordinates)  # fail before the work
        solver = self._solver(X.shape[0], coords.n_coordinates)
        if solver == "covariance_eigh":
            # the statistics route of partial_fit, on the validated X and
            # the coordinate maps built above (not rebuilt per step)
            self._batch_validated, self._batch_coordinates = X, coords
            try:
                return self._fit_statistics(X)
            finally:
                del self._batch_validated, self._batch_coordinates
        self._fit_svd(X, coords, solver)
        return self

    def _validate_batch(self, X, y, sample_weight, first, check_finite=True):
        validated = getattr(self, "_batch_validated", None)
        X = (self._validate_new_batch(X, first, check_finite) if validated is None
             else validated)
        if not self._chooses_alpha():
            return (X,)
        # the position of each row over all batches: its fold of curves
        offset = 0 if first else self.n_samples_seen_
        return X, np.arange(offset, offset + X.shape[0])

    def _validate_new_batch(self, X, first, check_finite=True):
        if not first:
            self._check_chunk_width(X)
            if not hasattr(self, "_partial_statistics"):
                raise ValueError(
                    "partial_fit cannot continue a fit made with "
                    "svd_solver='randomized', which keeps no second moments; "
                    "refit with svd_solver='covariance_eigh' or 'full', or "
                    "start a new estimator."
                )
        else:
            self._check_basis_parameters()
        X = self._validate(X, reset=first, check_finite=check_finite)
        if first and is_dask_array(X):
            self._solver(X.shape[0], self._coordinates().n_coordinates, True)
        return X

    def _statistics(self, X, index=None):
        """Count, mean and centered scatter of the coordinates of X's rows
        (per fold of rows, given their positions ``index``, when alpha is
        chosen by cross-validation)."""
        return self._statistics_function()(X, *(() if index is None else (index,)))

    def _statistics_function(self):
        # the coordinate maps are built once per batch, not once per block
        coords = self._batch_coords()
        return coords.fold_statistics if self._chooses_alpha() else coords.statistics

    def _solve(self, stats):
        """Set the fitted attributes from merged statistics (K x K algebra:
        one BLAS thread up to 4,000 unknowns, ``single_thread_blas_up_to``)."""
        coords = self._batch_coords()
        with single_thread_blas_up_to(coords.n_coordinates):
            self._solve_moments(stats, coords)

    def _solve_moments(self, stats, coords):
        folds = stats if np.ndim(stats["n"]) else None
        if folds is not None:
            stats = pooled_moments(folds)
        n, mean, scatter = stats["n"], stats["mean"], stats["scatter"]
        if n < 2:
            raise ValueError(
                f"FunctionalPCA needs at least 2 samples (curves) to estimate a "
                f"covariance; got {n} sample."
            )
        covariance = scatter / (n - 1)
        coords, d = channel_coordinates(self, coords, np.diag(covariance), mean)
        weighted_mean = mean if d is None else mean * d
        if d is not None:
            covariance = covariance * np.outer(d, d)
        total = float(np.trace(covariance))
        self._check_variance(total, mean)
        n_wanted = self._n_wanted(n, coords.n_coordinates)
        alpha, alphas, scores = self._fixed_alpha(), None, None
        if folds is not None:
            if d is not None:  # the folds in the channels' weighted coordinates
                folds = dict(folds, mean=folds["mean"] * d,
                             scatter=folds["scatter"] * np.outer(d, d))
            alpha, alphas, scores = cross_validate_alpha(
                folds, coords,
                self.n_components if isinstance(self.n_components, Integral) else None,
                self.alpha,
            )
        self._set_alpha(alpha, alphas, scores, coords)
        variances, directions = covariance_directions(covariance, n_wanted, coords, alpha)
        self._set_components(variances, directions, total, weighted_mean, n,
                             n_wanted, coords)
        self.coordinate_scatter_, self.coordinate_mean_ = scatter, mean

    def _fit_svd(self, X, coords, solver):
        n, K = X.shape[0], coords.n_coordinates
        n_wanted = self._n_wanted(n, K)
        Z, mean = coords.centered(X)
        coords, d = channel_coordinates(self, coords, np.einsum("ij,ij->j", Z, Z) / (n - 1),
                                        mean)
        weighted_mean = mean
        if d is not None:
            Z *= d
            weighted_mean = mean * d
        total = float(np.vdot(Z, Z)) / (n - 1)
        self._check_variance(total, mean)
        squares, directions = svd_directions(
            Z,
            n_wanted if n_wanted is not None else min(n, K),
            solver,
            random_state=check_random_state(self.random_state),
            n_oversamples=self.n_oversamples,
            iterated_power=self.iterated_power,
        )
        del Z
        self._set_alpha(0.0, None, None, coords)
        # the exact SVD has all directions, hence the whole scatter, and
        # partial_fit can continue from it
        self.coordinate_scatter_ = None
        if solver == "full":
            scatter = (directions * squares) @ directions.T
            if d is not None:  # the statistics are of the unweighted coordinates
                scatter /= np.outer(d, d)
            self.coordinate_scatter_ = scatter
            self._keep_statistics({"n": n, "mean": mean, "scatter": scatter}, n)
        self._set_components(
            squares / (n - 1), directions, total, weighted_mean, n, n_wanted, coords
        )
        self.coordinate_mean_ = mean

    def _set_alpha(self, alpha, alphas, scores, coords):
        self.alpha_ = float(alpha)
        self.alphas_path_ = np.array([self.alpha_]) if alphas is None else alphas
        self.criterion_path_ = scores
        self.edf_path_ = (
            np.full(self.alphas_path_.shape, float(coords.n_coordinates))
            if coords.path is None else coords.path.edf(self.alphas_path_)
        )

    def _set_components(self, variances, directions, total, mean, n, n_wanted, coords):
        if n_wanted is None:  # a fraction of the variance
            cumulative = np.cumsum(variances) / total
            n_wanted = int(np.searchsorted(cumulative, self.n_components - 1e-12)) + 1
        k = min(n_wanted, variances.size)
        variances, directions = variances[:k], directions[:, :k]
        # (channels: signs read from values in unit-free channel scales)
        values = getattr(coords, "unit_free_values", coords.values)(directions)
        directions = directions * sign_convention(values)
        self.n_samples_seen_ = int(n)
        self.coordinate_mean_ = mean
        self.quadrature_weights_ = coords.weights
        self.mean_ = coords.values(mean[:, None])[0]
        self.mean_basis_coef_ = coords.coefficients(mean[:, None])[0]
        self.components_ = coords.values(directions)
        self.components_basis_coef_ = coords.coefficients(directions)
        self.projection_ = coords.projection(directions)
        self.n_components_ = k
        self.explained_variance_ = variances
        self.explained_variance_ratio_ = variances / total
        self.singular_values_ = np.sqrt(variances * (n - 1))

    # ------------------------------------------------------------- helpers
    def _validate(self, X, reset, check_finite=True):
        return validate_curves(self, X, reset=reset, ensure_min_samples=2 if reset else 1,
                               check_finite=check_finite)

    def _check_chunk_width(self, X):
        width = getattr(X, "shape", (None, None))[-1]
        if width is not None and width != self.n_features_in_:
            raise ValueError(
                f"X has {width} features, but FunctionalPCA is expecting "
                f"{self.n_features_in_} features as input: every chunk given to "
                "partial_fit must be sampled on the same grid (one column per "
                "grid point)."
            )

    def _uses_basis(self):
        return self.basis is not None

    def _chooses_alpha(self):
        """Whether alpha is chosen from the data (a basis, and "auto" or
        candidates)."""
        return self._uses_basis() and not isinstance(check_alpha(self.alpha), float)

    def _fixed_alpha(self):
        """The fixed alpha (0 without a basis: nothing to smooth)."""
        value = check_alpha(self.alpha)
        return value if isinstance(value, float) and self._uses_basis() else 0.0

    def _smooths(self):
        return self._chooses_alpha() or self._fixed_alpha() > 0

    def _check_basis_parameters(self):
        """basis=None means grid values: parameters of a basis are an error."""
        if self.basis is not None:
            return
        given = [
            f"{name}={getattr(self, name)!r}"
            for name, unset in (("n_basis", None), ("interior_knots", None))
            if getattr(self, name) is not unset
        ]
        value = check_alpha(self.alpha)
        if not isinstance(value, str) and np.any(value > 0):
            given.append(f"alpha={self.alpha!r}")
        if given:
            raise ValueError(
                f"{', '.join(given)} describe(s) a basis, but basis=None means "
                "the grid values themselves are the coordinates; pass a basis, "
                "for example basis='bspline'."
            )

    def _batch_coords(self):
        """The coordinate maps of the fit in progress, else built anew."""
        coords = vars(self).get("_batch_coordinates")
        return self._coordinates() if coords is None else coords

    def _coordinates(self):
        """Rebuild the coordinate maps from the parameters and ``grid_``."""
        weights = curve_weights(self)
        if not self._uses_basis():
            if np.any(weights <= 0):
                raise ValueError(
                    f"quadrature={self.quadrature!r} gives non-positive weights "
                    "on this uneven grid; principal components without a basis "
                    "need positive weights. Use quadrature='trapezoid' or a basis."
                )
            return CurveCoordinates(weights)
        basis = basis_for(self, self.grid_)
        with single_thread_blas_up_to(basis.n_basis):
            return CurveCoordinates(weights, basis, self.grid_,
                                    self.penalty_order if self._smooths() else None)

    def _fraction(self):
        return isinstance(self.n_components, Real) and not isinstance(
            self.n_components, Integral
        )

    def _solver(self, n, K, distributed=False):
        solver = self.svd_solver
        if distributed:
            if solver not in ("auto", "covariance_eigh"):
                raise ValueError(
                    f"svd_solver={solver!r} needs all curves in one process; a "
                    "dask array X is fitted from merged block statistics. Use "
                    "svd_solver='auto' or 'covariance_eigh'."
                )
            return "covariance_eigh"
        if self._smooths():
            if solver not in ("auto", "covariance_eigh"):
                raise ValueError(
                    f"Smoothed components (alpha > 0 or 'auto' with a basis) are "
                    f"computed from the "
                    f"covariance; svd_solver={solver!r} cannot be used. Use "
                    "svd_solver='auto' or 'covariance_eigh'."
                )
            return "covariance_eigh"
        if solver == "randomized" and self._fraction():
            raise ValueError(
                f"n_components={self.n_components!r} is a fraction of variance, "
                "which needs the whole spectrum; svd_solver='randomized' "
                "accepts an int n_components only."
            )
        if solver != "auto":
            return solver
        if K <= 1000 and n >= 10 * K:
            return "covariance_eigh"
        if max(n, K) <= 500 or not isinstance(self.n_components, Integral):
            return "full"
        if self.n_components < 0.8 * min(n, K):
            return "randomized"
        return "full"

    def _n_wanted(self, n, K):
        """Number of components asked for; None for a fraction of variance."""
        limit = min(n, K)
        if self.n_components is None:
            return limit
        if self._fraction():
            return None
        if self.n_components > limit:
            source = (
                "basis functions (n_basis)" if self._uses_basis() else "grid points"
            )
            raise ValueError(
                f"n_components={self.n_components} exceeds what the data allow: "
                f"at most min(n_samples, K) = min({n}, {K}) = {limit} components, "
                f"with K the number of {source}."
            )
        return self.n_components

    def _check_variance(self, total, mean):
        size = float(np.abs(mean).max(initial=0.0))
        if total < _SMALLEST_VARIANCE and 0 < size < np.sqrt(_SMALLEST_VARIANCE):
            raise ValueError(
                f"The variance of X is not representable: the curves' values "
                f"(mean values up to {size:.3g}) are so small that their squares "
                "fall below float64's range (about 1e-300), so the variances "
                "(explained_variance_) would be 0. Rescale X, for example to "
                "units near 1; the components do not change, and the variances "
                "scale with the square of the factor."
            )
        if total <= 1e-20 * float(mean @ mean) or total == 0:
            raise ValueError(
                "X has zero variance: all curves are identical (up to rounding), "
                "so there are no modes of variation to find."
            )

    @property
    def _n_features_out(self):
        return self.n_components_

    # ---------------------------------------------------------- transforms
    @fill_doc
    def transform(self, X):
        """Principal component scores ``<x - mean_, phi_k>`` of each curve.

        %(fitted_curves)s

        Returns
        -------
        scores : ndarray of shape (n_samples, n_components_)
        """
        check_is_fitted(self)
        operator_T = self.projection_.T
        return product_of_curves(
            partial(self._validate, reset=False), X,
            lambda X: chunked_matmul(X, operator_T, -self.mean_ @ operator_T,
                                     dtype=output_dtype(X)))

    @fill_doc
    def score_samples(self, X):
        """Minus the L2 norm of each curve's reconstruction error.

        ``-||x - x_hat||`` with ``x_hat = inverse_transform(transform(x))``,
        integrated with ``quadrature_weights_``: higher is more typical, as
        in scikit-learn's ``score_samples`` convention, so curves the
        components do not describe well score lowest. With channels the
        norm is the weighted one of the components (``channel_weights_``).
        (Unlike
        :meth:`sklearn.decomposition.PCA.score_samples`, this is not a
        log-likelihood: curves have no finite-dimensional density.) With a
        basis, the error includes what the basis cannot represent.

        %(fitted_curves)s

        Returns
        -------
        scores : ndarray of shape (n_samples,)

        See Also
        --------
        mahalanobis : Distance within the component space.
        skfunc.outliers.CurveOutlierDetector : Depth and outlyingness rules.
        """
        check_is_fitted(self)
        X = self._validate(X, reset=False)
        residual = np.asarray(X, dtype=np.float64) - self.inverse_transform(
            self.transform(X)
        )
        weights = self.quadrature_weights_
        if hasattr(self, "channel_weights_"):  # the weighted norm of channels
            weights = weights * np.repeat(self.channel_weights_, self.channel_sizes_)
        return -np.sqrt(np.maximum(residual**2 @ weights, 0.0))

    @fill_doc
    def mahalanobis(self, X):
        """Mahalanobis distance of each curve's component scores.

        ``sqrt(sum_k score_k^2 / explained_variance_k)``: how unusual a curve
        is within the space the components span (its reconstruction error,
        :meth:`score_samples`, measures the rest).

        %(fitted_curves)s

        Returns
        -------
        distance : ndarray of shape (n_samples,)
        """
        scores = self.transform(X)
        return np.sqrt(np.sum(scores**2 / self.explained_variance_, axis=1))
