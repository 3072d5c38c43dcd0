"""ConcurrentFunctionRidge: a response curve from an input curve at the same
points, ``Y_i(t) = beta_0(t) + beta_1(t) X_i(t)``."""

from functools import partial

import numpy as np

from ._alpha import check_alpha, gcv_in_data_units, reml_score
from ._blocks import compute_statistics, in_pieces, output_dtype, single_thread_blas
from ._docstrings import fill_doc
from ._fit import check_finite_fit
from ._function_response import (
    CurveInputResponseRegressor,
    check_in_domain,
    choose_from_scores,
    free_penalty,
    resolve_candidates,
    validate_response,
)
from ._penalized import (
    NotIdentifiableError,
    SplitPath,
    gcv_score,
    penalty_for,
    scale_down,
    scaled_statistics,
    to_data_units,
)
from ._weights import check_sample_weight


@fill_doc
class ConcurrentFunctionRidge(CurveInputResponseRegressor):
    """Concurrent functional regression: a response curve from an input curve
    at the same points.

    Each row of ``X`` is an input curve on ``grid`` and each row of ``y`` a
    response curve on ``response_grid``, any number of points inside the
    input's domain. The model is

        Y_i(t) = beta_0(t) + beta_1(t) X_i(t) + eps_i(t),

    with ``X_i(t)`` read at the response points by linear interpolation on
    the input grid (the values themselves where the points are on it), and
    both coefficient functions in a basis on the response grid, fitted by
    quadrature-weighted least squares with the roughness penalty ``alpha
    int (D^q beta_1)^2 dt`` on the slope (``beta_0`` unpenalized), ``alpha``
    fixed or chosen by GCV or REML (``criterion``). For ``Y_i(t)`` from the
    whole input curve, see :class:`FunctionOnFunctionRidge`.

    Parameters
    ----------
    %(alpha)s
    %(basis)s
    %(period)s
    grid : array-like of shape (n_features,), default=None
        Sampling points of the columns of ``X``. None means the numeric
        column labels of a DataFrame, else evenly spaced points on [0, 1].
    response_grid : array-like of shape (n_response_points,), default=None
        Sampling points of the columns of ``y``, inside the input grid's
        domain ``[grid_[0], grid_[-1]]``. None means the numeric column
        labels of a DataFrame ``y``; else the input grid itself when ``y``
        has as many columns as ``X``; else evenly spaced points on the input
        grid's domain (``np.linspace(grid_[0], grid_[-1], n_response_points)``,
        so a one-column ``y`` is the response at the domain's start). A
        response of one point is the simple least-squares regression of
        ``y`` on ``X_i(t_0)``: there is nothing to smooth.
    %(quadrature)s

    Attributes
    ----------
    coef_function_ : ndarray of shape (n_response_points,)
        ``beta_1(t)`` on ``response_grid_``.
    basis_coef_ : ndarray of shape (2, n_basis_)
        Basis coefficients of ``beta_0`` (row 0) and ``beta_1``.
    coef_covariance_ : ndarray of shape (2 * n_basis_, 2 * n_basis_)
        Sandwich (heteroscedasticity-robust) covariance of ``basis_coef_``
        flattened row-major, from a second pass over the data.
    %(curve_response_attributes)s
    n_samples_seen_ : int
        Number of curves fitted.
    %(curve_input_attributes)s

    See Also
    --------
    FunctionOnFunctionRidge : ``Y(t)`` from the whole input curve.

    Notes
    -----
    The fit reads the data through additive sums at every response point, then
    once more for the sandwich covariance of the bands; both passes run per
    row block (on the workers for dask arrays). The bands need the fitted
    coefficients, so there is no ``partial_fit``.
    %(cautions)s

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 14. Springer.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.linear_model import ConcurrentFunctionRidge
    >>> rng = np.random.default_rng(0)
    >>> t = np.linspace(0, 1, 41)
    >>> heating = np.outer(rng.uniform(1150, 1250, 60), np.sin(np.pi * t / 2))
    >>> cooling = 0.5 * heating * t + rng.normal(0, 1, (60, 41))
    >>> model = ConcurrentFunctionRidge().fit(heating, cooling)
    >>> model.coef_function_.shape
    (41,)
    >>> model.predict(heating[:3]).shape
    (3, 41)

    The response may be sampled elsewhere in the domain, here at 5 points:

    >>> late = ConcurrentFunctionRidge(response_grid=[0.6, 0.7, 0.8, 0.9, 1.0])
    >>> late.fit(heating, cooling[:, 24::4]).predict(heating[:3]).shape
    (3, 5)
    """

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        # The response at t is paired with the input at t only: a one-column
        # y (a response at t_0) is regressed on X's value at t_0 alone, so
        # scikit-learn's benchmark data, whose signal sits in one other
        # column, gives an R^2 near 0 by design.
        tags.regressor_tags.poor_score = True
        return tags

    def fit(self, X, y, sample_weight=None):
        """Fit the coefficient functions and their band covariance.

        Parameters
        ----------
        X : array-like or dask array of shape (n_samples, n_features)
            Input curves on the grid (no NaN).
        y : array-like or dask array of shape (n_samples, n_response_points)
            Response curves on the response grid (no NaN).
        sample_weight : array-like of shape (n_samples,), default=None
            Frequency weights of the observations (weight 2 = the row twice).

        Returns
        -------
        self : object
            Fitted estimator.
        """
        self._forget()
        self._validate_params()
        X, y, w = self._validate_batch(X, y, sample_weight, first=True)
        stats = compute_statistics(self._statistics, X, y, w)
        self.n_samples_seen_ = int(X.shape[0])
        # the solves are small (2K square): one BLAS thread, whose latency is
        # lower than a team's (many times lower on a busy machine)
        with single_thread_blas():
            path, basis = self._solve(stats)
        # the second pass in the first one's units (X, y over powers of two)
        meat = compute_statistics(partial(self._score_products, x_exp=stats["x_exp"],
                                          y_exp=stats["y_exp"]), X, y, w)["meat"]
        with single_thread_blas():
            self.coef_covariance_ = self._sandwich(stats, meat, path, basis.n_basis)
        return check_finite_fit(self)

    def _validate_batch(self, X, y, sample_weight, first):
        check_alpha(self.alpha)
        X, y_valid = self._validate_inputs(X, y, reset=first)
        if X.shape[0] < 2:
            raise ValueError(
                f"ConcurrentFunctionRidge needs at least 2 curves to tell beta_0 "
                f"from beta_1; got n_samples={X.shape[0]}."
            )
        y_valid = validate_response(self, y_valid, X.shape[0], reset=first,
                                    default=self._default_response_grid)
        if first:
            check_in_domain(self.response_grid_, self.grid_[[0, -1]], "response_grid",
                            "the input grid's domain")
        return X, y_valid, check_sample_weight(sample_weight, X)

    def _default_response_grid(self, n_points):
        """The input grid for as many points, else evenly spaced on its domain."""
        if n_points == self.grid_.size:
            return self.grid_.copy()
        return np.linspace(self.grid_[0], self.grid_[-1], n_points)

    def _input_at(self, X, points):
        """``X_i(t)`` at the points ``t``: the columns themselves on the
        input grid, else linear interpolation between the two neighbouring
        columns (numpy or dask rows)."""
        grid = self.grid_
        if np.array_equal(grid, points):
            return X
        left = np.clip(np.searchsorted(grid, points, side="right") - 1, 0,
                       grid.size - 2)
        frac = np.clip((points - grid[left]) / (grid[left + 1] - grid[left]), 0, 1)
        return X[:, left] * (1 - frac) + X[:, left + 1] * frac

    def _statistics(self, X, y, sample_weight=None):
        """Weighted sums over curves at every response point.

        Keys ``n``, ``sw`` (count and weight total), ``x``, ``xx``, ``y``,
        ``xy``, ``yy`` (weighted sums of X, X^2, y, X y, y^2 per response
        point, X read there): all sums, of X and y divided by powers of two
        (``x_exp``, ``y_exp``: :func:`skfunc._penalized.scaled_statistics`),
        merged key by key (:func:`skfunc._penalized.merge`); formed over
        cache-sized row pieces (:func:`skfunc._blocks.in_pieces`).
        """
        return in_pieces(self._piece_statistics, X, y, sample_weight)

    def _piece_statistics(self, X, y, sample_weight):
        X = self._input_at(np.asarray(X, dtype=np.float64), self.response_grid_)
        return scaled_statistics(self._point_sums, X, y, sample_weight)

    @staticmethod
    def _point_sums(X, y, sample_weight):
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

    def _normal_matrix(self, stats, phi_w, phi):
        """Normal matrix of the (beta_1, beta_0) coefficients, (2K, 2K):
        the penalized slope first, the unpenalized intercept last."""
        def block(values):
            return (phi_w * values[:, None]).T @ phi

        off = block(stats["x"])
        return np.block([[block(stats["xx"]), off.T],
                         [off, block(np.full(phi.shape[0], stats["sw"]))]])

    def _path(self, stats):
        """The split path of (beta_1, beta_0): beta_1's roughness penalty on
        [0, 1] with its null space exact, beta_0 unpenalized; and the basis,
        weights and basis values."""
        basis, weights = self._response_basis()
        phi = basis.evaluate(self.response_grid_)
        phi_w = phi * weights[:, None]
        slope = (free_penalty(basis.n_basis) if self._unpenalized()
                 else penalty_for(basis, self.penalty_order))
        penalty = slope.extend(basis.n_basis)
        try:
            path = SplitPath(self._normal_matrix(stats, phi_w, phi), penalty)
        except NotIdentifiableError as exc:
            m, k = self.response_grid_.size, basis.n_basis
            if k > m:
                advice = (
                    f"the intercept function is unpenalized, so its {k} basis "
                    f"functions need at least as many response grid points ({m}). "
                    "Use a smaller n_basis."
                )
            elif self._unpenalized():
                advice = (
                    "with alpha=0 (no penalty) the data must determine every basis "
                    "coefficient and do not. Use a smaller n_basis, more curves, or "
                    "a roughness penalty (alpha > 0 or 'auto')."
                )
            else:
                advice = (
                    "the slope's functions that the roughness penalty leaves free "
                    f"(degree < penalty_order={self.penalty_order}) are unpenalized, "
                    "so the curves must differ enough at the response points to "
                    "tell them from the intercept, whatever alpha. Use more (or "
                    "more varied) curves or a lower penalty_order."
                )
            raise NotIdentifiableError(
                "ConcurrentFunctionRidge cannot determine its coefficient functions "
                f"from {int(stats['n'])} curves: {advice}"
            ) from exc
        return path, basis, weights, phi_w

    def _solve(self, stats):
        """Penalized least squares for (beta_0, beta_1); alpha by GCV or REML.
        Returns the split path and the basis (the sandwich's bread)."""
        path, basis, weights, phi_w = self._path(stats)
        rot = path.rotate(np.concatenate([stats["xy"] @ phi_w, stats["y"] @ phi_w])[None])
        alphas = resolve_candidates(self.alpha, path.s, path.scale)
        sw, m = stats["sw"], weights.size
        yy_w = stats["yy"] @ weights

        def scores(values, criterion):
            if criterion == "reml":
                return reml_score(yy_w - path.penalized_rss_reduction(rot, values)[0],
                                  sw * m - path.n_null, path.log_det_ratio(values),
                                  2 * stats["y_exp"] * np.log(2.0))
            rss = np.maximum(yy_w - path.rss_reduction(rot, values)[0], 0.0)
            return gcv_score(rss, path.edf(values), sw * m, sw * weights.sum())

        try:
            best, criterion = choose_from_scores(self, alphas, scores)
            coef = path.coef(rot, alphas[best])[0]
        except NotIdentifiableError as exc:
            raise NotIdentifiableError(
                f"ConcurrentFunctionRidge: {exc}"
            ) from exc
        K = basis.n_basis
        if criterion is not None and self.criterion == "gcv":
            criterion = gcv_in_data_units(criterion, stats["y_exp"])
        # (beta_0, beta_1) in the data's units: y's and y / x's
        coef = to_data_units(coef.reshape(2, K)[::-1], stats, np.array([[0], [-1]]), 1,
                             "basis_coef_")
        self._store(basis, coef, alphas, criterion, path.edf(alphas), best)
        return path, basis

    def _score_products(self, X, y, sample_weight, x_exp, y_exp):
        """``sum w g g'`` of the curves' score contributions at the fit,
        ``g_i = (Phi' W e_i, Phi' W (X_i e_i))`` (key ``meat``; a sum), with
        X and y divided by ``2**x_exp`` and ``2**y_exp``; over cache-sized
        row pieces (:func:`skfunc._blocks.in_pieces`)."""
        basis, weights = self._response_basis()
        scaled = {"x_exp": x_exp, "y_exp": y_exp}
        return in_pieces(partial(
            self._piece_score_products, x_exp=x_exp, y_exp=y_exp,
            phi_w=basis.evaluate(self.response_grid_) * weights[:, None],
            intercept=to_data_units(self.intercept_function_, scaled, 0, -1),
            slope=to_data_units(self.coef_function_, scaled, 1, -1)), X, y, sample_weight)

    def _piece_score_products(self, X, y, sample_weight, x_exp, y_exp, phi_w, intercept,
                              slope):
        X = scale_down(self._input_at(np.asarray(X, dtype=np.float64), self.response_grid_),
                       x_exp)
        resid = scale_down(y, y_exp) - intercept
        resid -= X * slope
        scores = np.hstack([resid @ phi_w, (resid * X) @ phi_w])
        return {"meat": (scores * sample_weight[:, None]).T @ scores}

    def _sandwich(self, stats, meat, path, K):
        """Sandwich covariance ``H^-1 (sum w g g') H^-1`` of the basis coefs,
        ``H`` the penalized normal matrix (``path``, of ``K`` basis
        functions per coefficient function); the factor ``sw / (sw - 2)``
        corrects for the two fitted functions."""
        order = np.r_[np.arange(K, 2 * K), np.arange(K)]  # to (beta_0, beta_1)
        bread = path.operator(self.alpha_)[np.ix_(order, order)]
        sw = stats["sw"]
        factor = sw / (sw - 2) if sw > 2 else np.nan
        x_power = np.r_[np.zeros(K, dtype=int), -np.ones(K, dtype=int)]
        return to_data_units(factor * bread @ meat @ bread, stats,
                             x_power[:, None] + x_power[None, :], 2, "coef_covariance_")

    def _coef_rows(self):
        return np.array([[0.0, 1.0]])

    def _coef_shape(self, n_points):
        return (n_points,)

    def _design_effect(self, X, coef, points, offset=None):
        """``beta_1(t) X(t)`` (plus ``offset``), with X read at the points
        ``t``; computed in float64, returned in X's precision."""
        effect = self._input_at(X, points) * coef
        if offset is not None:
            effect = effect + offset
        return effect.astype(output_dtype(X), copy=False)
