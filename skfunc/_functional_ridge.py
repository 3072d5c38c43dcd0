"""FunctionalRidge: a scalar outcome from a curve (and the base it shares with
FunctionalRidgeCV).

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

from ._alpha import (
    ALPHA_CONSTRAINTS,
    AUTO,
    CURVE_DESIGN_CRITERION,
    check_alpha,
    choose_alpha,
)
from ._blocks import BandedProduct, single_thread_blas
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveRegressorMixin
from ._integrated_design import (
    DESIGN_CONSTRAINTS,
    PERIOD_CONSTRAINT,
    IntegratedDesignMixin,
    scaled_integrated_design,
)
from ._penalized import (
    centered,
    centered_cross_products,
    data_exponent,
    scale_down,
    to_data_units,
)
from ._weights import check_sample_weight


class FunctionalRidgeBase(AdditiveRegressorMixin, IntegratedDesignMixin, RegressorMixin,
                          BaseEstimator):
    """Fit = statistics of the integrated design, merged, then solved."""

    #: fit runs on skfunc._blocks.compute_statistics, so dask arrays are accepted
    _accepts_dask = True
    _statistics_thread_safe = True  # the design's statistics only read
    _finite_from_statistics = True  # every value enters the design (BandedProduct)

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.target_tags.multi_output = True
        # scikit-learn's score check uses make_regression: one informative
        # column of ten, a spike that the default basis (six B-splines on ten
        # points, P-spline practice) and any roughness penalty smooth away.
        tags.regressor_tags.poor_score = True
        return tags

    def _validate_fit_input(self, X, y, sample_weight, reset=True, check_finite=True):
        X, y = self._validate_curves(
            X, y, reset=reset, y_numeric=True, multi_output=True,
            ensure_min_samples=2 if reset else 1, check_finite=check_finite,
        )
        return X, y, check_sample_weight(sample_weight, X)

    def _validate_batch(self, X, y, sample_weight, first, check_finite=True):
        if first:
            self._check_pooled()
        X, y, sample_weight = self._validate_fit_input(X, y, sample_weight, first,
                                                       check_finite)
        if first:
            self._target_ndim = y.ndim
        else:
            self._check_same_targets(y)
        return X, y, sample_weight

    def _statistics_function(self):
        """Statistics of the integrated design, with the integration operator
        computed once per batch."""
        return partial(self._statistics, operator=BandedProduct(
            self._integration_operator(self._basis())))

    def _statistics(self, X, y, sample_weight, operator):
        """Additive statistics of one block of curves.

        Keys of :func:`skfunc._penalized.centered_cross_products` of the
        integrated design and y: raw sums (``n, sw, z_sum, y_sum, zz, zy,
        yy``) and cross products about the block's means (``czz, czy,
        cyy``), of X and y divided by powers of two (``x_exp``, ``y_exp``:
        :func:`skfunc._penalized.scaled_statistics`), merged exactly by
        :func:`skfunc._penalized.merge`. Everything up to the fitted
        attributes is computed in those scaled units, so data near 1e300 or
        1e-300 neither overflow nor underflow.
        """
        Z, z_exp, y, y_exp = self._scaled_design(X, y, operator)
        if sample_weight is not None and np.all(sample_weight == 1):
            sample_weight = None  # the same sums, without multiplying by ones
        stats = centered_cross_products(Z, y, sample_weight)
        stats.update(x_exp=z_exp, y_exp=y_exp)
        return stats

    def _scaled_design(self, X, y, operator):
        """``(Z, z_exp, y, y_exp)``: the integrated design divided by powers
        of two ``2**z_exp`` (:func:`~skfunc._integrated_design.scaled_integrated_design`)
        and y divided by ``2**y_exp``."""
        design, z_exp = scaled_integrated_design(X, operator, self.n_covariates)
        y_exp = data_exponent(y)
        return design, z_exp, scale_down(y, y_exp), y_exp

    def _solve(self, stats):
        # K x K problems: one BLAS thread (with BLAS's threads beside it
        # this solve took 20 times the processor time on a busy 2-core
        # machine, 85 ms against 4 ms)
        with single_thread_blas():
            self._fit_pooled(stats, self._basis(), self._target_ndim)

    def _check_pooled(self):
        """Raise if the estimator's settings need every curve at once."""

    def _check_same_targets(self, y):
        targets = self._partial_statistics["zy"].shape[1]
        one = self._target_ndim == 1  # set by the first batch (no solve needed)
        if (y.ndim == 1) != one or (
            y.ndim == 2 and y.shape[1] != targets
        ):
            raise ValueError(
                f"y of this partial_fit batch has shape {y.shape}; earlier "
                f"batches had {targets} target(s) "
                f"{'as a 1-D y' if one else 'as columns'}"
                "; every batch needs the same targets."
            )

    def _path(self, stats, basis):
        """The split path for the (centered) statistics, and the centered
        means, ``y'Wy`` and rotated right-hand sides."""
        if self.fit_intercept:
            zz, zy, yy, z_mean, y_mean = centered(stats)
        else:
            zz, zy, yy = stats["zz"], stats["zy"], stats["yy"]
            z_mean, y_mean = np.zeros(zz.shape[0]), np.zeros(zy.shape[1])
        path = self._split_path(zz, basis, stats["n"])
        return path, {
            "z_mean": z_mean,
            "y_mean": y_mean,
            "yy": yy,
            "rotated": path.rotate(zy.T),
        }

    def _solve_at(self, stats, alpha, basis, squeeze):
        """Coefficients, degrees of freedom, noise variance and posterior
        covariance at ``alpha`` (a scalar, or one per target) from merged
        statistics; sets the attributes."""
        path, part = self._path(stats, basis)
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
        dof = stats["sw"] - edf  # frequency weights: sw counts the rows
        sigma2 = np.where(dof > 0, rss / np.where(dof > 0, dof, 1.0), np.nan)
        k = basis.n_basis
        u = path.eigvecs[:k]
        inv_d = 1.0 / path.denominators(per_target)
        covariance = np.einsum("t,kj,tj,lj->tkl", sigma2, u, inv_d, u)
        # from the scaled statistics back to the data's units (powers of two;
        # the covariance is of the curves' coefficients, which share one)
        curves = {"x_exp": np.asarray(stats["x_exp"]).ravel()[0], "y_exp": stats["y_exp"]}
        self._set_coefficients(
            basis, to_data_units(theta, stats, -1, 1, "coef_"),
            to_data_units(intercept, stats, 0, 1, "intercept_"),
            to_data_units(covariance, curves, -2, 2, "coef_covariance_"), squeeze)
        sigma2 = to_data_units(sigma2, stats, 0, 2, "noise_variance_")
        self.edf_ = float(edf[0]) if squeeze or np.ndim(alpha) == 0 else edf
        self.noise_variance_ = float(sigma2[0]) if squeeze else sigma2
        return self

    def _choose(self, stats, basis, y_ndim, alpha, criterion, pooled=False):
        """Resolve ``alpha`` by ``criterion`` on the pooled statistics (one
        choice per target unless ``pooled``); set the path attributes and
        fit at the choice."""
        path, part = self._path(stats, basis)
        if np.ndim(alpha) == 0 and alpha == 0:
            self._check_identified(path, stats["n"])
        chosen = choose_alpha(
            # frequency weights: the weight total counts the rows (GCV's n, REML's n)
            path, part["rotated"], part["yy"], stats["sw"], alpha, criterion=criterion,
            total_weight=stats["sw"], extra_edf=int(self.fit_intercept), pooled=pooled,
            y_exp=stats.get("y_exp", 0),
        )
        self._store_path(path, chosen)
        return self._solve_at(stats, self.alpha_, basis, squeeze=y_ndim == 1)

    def _store_path(self, path, chosen):
        alpha = chosen["alpha"]
        self.alpha_ = float(alpha) if np.ndim(alpha) == 0 else np.asarray(alpha)
        if np.ndim(alpha) and np.unique(alpha).size == 1 and len(alpha) == 1:
            self.alpha_ = float(alpha[0])
        self.alphas_path_ = chosen["alphas"]
        self.criterion_path_ = chosen["criterion"]
        self.edf_path_ = path.edf(self.alphas_path_) + self.fit_intercept

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
        return self._linear_predictor(X, keep_float32=True)


@fill_doc
class FunctionalRidge(FunctionalRidgeBase):
    """Scalar-on-function regression with a roughness penalty.

    Predicts a number from a curve (and optional scalar covariates) with the
    functional linear model ``y = b0 + int x(t) beta(t) dt + gamma' s``,
    where beta is expanded in a basis and kept smooth by the penalty
    ``alpha int (D^q beta)^2``, so that beta(t) can be read: where on the
    curve's domain the outcome depends on the curve, and how.

    Parameters
    ----------
    %(alpha_reml)s
    %(scalar_outcome)s
    %(period)s

    Attributes
    ----------
    %(scalar_outcome_attributes)s
    %(alpha_attributes)s
        With several targets ``alpha_`` holds one value per target and
        ``criterion_path_`` one row per target.

    See Also
    --------
    FunctionalRidgeCV : Chooses alpha by exact leave-one-out or K-fold
        cross-validation.
    FunctionalLogisticRegression : The same model for class labels.
    sklearn.linear_model.Ridge : Ridge regression on ordinary features.

    %(scalar_outcome_notes)s

    %(scalar_outcome_references)s

    Examples
    --------
    >>> from skfunc.datasets import make_smooth_regression
    >>> from skfunc.linear_model import FunctionalRidge
    >>> X, y, beta = make_smooth_regression(60, grid=101, noise=0.01, random_state=0)
    >>> model = FunctionalRidge().fit(X, y)
    >>> model.coef_function_.shape
    (101,)
    >>> lower, upper = model.confidence_band(level=0.95)
    >>> bool((lower <= upper).all())
    True
    """

    _parameter_constraints = {
        **DESIGN_CONSTRAINTS,
        **PERIOD_CONSTRAINT,
        **ALPHA_CONSTRAINTS,
    }

    def __init__(self, alpha=AUTO, *, criterion=CURVE_DESIGN_CRITERION, basis="bspline",
                 n_basis=None, degree=3, interior_knots=None, penalty_order=2, period=None,
                 n_covariates=0, fit_intercept=True, grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def _check_pooled(self):
        check_alpha(self.alpha)

    def _fit_pooled(self, stats, basis, y_ndim):
        return self._choose(stats, basis, y_ndim, self.alpha, self.criterion)
