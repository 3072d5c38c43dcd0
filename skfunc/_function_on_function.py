"""FunctionOnFunctionRidge: curve-valued responses from input curves."""

import numpy as np
from scipy.linalg import block_diag
from sklearn.base import BaseEstimator
from sklearn.utils._param_validation import StrOptions
from sklearn.utils.validation import _check_sample_weight, check_is_fitted

from ._base import basis_for, chunked_matmul, validate_curves
from ._function_response import (
    RESPONSE_PARAMETER_CONSTRAINTS,
    CurveResponseMixin,
    check_alphas,
    response_statistics,
    solve_response,
    store_solution,
    validate_response,
)
from ._grid import grid_from_labels, quadrature_weights
from ._penalized import PenalizedPath, gcv_score

KINDS = ("integral", "concurrent")


class FunctionOnFunctionRidge(CurveResponseMixin, BaseEstimator):
    """Function-on-function regression with roughness penalties.

    Each row of ``X`` is an input curve on ``grid``, each row of ``y`` a
    response curve on ``response_grid``. Two models:

    * ``kind="integral"``: ``Y_i(t) = beta_0(t) + int X_i(s) beta(s, t) ds +
      eps_i(t)``, with ``beta(s, t) = sum_ab B_ab psi_a(s) phi_b(t)`` in the
      tensor product of an input basis ``psi`` and a response basis ``phi``;
    * ``kind="concurrent"``: ``Y_i(t) = beta_0(t) + beta_1(t) X_i(t) +
      eps_i(t)`` with X and y on one shared grid.

    Coefficient functions are fitted by quadrature-weighted least squares
    with roughness penalties (see Notes), with ``alpha`` fixed or chosen by
    generalised cross-validation among ``alphas``.

    Parameters
    ----------
    kind : {"integral", "concurrent"}, default="integral"
        The model, see above.
    basis : {"bspline", "fourier", "legendre"}, default="bspline"
        Basis system in s and in t.
    n_basis : int, default=None
        Number of basis functions in each direction; None means the basis'
        default capped by the number of grid points. With ``alpha=0`` it may
        not exceed the number of grid points.
    degree : int, default=3
        B-spline degree (ignored by the other bases).
    knots : array-like of shape (n_knots,), default=None
        Interior B-spline knots; None means evenly spaced. Only when both
        grids cover the same domain.
    alpha : float, default=None
        Roughness penalty. None chooses it by GCV from ``alphas``.
    alphas : array-like of shape (n_alphas,), default=None
        Candidates for GCV when ``alpha=None``; None means 25 log-spaced
        values scaled to the problem.
    penalty_order : int, default=2
        Derivative order ``q`` of the roughness penalties.
    grid : array-like of shape (n_features,), default=None
        Sampling points of the columns of ``X``. None means numeric column
        labels of a DataFrame ``X``, else evenly spaced on [0, 1].
    response_grid : array-like of shape (n_response_points,), default=None
        Sampling points of the columns of ``y``. None means numeric column
        labels of a DataFrame ``y``, else ``grid_`` for the concurrent model
        and evenly spaced on [0, 1] for the integral model.
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule on both grids.

    Attributes
    ----------
    grid_ : ndarray of shape (n_features,)
        The input grid used at fit.
    response_grid_ : ndarray of shape (n_response_points,)
        The response grid used at fit; predictions are on it.
    coef_function_ : ndarray
        ``beta(s, t)`` of shape (n_features, n_response_points) on
        ``grid_`` x ``response_grid_`` (integral), or ``beta_1(t)`` of shape
        (n_response_points,) (concurrent).
    intercept_function_ : ndarray of shape (n_response_points,)
        ``beta_0(t)`` on ``response_grid_``.
    basis_coef_ : ndarray of shape (n_rows, n_basis_)
        Coefficients in the response basis: row 0 the intercept, then the
        rows of ``B`` (integral, one per input basis function) or ``beta_1``
        (concurrent).
    coef_covariance_ : ndarray of shape (n_rows * n_basis_, n_rows * n_basis_)
        Estimated covariance of ``basis_coef_`` flattened row-major.
    n_basis_ : int
        Number of response basis functions.
    alpha_ : float
        The penalty used.
    alphas_ : ndarray of shape (n_alphas,)
        Candidates (only ``alpha`` when it was given).
    criterion_ : ndarray of shape (n_alphas,)
        GCV score per candidate (lower is better).
    edf_ : ndarray of shape (n_alphas,)
        Effective degrees of freedom per candidate.
    n_features_in_ : int
        Number of input grid points.
    feature_names_in_ : ndarray of shape (n_features_in_,)
        Column names of ``X`` when they are all strings.

    See Also
    --------
    FunctionOnScalarRidge : Curve-valued responses from scalar covariates.
    sklearn.linear_model.Ridge : Multi-output ridge on raw grid values.

    Notes
    -----
    Integral model: the criterion is ``sum_i w_i int (Y_i - fit_i)^2 dt +
    alpha [int int (d^q beta / ds^q)^2 ds dt + int int (d^q beta / dt^q)^2 ds dt
    + int (D^q beta_0)^2 dt]``: one alpha for both directions, so give the two
    grids comparable units (or rescale them). The t-integral of the
    s-roughness uses the response-grid quadrature. The input curves enter
    through their basis coordinates ``int X_i psi_a``, centred, so the fit
    is the function-on-scalar problem on those coordinates; the data are
    read once. Concurrent model: ``alpha int [(D^q beta_0)^2 + (D^q
    beta_1)^2] dt``; its bands use a sandwich (heteroscedasticity-robust)
    covariance from a second pass over the data.

    GCV treats all ``n_samples * n_response_points`` residuals as
    independent; with strongly autocorrelated residual curves on dense grids
    prefer :class:`~sklearn.model_selection.GridSearchCV` over ``alpha``.
    Confidence bands are pointwise, ignore the smoothing bias and are not
    simultaneous. Predictions are statistical estimates: validate them on
    your own process data before they drive a quality or safety decision,
    and follow the applicable standards and qualified practice.

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 14 and 16. Springer.

    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

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
    >>> concurrent = FunctionOnFunctionRidge(kind="concurrent").fit(heating, cooling)
    >>> concurrent.coef_function_.shape
    (41,)
    """

    _parameter_constraints = {
        **RESPONSE_PARAMETER_CONSTRAINTS,
        "kind": [StrOptions(set(KINDS))],
        "grid": ["array-like", None],
    }

    def __init__(
        self,
        kind="integral",
        basis="bspline",
        n_basis=None,
        degree=3,
        knots=None,
        alpha=None,
        alphas=None,
        penalty_order=2,
        grid=None,
        response_grid=None,
        quadrature="trapezoid",
    ):
        self.kind = kind
        self.basis = basis
        self.n_basis = n_basis
        self.degree = degree
        self.knots = knots
        self.alpha = alpha
        self.alphas = alphas
        self.penalty_order = penalty_order
        self.grid = grid
        self.response_grid = response_grid
        self.quadrature = quadrature

    def fit(self, X, y, sample_weight=None):
        """Fit the coefficient functions.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Input curves on the grid (no NaN).
        y : array-like of shape (n_samples, n_response_points)
            Response curves on the response grid (no NaN).
        sample_weight : array-like of shape (n_samples,), default=None
            Weights of the observations (frequency weights in the bands).

        Returns
        -------
        self : object
            Fitted estimator.
        """
        self._validate_params()
        check_alphas(self.alphas)
        X = validate_curves(self, X, reset=True)
        y_in, y = y, validate_response(self, y, X.shape[0], reset=True)
        if self.kind == "concurrent":
            self._check_shared_grid(y_in)
        w = _check_sample_weight(sample_weight, X)
        self._solve(self._statistics(X, y, w))
        if self.kind == "concurrent":
            self.coef_covariance_ = self._concurrent_covariance(X, y, w)
        return self

    def _check_shared_grid(self, y):
        labels = getattr(y, "columns", None)
        labelled = labels is not None and grid_from_labels(list(labels)) is not None
        same_size = y.shape[1] == self.grid_.size
        if self.response_grid is None and not labelled and same_size:
            self.response_grid_ = self.grid_.copy()
        if self.response_grid_.shape != self.grid_.shape or not np.allclose(
            self.response_grid_, self.grid_, rtol=1e-9, atol=0
        ):
            raise ValueError(
                "kind='concurrent' needs X and y sampled on one shared grid; got "
                f"{self.grid_.size} input points and a response grid of "
                f"{self.response_grid_.size} points that differs. Resample one of "
                "them, or use kind='integral'."
            )

    def _input_design(self):
        """(quadrature-weighted input basis on grid_, input basis)."""
        basis = basis_for(self, self.grid_, cap=self.alpha == 0)
        w = quadrature_weights(self.grid_, self.quadrature)
        return basis.evaluate(self.grid_) * w[:, None], basis

    def _statistics(self, X, y, sample_weight=None):
        """Additive statistics of one chunk of (X, y); merge with ``merge``."""
        basis, weights = self._response_basis()
        if self.kind == "concurrent":
            return _pointwise_sums(X, y, sample_weight)
        psi_w, _ = self._input_design()
        phi_w = basis.evaluate(self.response_grid_) * weights[:, None]
        return response_statistics(chunked_matmul(X, psi_w), y, phi_w, sample_weight)

    def _solve(self, stats):
        """Fit from (merged) statistics and store the fitted attributes.

        For ``kind="concurrent"`` the band covariance needs a second pass over
        the data (:meth:`_concurrent_covariance`); until then it is NaN.
        """
        basis, weights = self._response_basis()
        phi = basis.evaluate(self.response_grid_)
        alphas = check_alphas(self.alphas)
        if self.kind == "concurrent":
            fitted = _solve_concurrent(
                stats, phi, weights, self._penalty(basis), self.alpha, alphas
            )
        else:
            _, psi = self._input_design()
            fitted = solve_response(
                stats, phi, weights, self._penalty(basis), psi.gram(),
                self._penalty(psi), self.alpha, alphas,
            )
        store_solution(self, basis, fitted)
        return self

    def _concurrent_like(self):
        return self.kind == "concurrent"

    def _coef_rows(self):
        if self.kind == "concurrent":
            return np.array([[0.0, 1.0]])
        psi = basis_for(self, self.grid_, cap=False).evaluate(self.grid_)
        return np.column_stack([np.zeros(psi.shape[0]), psi])

    def _concurrent_covariance(self, X, y, w):
        """Sandwich covariance ``H^-1 (sum w g g') H^-1`` of the basis coefs.

        ``g_i = (Phi' W e_i, Phi' W (X_i e_i))`` are the curves' score
        contributions at the fit, ``H`` the penalized normal matrix; the
        factor ``sw / (sw - 2)`` corrects for the two fitted functions.
        """
        basis, weights = self._response_basis()
        phi_w = basis.evaluate(self.response_grid_) * weights[:, None]
        resid = y - self.intercept_function_ - X * self.coef_function_
        scores = np.hstack([resid @ phi_w, (resid * X) @ phi_w])
        meat = (scores * w[:, None]).T @ scores
        sw = float(w.sum())
        gram = _concurrent_gram(_pointwise_sums(X, y, w), phi_w, basis.evaluate(
            self.response_grid_))
        penalty = block_diag(*[self._penalty(basis)] * 2)
        bread = np.linalg.pinv(gram + self.alpha_ * penalty, hermitian=True)
        factor = sw / (sw - 2) if sw > 2 else np.nan
        return factor * bread @ meat @ bread

    def predict(self, X, response_points=None):
        """Predicted response curves.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Input curves on ``grid_``.
        response_points : array-like of shape (n_points,), default=None
            Where to evaluate the curves, inside the response domain; None
            means ``response_grid_``. Not available for the concurrent
            model, whose inputs are known only on ``grid_``.

        Returns
        -------
        y_pred : ndarray of shape (n_samples, n_response_points or n_points)
        """
        check_is_fitted(self)
        X = validate_curves(self, X, reset=False)
        if self.kind == "concurrent":
            if response_points is not None:
                raise ValueError(
                    "response_points is not available for kind='concurrent': the "
                    "inputs are known only on grid_; resample X instead."
                )
            return self.intercept_function_ + X * self.coef_function_
        if response_points is None:
            intercept, coef = self.intercept_function_, self.coef_function_
        else:
            intercept, coef = self.coef_functions_at(response_points)
        w = quadrature_weights(self.grid_, self.quadrature)
        return chunked_matmul(X, coef * w[:, None]) + intercept


def _pointwise_sums(X, y, sample_weight):
    """Weighted sums over curves at every grid point (concurrent model)."""
    X = np.asarray(X, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    w = np.ones(X.shape[0]) if sample_weight is None else np.asarray(sample_weight)
    return {
        "n": X.shape[0],
        "sw": float(w.sum()),
        "x": w @ X,
        "xx": w @ (X * X),
        "y": w @ y,
        "xy": w @ (X * y),
        "yy": w @ (y * y),
    }


def _concurrent_gram(stats, phi_w, phi):
    """Normal matrix of (beta_0, beta_1) coefficients, shape (2K, 2K)."""
    def block(values):
        return (phi_w * values[:, None]).T @ phi

    off = block(stats["x"])
    return np.block([[block(np.full(phi.shape[0], stats["sw"])), off],
                     [off.T, block(stats["xx"])]])


def _solve_concurrent(stats, phi, weights, penalty, alpha, alphas):
    """Penalized least squares for (beta_0, beta_1); GCV over ``alphas``."""
    phi_w = phi * weights[:, None]
    gram = _concurrent_gram(stats, phi_w, phi)
    path = PenalizedPath(gram, None if alpha == 0 else block_diag(penalty, penalty))
    rot = path.rotate(np.concatenate([stats["y"] @ phi_w, stats["xy"] @ phi_w])[None])
    if alpha is not None:
        candidates = np.array([float(alpha)])
    elif alphas is None:
        candidates = path.default_alphas()
    else:
        candidates = alphas
    rss = stats["yy"] @ weights - path.rss_reduction(rot, candidates)[0]
    edf = path.edf(candidates)
    sw = stats["sw"]
    criterion = gcv_score(
        np.maximum(rss, 0), edf, sw * weights.size, sw * weights.sum()
    )
    best = int(np.argmin(criterion))
    K = phi.shape[1]
    return {
        "basis_coef": path.coef(rot, candidates[best])[0].reshape(2, K),
        "coef_covariance": np.full((2 * K, 2 * K), np.nan),  # set after the fit
        "alpha": float(candidates[best]),
        "alphas": candidates,
        "criterion": criterion,
        "edf": edf,
    }
