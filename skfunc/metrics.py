"""Scores for curve-valued predictions.

Curves are rows sampled on a common ``grid``; integrals over the domain use
quadrature weights, so scores do not depend on how densely or evenly the
curves were sampled beyond the quadrature's own error.

* :func:`integrated_squared_error`: mean over curves of ``int (y - y_hat)^2``.
* :func:`integrated_r2_score`: ``1 - sum_i int (y_i - y_hat_i)^2 /
  sum_i int (y_i - y_bar)^2``.

Both take ``multioutput="raw_values"`` for one value per curve (per row of
``y_true``), named after scikit-learn's option; scikit-learn's
``raw_values`` are per column, which here is :func:`pointwise_r2_score`.
* :func:`pointwise_r2_score`: ``R^2(t)`` at every grid point.

The scorers :data:`integrated_r2_scorer` and
:data:`neg_integrated_squared_error_scorer` plug into ``scoring=`` of
:class:`~sklearn.model_selection.GridSearchCV` and
:func:`~sklearn.model_selection.cross_val_score`; they take the grid from
the fitted estimator's ``response_grid_`` (the last step of a pipeline), or
from numeric column labels of a DataFrame ``y``.

References
----------
Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*, 2nd
ed., sec. 13.2 (pointwise and integrated R^2). Springer.
"""

import numpy as np
from sklearn.utils.validation import check_consistent_length

from ._grid import check_grid, grid_from_labels, grid_weights
from ._weights import check_sample_weight
from .hilbert import _curves

__all__ = [
    "integrated_squared_error",
    "integrated_r2_score",
    "pointwise_r2_score",
    "make_curve_scorer",
    "integrated_r2_scorer",
    "neg_integrated_squared_error_scorer",
]


def _check_curves(y_true, y_pred, sample_weight):
    """Validated ``(y_true, y_pred, sample_weight)``, both curves divided by
    one common scale ``s`` (the largest absolute value of either), which is
    returned too: squares of scaled values neither overflow nor underflow."""
    y_true, y_pred = _curves(y_true, "y_true"), _curves(y_pred, "y_pred")
    for name, arr in (("y_true", y_true), ("y_pred", y_pred)):
        if arr.ndim != 2:
            raise ValueError(
                f"Expected 2D array for {name} (curves as rows, grid points as "
                f"columns); got a 1-D array of shape {arr.shape}. Reshape one curve "
                "with y.reshape(1, -1)."
            )
    check_consistent_length(y_true, y_pred)
    if y_true.shape != y_pred.shape:
        raise ValueError(
            f"y_true and y_pred must have the same shape (curves as rows, grid "
            f"points as columns); got {y_true.shape} and {y_pred.shape}."
        )
    sw = check_sample_weight(sample_weight, y_true, data_name="y_true")
    s = max(np.max(np.abs(y_true)), np.max(np.abs(y_pred)))
    s = s if s > 0 else 1.0
    return y_true / s, y_pred / s, sw, s


def _deviations(y_true, sw):
    """Deviations from the weighted mean curve, and a mask of the entries
    that are zero within rounding."""
    mean = sw @ y_true / sw.sum()
    deviations = y_true - mean
    # the weighted mean of n values has a forward rounding error of at most
    # (n + 1) eps/2 max|y| (Higham 2002, sec. 3.1; positive weights); a
    # deviation within (n + 2) eps max|y| of its column is zero
    scale = np.max(np.abs(y_true), axis=0)
    small = np.abs(deviations) <= (y_true.shape[0] + 2) * np.finfo(np.float64).eps * scale
    return deviations, small


def _sums(y_true, y_pred, sw):
    """Weighted sums over curves of squared errors and squared deviations,
    with SST set to 0 where the true values do not vary beyond rounding."""
    deviations, small = _deviations(y_true, sw)
    sse = sw @ (y_true - y_pred) ** 2
    sst = sw @ deviations**2
    return sse, np.where(small.all(axis=0), 0.0, sst)


MULTIOUTPUT = ("raw_values", "uniform_average", "variance_weighted")


def _check_multioutput(multioutput, accepted):
    if not (isinstance(multioutput, str) and multioutput in accepted):
        raise ValueError(
            f"multioutput must be one of {accepted}; got {multioutput!r}."
        )


def _ratio_score(sse, sst):
    """``1 - sse / sst``, with scikit-learn's convention where ``sst`` is 0:
    1 for a perfect prediction, else 0."""
    flat = sst == 0
    with np.errstate(divide="ignore", invalid="ignore"):
        r2 = 1.0 - sse / np.where(flat, 1.0, sst)
    return np.where(flat, np.where(sse == 0, 1.0, 0.0), r2)


def integrated_squared_error(y_true, y_pred, *, grid=None, quadrature="trapezoid",
                             sample_weight=None, multioutput="uniform_average"):
    """Mean integrated squared error ``mean_i int (y_i(t) - y_hat_i(t))^2 dt``.

    With ``multioutput="raw_values"``, the integrated squared error of each
    curve, ``ISE_i = int (y_i(t) - y_hat_i(t))^2 dt``, not averaged.

    Parameters
    ----------
    y_true, y_pred : array-like of shape (n_samples, n_points)
        True and predicted curves on ``grid``.
    grid : array-like of shape (n_points,), default=None
        Sampling points; None means evenly spaced on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule.
    sample_weight : array-like of shape (n_samples,), default=None
        Frequency weights of the curves (a weight of 2 counts a curve twice):
        finite, non-negative, not all zero. They weight the average; raw
        values are not multiplied by them.
    multioutput : {"uniform_average", "raw_values"}, default="uniform_average"
        "uniform_average": the (sample-weighted) mean of ``ISE_i`` over
        curves. "raw_values": one ``ISE_i`` per curve (per row, not per grid
        point as in :func:`sklearn.metrics.mean_squared_error`).

    Returns
    -------
    float or ndarray of shape (n_samples,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.metrics import integrated_squared_error
    >>> t = np.linspace(0, 1, 101)
    >>> y = np.vstack([t, t])
    >>> round(integrated_squared_error(y, y + 0.5, grid=t), 6)  # int 0.25 dt
    0.25
    >>> integrated_squared_error(y, y + [[0.5], [1.0]], grid=t,
    ...                          multioutput="raw_values").round(6)
    array([0.25, 1.  ])
    """
    _check_multioutput(multioutput, MULTIOUTPUT[:2])
    y_true, y_pred, sw, s = _check_curves(y_true, y_pred, sample_weight)
    weights = grid_weights(grid, y_true.shape[1], quadrature, data_name="y_true")
    ise = (y_true - y_pred) ** 2 @ weights
    if multioutput == "raw_values":
        return s * (s * ise)
    return float(s * (s * (sw @ ise / sw.sum())))


def integrated_r2_score(y_true, y_pred, *, grid=None, quadrature="trapezoid",
                        sample_weight=None, multioutput="variance_weighted"):
    """Integrated coefficient of determination ``1 - int SSE(t) / int SST(t)``.

    ``SSE(t) = sum_i w_i (y_i(t) - y_hat_i(t))^2`` and
    ``SST(t) = sum_i w_i (y_i(t) - y_bar(t))^2``, integrated over the grid
    with quadrature weights. Like :func:`sklearn.metrics.r2_score`, 1 is a
    perfect prediction and the mean curve scores 0. When the true curves do
    not vary (SST = 0) the score is 1 for a perfect prediction and 0
    otherwise, as scikit-learn's convention.

    Per curve (``multioutput="raw_values"``), the score of curve ``i`` is
    ``R^2_i = 1 - ISE_i / V_i`` with ``ISE_i = int (y_i(t) - y_hat_i(t))^2 dt``
    and ``V_i = int (y_i(t) - y_bar(t))^2 dt``, where ``y_bar`` is the
    (sample-weighted) mean of all true curves: the share of curve ``i``'s
    departure from the mean curve that the prediction explains. Predicting
    the mean curve gives 0 for every curve. A curve equal to the mean curve
    (``V_i = 0`` within rounding) gets 1 if predicted exactly, else 0. A
    curve close to the mean curve has a small ``V_i``, so its ``R^2_i`` can
    be very negative for a small error; the default average weights each
    curve by ``V_i`` for that reason.

    Parameters
    ----------
    y_true, y_pred : array-like of shape (n_samples, n_points)
        True and predicted curves on ``grid``.
    grid : array-like of shape (n_points,), default=None
        Sampling points; None means evenly spaced on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule.
    sample_weight : array-like of shape (n_samples,), default=None
        Frequency weights of the curves (a weight of 2 counts a curve twice):
        finite, non-negative, not all zero. They give the mean curve
        ``y_bar`` and weight the averages; raw values are not multiplied by
        them.
    multioutput : {"variance_weighted", "uniform_average", "raw_values"}, \
            default="variance_weighted"
        "variance_weighted": the mean of ``R^2_i`` weighted by
        ``w_i V_i``, which equals ``1 - int SSE(t) / int SST(t)``.
        "uniform_average": the (sample-weighted) mean of ``R^2_i``.
        "raw_values": one ``R^2_i`` per curve (per row, not per grid point
        as in :func:`sklearn.metrics.r2_score`; see
        :func:`pointwise_r2_score` for that).

    Returns
    -------
    float or ndarray of shape (n_samples,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.metrics import integrated_r2_score
    >>> y = np.array([[0.0, 1.0, 2.0], [2.0, 3.0, 4.0]])
    >>> integrated_r2_score(y, y)
    1.0
    >>> integrated_r2_score(y, np.tile(y.mean(axis=0), (2, 1)))  # the mean curve
    0.0
    >>> integrated_r2_score(y, [[0.0, 1.0, 2.0], [2.0, 3.0, 3.0]],
    ...                     multioutput="raw_values")
    array([1.  , 0.75])
    """
    _check_multioutput(multioutput, MULTIOUTPUT)
    y_true, y_pred, sw, _ = _check_curves(y_true, y_pred, sample_weight)
    weights = grid_weights(grid, y_true.shape[1], quadrature, data_name="y_true")
    deviations, small = _deviations(y_true, sw)
    ise = (y_true - y_pred) ** 2 @ weights
    variance = np.where(small, 0.0, deviations**2) @ weights
    if multioutput == "variance_weighted":
        return float(_ratio_score(sw @ ise, sw @ variance))
    r2 = _ratio_score(ise, variance)
    if multioutput == "raw_values":
        return r2
    return float(sw @ r2 / sw.sum())


def pointwise_r2_score(y_true, y_pred, *, sample_weight=None):
    """``R^2(t) = 1 - SSE(t) / SST(t)`` at every grid point.

    The same as :func:`sklearn.metrics.r2_score` with
    ``multioutput="raw_values"``; points where the true curves do not vary
    get 1 for a perfect prediction there and 0 otherwise. Unlike
    scikit-learn, "do not vary" means "not beyond rounding of their own
    values", so a constant column such as 0.1 (whose computed mean is off by
    one rounding step) scores 0, not -5e31, for an imperfect prediction.
    One column (a one-point "curve") is accepted: no grid is needed.

    Parameters
    ----------
    y_true, y_pred : array-like of shape (n_samples, n_points)
        True and predicted curves.
    sample_weight : array-like of shape (n_samples,), default=None
        Frequency weights of the curves (a weight of 2 counts a curve twice):
        finite, non-negative, not all zero.

    Returns
    -------
    ndarray of shape (n_points,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.metrics import pointwise_r2_score
    >>> y = np.array([[0.0, 1.0], [2.0, 3.0]])
    >>> pointwise_r2_score(y, [[0.0, 2.0], [2.0, 2.0]])
    array([1., 0.])
    """
    y_true, y_pred, sw, _ = _check_curves(y_true, y_pred, sample_weight)
    return _ratio_score(*_sums(y_true, y_pred, sw))


def _final_step(estimator):
    while hasattr(estimator, "steps"):
        estimator = estimator.steps[-1][1]
    return estimator


class _CurveScorer:
    """A ``scoring=`` callable ``(estimator, X, y, sample_weight=None)``."""

    def __init__(self, score_func, sign, grid, quadrature):
        self.score_func = score_func
        self.sign = sign
        self.grid = grid
        self.quadrature = quadrature

    def _grid_for(self, estimator, y):
        if self.grid is not None:
            return self.grid
        labels = getattr(y, "columns", None)
        if labels is not None:
            inferred = grid_from_labels(list(labels))
            if inferred is not None:
                return inferred
        return getattr(_final_step(estimator), "response_grid_", None)

    def __call__(self, estimator, X, y, sample_weight=None):
        y_pred = estimator.predict(X)
        score = self.score_func(
            y, y_pred, grid=self._grid_for(estimator, y),
            quadrature=self.quadrature, sample_weight=sample_weight,
        )
        return self.sign * score

    def __repr__(self):
        sign = "" if self.sign > 0 else ", greater_is_better=False"
        return f"make_curve_scorer({self.score_func.__name__}{sign})"


def make_curve_scorer(score_func, *, greater_is_better=True, grid=None,
                      quadrature="trapezoid"):
    """Make a ``scoring=`` callable from an integrated curve metric.

    Parameters
    ----------
    score_func : callable
        ``score_func(y_true, y_pred, *, grid, quadrature, sample_weight)``,
        such as :func:`integrated_r2_score` or :func:`integrated_squared_error`.
    greater_is_better : bool, default=True
        False for losses: the scorer returns their negative.
    grid : array-like of shape (n_points,), default=None
        Response grid. None means numeric column labels of a DataFrame ``y``,
        else the estimator's ``response_grid_``, else evenly spaced on [0, 1].
    quadrature : {"trapezoid", "simpson"}, default="trapezoid"
        Quadrature rule.

    Returns
    -------
    scorer : callable
        ``scorer(estimator, X, y, sample_weight=None)``.

    Examples
    --------
    >>> from sklearn.model_selection import GridSearchCV
    >>> from skfunc.linear_model import FunctionOnScalarRidge
    >>> from skfunc.metrics import integrated_squared_error, make_curve_scorer
    >>> scorer = make_curve_scorer(integrated_squared_error, greater_is_better=False)
    >>> search = GridSearchCV(FunctionOnScalarRidge(), {"alpha": [1e-3, 1.0]},
    ...                       scoring=scorer)
    """
    if not callable(score_func):
        raise TypeError(f"score_func must be callable; got {score_func!r}.")
    grid = None if grid is None else check_grid(grid)
    return _CurveScorer(score_func, 1 if greater_is_better else -1, grid, quadrature)


#: ``scoring=`` callable: integrated R^2 (greater is better)
integrated_r2_scorer = make_curve_scorer(integrated_r2_score)
#: ``scoring=`` callable: minus the mean integrated squared error
neg_integrated_squared_error_scorer = make_curve_scorer(
    integrated_squared_error, greater_is_better=False
)
