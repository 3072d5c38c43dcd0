"""FunctionOnFunctionRidge: curve-valued responses from input curves through
an integral (tensor-product) coefficient surface."""

from functools import partial

import numpy as np

from ._blocks import chunked_matmul, output_dtype
from ._docstrings import fill_doc
from ._fit import AdditiveRegressorMixin
from ._function_response import CurveInputResponseRegressor
from ._grid import quadrature_weights
from ._penalized import penalty_for
from ._validation import basis_for


@fill_doc
class FunctionOnFunctionRidge(AdditiveRegressorMixin, CurveInputResponseRegressor):
    """Function-on-function regression through a coefficient surface.

    Each row of ``X`` is an input curve on ``grid``, each row of ``y`` a
    response curve on ``response_grid``. The model is

        Y_i(t) = beta_0(t) + int X_i(s) beta(s, t) ds + eps_i(t),

    with ``beta(s, t) = sum_ab B_ab psi_a(s) phi_b(t)`` in the tensor product
    of an input basis ``psi`` and a response basis ``phi``, fitted by
    quadrature-weighted least squares with roughness penalties in s and t
    (see Notes), ``alpha`` fixed or chosen by generalised cross-validation
    among ``alphas``. For ``Y_i(t)`` from ``X_i(t)`` at the same t, see
    :class:`ConcurrentFunctionRidge`.

    Parameters
    ----------
    %(alpha)s
    %(basis)s
    %(period)s
    %(grid)s
    %(response_grid)s
    %(quadrature)s

    Attributes
    ----------
    coef_function_ : ndarray of shape (n_features, n_response_points)
        ``beta(s, t)`` on ``grid_`` x ``response_grid_``.
    basis_coef_ : ndarray of shape (n_basis_input + 1, n_basis_)
        Coefficients in the response basis: row 0 the intercept, then the
        rows of ``B``, one per input basis function.
    coef_covariance_ : ndarray of shape (n_rows * n_basis_, n_rows * n_basis_)
        Estimated covariance of ``basis_coef_`` flattened row-major. Formed
        on first use (by :meth:`confidence_band`, or when read) from small
        fitted factors and then kept: it has ``(n_rows * n_basis_)**2``
        entries, more work than the rest of the fit.
    %(curve_response_attributes)s
    %(n_samples_seen)s
    %(curve_input_attributes)s

    See Also
    --------
    ConcurrentFunctionRidge : ``Y(t)`` from ``X(t)`` at the same t.
    FunctionOnScalarRidge : Curve-valued responses from scalar covariates.
    sklearn.linear_model.Ridge : Multi-output ridge on raw grid values.

    Notes
    -----
    The criterion is ``sum_i w_i int (Y_i - fit_i)^2 dt + alpha [int int
    (d^q beta / ds^q)^2 ds dt + int int (d^q beta / dt^q)^2 ds dt + int
    (D^q beta_0)^2 dt]``: one alpha for both directions, so give the two
    grids comparable units (or rescale them). The t-integral of the
    s-roughness uses the response-grid quadrature. The input curves enter
    through their basis coordinates ``int X_i psi_a``, centered, so the fit
    is the function-on-scalar problem on those coordinates and the data
    enter only through additive statistics: :meth:`partial_fit` over
    batches equals :meth:`fit` on all of them, and dask arrays are fitted on
    the workers.

    GCV treats all ``n_samples * n_response_points`` residuals as
    independent; with strongly autocorrelated residual curves on dense grids
    prefer :class:`~sklearn.model_selection.GridSearchCV` over ``alpha``.
    Confidence bands are pointwise, or simultaneous over the whole surface
    (``confidence_band(simultaneous=True)``); both ignore the smoothing bias.
    %(cautions)s

    %(curve_response_references)s

    Examples
    --------
    The cool-down of kiln runs (invented data) from their heating curves:

    >>> import numpy as np
    >>> from skfunc.linear_model import FunctionOnFunctionRidge
    >>> rng = np.random.default_rng(0)
    >>> s = np.linspace(0, 1, 41)
    >>> heating = np.outer(rng.uniform(1150, 1250, 60), np.sin(np.pi * s / 2))
    >>> heating += rng.normal(0, 20, (60, 1)) * np.cos(np.pi * s)
    >>> true_beta = np.exp(-((s[:, None] - s[None, :]) ** 2) / 0.05)
    >>> cooling = heating @ (true_beta / 40) + rng.normal(0, 1, (60, 41))
    >>> model = FunctionOnFunctionRidge(n_basis=8).fit(heating, cooling)
    >>> model.coef_function_.shape
    (41, 41)
    >>> model.predict(heating[:3]).shape
    (3, 41)
    """

    _batch_grids = (("grid", "grid_"), ("response_grid", "response_grid_"))

    _joint_band = True  # a simultaneous band covers the whole surface

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        # scikit-learn's score check regresses on one informative column of
        # ten (a spike in s), which the default input basis (six B-splines on
        # ten points) cannot isolate.
        tags.regressor_tags.poor_score = True
        return tags

    def _input_basis(self):
        return basis_for(self, self.grid_, cap=self._unpenalized())

    def _statistics_function(self):
        """Statistics of the design ``int X_i psi_a`` (the input curves' basis
        coordinates), with the input basis evaluated once per batch."""
        psi = self._input_basis().evaluate(self.grid_)
        weights = quadrature_weights(self.grid_, self.quadrature)
        return partial(self._statistics, design=psi * weights[:, None])

    def _design_geometry(self):
        """Input basis: its Gram matrix and split penalty on [0, 1]."""
        psi = self._input_basis()
        if self._unpenalized():
            return psi.unit_gram(), None
        penalty = penalty_for(psi, self.penalty_order)
        return penalty.metric, penalty  # (the metric is the unit Gram matrix)

    def _coef_rows(self):
        psi = basis_for(self, self.grid_, cap=False).evaluate(self.grid_)
        return np.column_stack([np.zeros(psi.shape[0]), psi])

    def _design_effect(self, X, coef, points, offset=None):
        """``int X(s) beta(s, t) ds`` (plus ``offset``) by the quadrature of
        ``grid_``."""
        w = quadrature_weights(self.grid_, self.quadrature)
        return chunked_matmul(X, coef * w[:, None], offset, dtype=output_dtype(X))
