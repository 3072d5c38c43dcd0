"""The integrated design shared by the scalar-outcome functional linear models.

A curve ``x_i`` enters a linear predictor through ``int x_i(t) beta(t) dt``.
With ``beta = sum_k c_k phi_k`` and quadrature weights ``w`` on the grid, that
integral is row ``i`` of ``Z c`` with the *integrated design*

    Z = X W Phi        (n x K, Z[i, k] ~ int x_i phi_k),

so a functional linear model is an ordinary linear model in ``c`` with the
roughness penalty ``alpha c' P c``, ``P = int (D^q phi)(D^q phi)'``. Trailing
scalar covariates (the partial functional linear model) are appended to ``Z``
as unpenalized columns.

Once fitted, the model's linear predictor is ``X @ coef_ + intercept_`` with
``coef_`` = ``w * beta(grid)`` on the curve columns followed by the covariate
coefficients: one chunked matrix product, resolution invariant because the
quadrature weights carry the grid spacing.

References
----------
Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*, 2nd
ed., ch. 15. Springer.

Cardot, H., Ferraty, F. and Sarda, P. (2003). Spline estimators for the
functional linear model. *Statistica Sinica* 13, 571-591.
"""

from functools import partial
from numbers import Integral

import numpy as np
from sklearn.utils import check_random_state
from sklearn.utils._param_validation import Interval
from sklearn.utils.validation import check_is_fitted

from ._bands import critical_value
from ._blocks import BandedProduct, chunked_matmul, output_dtype
from ._channels import channel_penalty, curve_weights
from ._estimator import ShortReprMixin
from ._penalized import (
    ZERO_EXPONENT,
    NotIdentifiableError,
    SplitPath,
    data_exponent,
    scale_down,
)
from ._validation import (
    BASIS_CONSTRAINTS,
    CHANNEL_N_BASIS,
    basis_for,
    check_level,
    product_of_curves,
    validate_curves,
)

#: parameter constraints common to every model on the integrated design
DESIGN_CONSTRAINTS = {
    **{key: value for key, value in BASIS_CONSTRAINTS.items() if key != "period"},
    **CHANNEL_N_BASIS,
    "n_covariates": [Interval(Integral, 0, None, closed="left")],
    "fit_intercept": ["boolean"],
}

#: ``period`` (Fourier) for the models that take it
PERIOD_CONSTRAINT = {"period": BASIS_CONSTRAINTS["period"]}


def integrated_design(X, operator, n_covariates):
    """``[X_curves W Phi, covariates]`` (n x K + p) for curves X followed by
    ``n_covariates`` scalar columns (a row-block function)."""
    m = operator.shape[0]
    Z = chunked_matmul(X[:, :m], operator)
    if n_covariates:
        Z = np.hstack([Z, np.asarray(X[:, m:], dtype=np.float64)])
    return Z


#: :func:`scaled_integrated_design` forms the product of the curves before
#: scaling while the product's largest value is at least
#: ``2**PRODUCT_FIRST_MIN_EXPONENT``: then a product term that falls below
#: float64's normal range (``2**-1022``) is off by at most ``2**-1074``, some
#: ``2**-170`` of the largest value, against the unit roundoff ``2**-53``
PRODUCT_FIRST_MIN_EXPONENT = -900


def scaled_integrated_design(X, operator, n_covariates, z_exp=None):
    """``(Z / 2**z_exp, z_exp)``: the integrated design of a block of curves
    (and trailing covariates) with each column divided by a power of two, so
    that its cross products neither overflow (X near 1e150) nor underflow (X
    near 1e-170). The one scaling rule of the models on the integrated
    design.

    ``z_exp`` defaults to the block's own exponents: one shared by the
    curves' columns, then one per covariate (covariates are unpenalized, so
    scaling each is a change of units that leaves the fit unchanged, and
    covariates in other units than the curves keep their digits). Give the
    exponents of merged statistics to build rows in the units of a fit.

    The curves' columns are the product of the curves as they are
    (``operator``, ``W Phi`` or its :class:`~skfunc._blocks.BandedProduct`:
    B-splines are nonzero on a few knot intervals each), divided afterwards
    (n x K values, not n x m, and no copy of the curves): a power of two
    commutes with every rounding in between unless a value overflows or
    falls below float64's normal range. So where the product is not finite,
    or its largest value is below ``2**`` :data:`PRODUCT_FIRST_MIN_EXPONENT`
    (curves near 1e-270), the curves are divided first (by their own
    exponent when ``z_exp`` is not given). A NaN or inf of X leaves its row
    of Z non-finite (:class:`~skfunc._blocks.BandedProduct`).
    """
    product = operator if isinstance(operator, BandedProduct) else BandedProduct(operator)
    m = X.shape[1] - n_covariates
    with np.errstate(over="ignore", invalid="ignore"):  # checked below
        design = product(X[:, :m])
        top = np.maximum(-design.min(), design.max()) if design.size else 0.0
    if np.isfinite(top) and top >= np.ldexp(1.0, PRODUCT_FIRST_MIN_EXPONENT):
        curves = int(np.frexp(top)[1]) if z_exp is None else int(z_exp[0])
        if curves != ZERO_EXPONENT:  # (as scale_down, in place: exact)
            np.ldexp(design, -curves, out=design)
    else:
        curves = data_exponent(X[:, :m]) if z_exp is None else int(z_exp[0])
        design = product(scale_down(X[:, :m], curves))
    if z_exp is None:
        covariates = [data_exponent(X[:, j]) for j in range(m, X.shape[1])]
        z_exp = np.array([curves] * product.shape[1] + covariates, dtype=np.int64)
    if n_covariates:
        design = np.hstack([design] + [
            scale_down(X[:, j:j + 1], e)
            for j, e in zip(range(m, X.shape[1]), z_exp[product.shape[1]:])])
    return design, z_exp


class IntegratedDesignMixin(ShortReprMixin):
    """Curves (and trailing covariates) to the integrated design, and back.

    Subclasses set ``basis``, ``n_basis``, ``degree``, ``interior_knots``,
    ``penalty_order``, ``n_covariates``, ``grid`` and ``quadrature``.

    Several channels (``grid`` a mapping, see :mod:`skfunc._channels`) give
    one coefficient function per channel: the basis is the channels' bases
    side by side and each channel's roughness is on its own unit-free scale.
    """

    #: a layout of several channels is accepted (skfunc._channels)
    _accepts_channels = True

    def _validate_curves(self, X, y="no_validation", *, reset, **check_params):
        return validate_curves(
            self, X, y, reset=reset, n_covariates=self.n_covariates, **check_params
        )

    def _basis(self):
        """The basis for beta, rebuilt from the parameters and ``grid_``."""
        return basis_for(self, self.grid_, cap=False)

    def _integration_operator(self, basis):
        """``W Phi`` (m x K): curves times it give the integrated design."""
        w = curve_weights(self)
        return basis.evaluate(self.grid_) * w[:, None]

    def _design(self, X, operator):
        """The integrated design ``[X_curves W Phi, covariates]`` (n x K + p)."""
        return integrated_design(X, operator, self.n_covariates)

    def _split_path(self, zz, basis, n_samples, scale=None):
        """:class:`~skfunc._penalized.SplitPath` of the (centred) cross
        products with beta's penalty split into its null space and the
        covariates unpenalized; errors say what to change."""
        penalty = channel_penalty(basis, self.penalty_order, zz).extend(self.n_covariates)
        try:
            return SplitPath(zz, penalty, scale=scale)
        except NotIdentifiableError as exc:
            n_coef = zz.shape[0]
            raise NotIdentifiableError(
                f"{type(self).__name__} cannot determine {n_coef} coefficients "
                f"({n_coef - self.n_covariates} basis functions for beta and "
                f"{self.n_covariates} covariate(s)) from {n_samples} curves: the "
                "penalty leaves functions with D^penalty_order = 0 (and the "
                "covariates) unpenalized, so the data must determine those: use "
                "more curves, a lower penalty_order or fewer covariates."
            ) from exc

    def _check_identified(self, path, n_samples):
        """Raise unless the data alone determine every coefficient (alpha=0)."""
        if np.any(path.s <= 0):
            n_coef = path.eigvecs.shape[0]
            raise NotIdentifiableError(
                f"{type(self).__name__} cannot determine {n_coef} coefficients "
                f"({n_coef - self.n_covariates} basis functions for beta and "
                f"{self.n_covariates} covariate(s)) from {n_samples} curves "
                "without a penalty (alpha=0). Use a roughness penalty alpha > 0 "
                "or 'auto' (the usual choice), fewer basis functions (n_basis) "
                "or more curves."
            )

    def _set_coefficients(self, basis, theta, intercept, covariance, squeeze):
        """Store the fitted model from design coefficients ``theta`` (T, K + p),
        ``intercept`` (T,) and the basis-coefficient covariance (T, K, K)."""
        k = basis.n_basis
        w = curve_weights(self)
        beta = theta[:, :k] @ basis.evaluate(self.grid_).T

        def out(a):
            return a[0] if squeeze else a

        self.quadrature_weights_ = w
        self.n_basis_ = k
        self.basis_coef_ = out(theta[:, :k])
        self.covariate_coef_ = out(theta[:, k:])
        self.coef_function_ = out(beta)
        self.coef_ = out(np.hstack([beta * w, theta[:, k:]]))
        self.intercept_ = float(intercept[0]) if squeeze else intercept
        self.coef_covariance_ = out(covariance)

    def _linear_predictor(self, X, keep_float32=False):
        """``X @ coef_.T + intercept_`` for validated curves X (float32 for
        float32 X with ``keep_float32``, else float64)."""
        check_is_fitted(self)
        coef = np.atleast_2d(self.coef_)

        def product(X):
            dtype = output_dtype(X) if keep_float32 else np.float64
            return chunked_matmul(X, coef.T, self.intercept_, dtype=dtype)

        eta = product_of_curves(partial(self._validate_curves, reset=False), X, product)
        return eta[:, 0] if np.ndim(self.coef_) == 1 else eta

    def confidence_band(self, level=0.95, *, simultaneous=False, n_draws=4000,
                        random_state=None):
        """Confidence band for the coefficient function beta(t).

        ``beta_hat(t) +/- c sd(t)``, with ``sd(t)^2 = phi(t)' coef_covariance_
        phi(t)`` on ``grid_`` (see the class Notes for which covariance is
        used). Pointwise, ``c = z_{(1 + level)/2}``, the normal quantile: on
        average over the grid the band covers beta with probability
        ``level``. Simultaneous, ``c`` is the ``level`` quantile of
        ``max_t |beta~(t) - beta_hat(t)| / sd(t)`` over ``n_draws`` draws
        ``beta~`` from the posterior (Ruppert, Wand and Carroll, 2003), so
        the whole curve lies inside with probability ``level`` under the
        posterior.

        Both are conditional on alpha and inherit the penalty's bias: where
        beta is rough (a narrow peak or trough), they are too narrow there.

        Parameters
        ----------
        level : float, default=0.95
            Coverage level, strictly between 0 and 1.
        simultaneous : bool, default=False
            Whether the level holds for the whole curve at once (wider)
            rather than at each point.
        n_draws : int, default=4000
            Posterior draws for the simultaneous critical value.
        random_state : int, RandomState instance or None, default=None
            Seeds the posterior draws (simultaneous bands only).

        Returns
        -------
        lower, upper : ndarray, shaped like ``coef_function_``
        """
        check_is_fitted(self)
        level = check_level(level)
        phi = self._basis().evaluate(self.grid_)
        var = np.einsum("jk,...kl,jl->...j", phi, self.coef_covariance_, phi)
        sd = np.sqrt(np.maximum(var, 0.0))
        covs = self.coef_covariance_.reshape((-1,) + self.coef_covariance_.shape[-2:])
        rng = check_random_state(random_state)
        crit = np.array([
            critical_value(level, simultaneous=simultaneous, covariance=cov,
                           evaluate=lambda e: e @ phi.T, sd=s, n_draws=n_draws,
                           random_state=rng)
            for cov, s in zip(covs, sd.reshape(len(covs), -1))])
        crit = crit[:, None] if self.coef_covariance_.ndim == 3 else crit[0]
        half = crit * sd
        return self.coef_function_ - half, self.coef_function_ + half

