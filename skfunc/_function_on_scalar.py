"""FunctionOnScalarRidge: curve-valued responses from scalar covariates."""

import numpy as np
from sklearn.utils.validation import validate_data

from ._blocks import chunked_matmul, is_dask_array, output_dtype
from ._dask import validate_dask
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._fit import AdditiveRegressorMixin
from ._function_response import (
    RESPONSE_PARAMETER_CONSTRAINTS,
    CurveResponseRegressor,
)
from ._validation import explain_not_numbers


@fill_doc
class FunctionOnScalarRidge(AdditiveRegressorMixin, CurveResponseRegressor):
    """Function-on-scalar regression with roughness-penalized coefficient functions.

    Each row of ``y`` is a response curve sampled on a response grid, each row
    of ``X`` holds scalar covariates. The model is

        Y_i(t) = beta_0(t) + sum_j x_ij beta_j(t) + eps_i(t),

    with every coefficient function expanded in a basis on the response
    domain and fitted by quadrature-weighted least squares with a roughness
    penalty ``alpha sum_j int (D^q beta_j)^2`` (intercept included). The
    penalty is fixed (``alpha``) or chosen by generalised cross-validation
    among ``alphas``, all candidates from one decomposition.

    Parameters
    ----------
    %(alpha)s
    %(basis)s
    %(period)s
    %(response_grid)s
    %(quadrature)s

    Attributes
    ----------
    coef_function_ : ndarray of shape (n_features_in_, n_response_points)
        ``beta_j(t)`` on ``response_grid_``, one row per covariate.
    basis_coef_ : ndarray of shape (n_features_in_ + 1, n_basis_)
        Basis coefficients of the intercept (row 0) and of the coefficient
        functions.
    coef_covariance_ : ndarray of shape ((n_features_in_ + 1) * n_basis_,) * 2
        Estimated covariance of ``basis_coef_`` flattened row-major, used by
        :meth:`confidence_band`; formed on first use from small fitted
        factors and then kept.
    %(curve_response_attributes)s
    %(n_samples_seen)s
    n_features_in_ : int
        Number of covariates.
    feature_names_in_ : ndarray of shape (n_features_in_,)
        Column names of ``X`` when they are all strings.

    See Also
    --------
    FunctionOnFunctionRidge : Curve-valued responses from input curves.
    sklearn.linear_model.Ridge : Multi-output ridge on raw grid values, which
        ignores the smoothness of the response.

    Notes
    -----
    The fit minimises ``sum_i w_i int (Y_i - fit_i)^2 dt + alpha sum_j int
    (D^q beta_j)^2`` (sample weights ``w_i``, integrals by quadrature on the
    response grid) with centered covariates, so the result does not change
    when a covariate is shifted. The penalty leaves the functions of t with
    ``D^q = 0`` free, and there the covariates' coefficients are not
    penalized at all, so collinear covariates (or fewer observations than
    covariates plus one) are a ``NotIdentifiableError`` that says so. GCV treats the
    ``n_samples * n_response_points`` residuals as independent; with strongly
    autocorrelated residual curves on dense grids it may undersmooth, and
    :class:`~sklearn.model_selection.GridSearchCV` over ``alpha`` (which
    splits by curves) is the safer choice. The data enter only through
    additive statistics (sums of cross products), read once; so
    :meth:`partial_fit` over batches equals :meth:`fit` on all of them, and
    dask arrays ``X``/``y`` are fitted on the workers (statistics per block,
    merged in a tree) and predicted lazily block by block.

    Confidence bands are pointwise normal-theory bands assuming independent
    curves with a common residual covariance, pointwise or simultaneous over
    each coefficient function (``confidence_band(simultaneous=True)``); they
    ignore the smoothing bias.
    %(cautions)s

    %(curve_response_references)s

    Examples
    --------
    Kiln temperature profiles (invented data) from the programmed peak
    set-point and ramp rate:

    >>> import numpy as np
    >>> from skfunc.linear_model import FunctionOnScalarRidge
    >>> rng = np.random.default_rng(0)
    >>> hours = np.linspace(0, 10, 61)
    >>> settings = np.column_stack([rng.uniform(1150, 1250, 40),
    ...                             rng.uniform(100, 200, 40)])
    >>> shape = np.sin(np.pi * hours / 10)
    >>> profiles = (20 + np.outer(settings[:, 0] - 20, shape)
    ...             + np.outer(settings[:, 1], shape * (1 - hours / 10))
    ...             + rng.normal(0, 5, (40, 61)))
    >>> model = FunctionOnScalarRidge(response_grid=hours).fit(settings, profiles)
    >>> model.predict(settings[:2]).shape
    (2, 61)
    >>> lower, upper = model.confidence_band(0.95)
    >>> lower.shape
    (2, 61)
    >>> round(model.score(settings, profiles), 2)  # integrated R^2
    0.97
    """

    _parameter_constraints = RESPONSE_PARAMETER_CONSTRAINTS

    def __init__(self, alpha="auto", *, criterion="gcv", basis="bspline", n_basis=None,
                 degree=3, interior_knots=None, penalty_order=2, period=None,
                 response_grid=None, quadrature="trapezoid"):
        store_init_params(self, locals())

    def _validate_X(self, X, reset, **y_params):
        """Scalar covariates (not curves: no grid)."""
        if y_params or is_dask_array(X):
            return validate_dask(self, X, reset=reset, curves=False, **y_params)
        try:
            return validate_data(self, X, reset=reset, dtype=[np.float64, np.float32])
        except ValueError as exc:
            explain_not_numbers(exc, X, None)
            raise

    def _design_geometry(self):
        """Scalar covariates: identity Gram, no penalty of their own."""
        return np.eye(self.n_features_in_), None

    def _coef_rows(self):
        p1 = self.basis_coef_.shape[0]
        return np.eye(p1)[1:]

    def _design_effect(self, X, coef, points, offset=None):
        return chunked_matmul(X, coef, offset, dtype=output_dtype(X))
