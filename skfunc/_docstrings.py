"""Docstring fragments shared by the estimators, written once.

A class docstring holds a placeholder line ``    %(name)s`` (indented like a
parameter entry) and the class is decorated with :func:`fill_doc`, which puts
the fragment ``name`` in its place. Keep each fragment true for every
estimator that uses it; a fragment that needs an exception for one estimator
is two fragments.
"""

import textwrap

#: the ``alpha`` entry; the ``criterion`` entry that follows differs in its
#: default (``alpha`` and ``alpha_reml``)
_ALPHA = """
alpha : "auto", float or array-like, default="auto"
    Weight of the roughness penalty. Unit-free: the same number gives the
    same fit whatever the grid's unit or origin and the data's scale (see
    :doc:`/bases_and_penalties`). ``"auto"`` chooses it from the training
    data by ``criterion`` among candidates spanning every fit from nearly
    unpenalized to the penalty's null space; a number >= 0 fixes it (0: no
    penalty); an array of numbers > 0 gives the candidates to choose from.
"""

_FRAGMENTS = {
    "basis": """
basis : {"bspline", "fourier", "legendre"}, default="bspline"
    Basis system of the fitted functions. Fourier is periodic with
    ``period``; Legendre polynomials are shifted to the grid's domain.
n_basis : int, default=None
    Number of basis functions. None follows P-spline practice (a generous
    basis, the penalty controls smoothness): ``degree + 1 + min(m // 4,
    35)`` B-splines on ``m`` grid points, the same count made odd for
    Fourier, at most 12 Legendre polynomials, never more than ``m``;
    :class:`~skfunc.preprocessing.CurveSmoother` grows this B-spline default
    when its fit uses nearly all of it (see its Notes). Without a penalty
    (``alpha=0``) it may not exceed the number of grid points.
degree : int, default=3
    Degree of the B-splines (3: cubic). Ignored by the other bases.
interior_knots : array-like of shape (n_knots,), default=None
    Interior knots of the B-splines, strictly inside the domain (the
    boundary knots are the domain's ends); None means evenly spaced. When
    given, ``n_basis`` follows from it: ``n_knots + degree + 1``.
penalty_order : int, default=2
    Derivative order ``q`` of the roughness penalty ``int (D^q f)^2``.
""",
    "alpha": _ALPHA + """criterion : {"gcv", "reml"}, default="gcv"
    How alpha is chosen when it is not fixed: generalized cross-validation
    (Craven and Wahba, 1979) or the restricted likelihood of the
    mixed-model form (REML; Wood, 2011), which undersmooths less often.
""",
    "alpha_reml": _ALPHA + """criterion : {"gcv", "reml"}, default="reml"
    How alpha is chosen when it is not fixed: the restricted likelihood of
    the mixed-model form (REML; Wood, 2011) or generalized cross-validation
    (Craven and Wahba, 1979). REML is the default here: with a few dozen
    curves against the basis the fit can nearly interpolate the outcomes,
    and GCV then often picks such a fit (see
    :doc:`/bases_and_penalties`).
""",
    "alpha_attributes": """
alpha_ : float
    The alpha used: the choice, or the given number.
alphas_path_ : ndarray of shape (n_alphas,)
    The candidates (``[alpha]`` when alpha is fixed).
criterion_path_ : ndarray of shape (n_alphas,) or None
    Criterion of each candidate (lower is better; inf where undefined);
    None when alpha is fixed.
edf_path_ : ndarray of shape (n_alphas,)
    Effective degrees of freedom of each candidate.
""",
    "period": """
period : float, default=None
    Period of the Fourier basis (ignored by the other bases). None means
    the grid's range plus one mean grid step, ``(t_{m-1} - t_0) m / (m -
    1)``: the grid is one cycle whose last point comes one step before the
    next cycle's first. Pass it when the grid closes the cycle, or when
    exact resolution invariance matters.
""",
    "grid": """
grid : array-like of shape (n_features,), default=None
    Sampling points of the columns of ``X``. None means the numeric column
    labels of a DataFrame, else evenly spaced points on [0, 1].
""",
    "grid_channels": """
grid : array-like of shape (n_features,) or dict, default=None
    Sampling points of the columns of ``X``. None means the numeric column
    labels of a DataFrame (with ``(channel, time)`` labels: each channel's
    times), else evenly spaced points on [0, 1]. A dict ``{channel: grid}``
    declares several channels, their columns side by side in that order,
    each on its own grid (see :doc:`/channels`); ``n_basis`` and
    ``interior_knots`` may then be dicts ``{channel: value}`` (a channel
    left out takes None).
""",
    "aligner_output": """
output : {"curves", "warps", "warp_coordinates"}, default="curves"
    What :meth:`transform` returns: the aligned curves, each curve's warp
    ``gamma_i`` on the grid, or the warps' L2-orthonormal coordinates
    ``sqrt(w_j) (gamma_i(t_j) - t_j)`` (phase as features).
%(grid)s
""",
    "aligned_returns": """
Returns
-------
X_out : ndarray of shape (n_samples, n_features)
    Aligned curves, warps or warp coordinates (see ``output``).
""",
    "warps_returns": """
Returns
-------
warps : ndarray of shape (n_samples, n_features)
    Each curve's warp ``gamma_i`` on the fitted grid: ``X[i]`` is about
    the template read on the clock ``gamma_i``.
""",
    "curves_fit": """
%(fit_curves)s

Returns
-------
self : object
    Fitted aligner.
""",
    "fit_curves": """
Parameters
----------
X : array-like of shape (n_samples, n_features)
    Curves, one per row, on the grid.
y : None
    Ignored.
""",
    "fitted_curves": """
Parameters
----------
X : array-like of shape (n_samples, n_features)
    Curves on the fitted grid.
""",
    "landmark_times": """
landmarks : array-like of shape (n_samples, k), default=None
    Landmark times of each curve (strictly inside the domain, increasing
    along each row); None means find them with the ``landmarks`` parameter.
""",
    "paired_grid": """
grid : array-like of shape (n_features,), default=None
    Sampling points of the columns of ``X`` and ``Y``; None means evenly
    spaced on [0, 1].
""",
    "feature_names_in": """
input_features : array-like of str or None, default=None
    Input feature names, validated against ``feature_names_in_``.
""",
    "quadrature": """
quadrature : {"trapezoid", "simpson"}, default="trapezoid"
    Quadrature rule of the integrals over the grid (see
    :doc:`/resolution_invariance`).
""",
    "response_grid": """
response_grid : array-like of shape (n_response_points,), default=None
    Sampling points of the columns of ``y``. None means the numeric column
    labels of a DataFrame ``y``, else evenly spaced points on [0, 1]. A
    one-column ``y`` is a response of one point: a scalar outcome, fitted
    by least squares.
""",
    "eval_points_response": """
eval_points : array-like of shape (n_points,), default=None
    Where to evaluate the curves, inside the response domain; None means
    ``response_grid_``.
""",
    "curve_response_attributes": """
response_grid_ : ndarray of shape (n_response_points,)
    The response grid used at fit; predictions are on it by default.
intercept_function_ : ndarray of shape (n_response_points,)
    ``beta_0(t)`` on ``response_grid_``.
%(alpha_attributes)s
edf_ : float
    Effective degrees of freedom at ``alpha_``.
n_basis_ : int
    Number of response basis functions.
""",
    "n_samples_seen": """
n_samples_seen_ : int
    Number of rows fitted (by :meth:`fit`, or by all calls of
    :meth:`partial_fit` since the first).
""",
    "channelwise_attributes": """
channel_names_, channel_sizes_ : list
    With channels only: their names and numbers of grid points, in order;
    ``grid_`` holds their grids side by side.
channel_estimators_ : list
    With channels only: the fitted estimator of each channel (``alpha_``
    and ``edf_`` then hold one value per channel).
""",
    "curve_input_attributes": """
grid_ : ndarray of shape (n_features,)
    The grid of the columns of ``X`` used at fit (of the curve columns when
    there are scalar covariates).
n_features_in_ : int
    Number of grid points (columns of ``X``) seen during fit.
feature_names_in_ : ndarray of shape (n_features_in_,)
    Column names of ``X`` when they are all strings.
""",
    "curve_response_references": """
References
----------
Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
2nd ed., ch. 13-16. Springer.

Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
functions. *Numerische Mathematik* 31, 377-403.
""",
    "scalar_outcome_X": """
X : array-like of shape (n_samples, n_features)
    Curves, one per row, sampled on the grid; then ``n_covariates`` scalar
    columns.
""",
    "fit_weights_returns": """
sample_weight : array-like of shape (n_samples,), default=None
    Frequency weights of the observations, as in scikit-learn: a weight of
    2 counts the row twice (in the coefficients, the chosen alpha, the noise
    variance and the bands alike), 0 leaves it out. Finite, non-negative,
    not all zero.

Returns
-------
self : object
    Fitted estimator.
""",
    "transformer_fit": """
Parameters
----------
X : array-like or dask array of shape (n_samples, n_features)
    Curves, one per row, sampled on the grid.
%(y_ignored_returns_transformer)s
""",
    "partial_fit_additive": """
The fit depends on the data only through additive statistics, so after the
last batch it equals :meth:`fit` on all batches stacked (up to rounding), a
penalty chosen from the data included. The first batch fixes the grids.
""",
    "partial_fit_y_returns": """
y : None
    Ignored; accepted for pipeline compatibility.

Returns
-------
self : object
    The transformer, fitted on all batches so far.
""",
    "y_ignored_returns_transformer": """
y : None
    Ignored.

Returns
-------
self : object
    Fitted transformer.
""",
    "cautions": """
Results are statistical estimates: read :doc:`/cautions` before they drive
a quality or safety decision.
""",
    "scalar_outcome": """
%(basis)s
n_covariates : int, default=0
    Number of trailing columns of X that are scalar covariates rather
    than curve values (partial functional linear model). They enter
    linearly and unpenalized; the grid covers the columns before them.
    Put curve columns first (e.g. a ColumnTransformer with the curve
    columns first and the scalar columns last).
fit_intercept : bool, default=True
    Whether to fit an unpenalized intercept.
grid : array-like of shape (n_features - n_covariates,) or dict, default=None
    Sampling points of the curve columns. None means their numeric
    DataFrame column labels, else evenly spaced points on [0, 1]. A dict
    ``{channel: grid}`` (or ``(channel, time)`` DataFrame labels) declares
    several channels, side by side in that order, each with its own
    coefficient function (see :doc:`/channels`); ``n_basis`` and
    ``interior_knots`` may then be dicts ``{channel: value}`` (a channel
    left out takes None).
%(quadrature)s
""",
    "scalar_outcome_attributes": """
coef_function_ : ndarray of shape (n_grid,) or (n_targets, n_grid)
    The estimated beta(t) on ``grid_``.
basis_coef_ : ndarray of shape (n_basis_,) or (n_targets, n_basis_)
    Coefficients of beta in the basis.
covariate_coef_ : ndarray of shape (n_covariates,) or (n_targets, n_covariates)
    Coefficients of the scalar covariates.
coef_ : ndarray of shape (n_features_in_,) or (n_targets, n_features_in_)
    Weights the prediction applies to the columns of X: quadrature weight
    times beta on the curve columns, then ``covariate_coef_``, so that
    ``predict(X) = X @ coef_.T + intercept_``.
intercept_ : float or ndarray of shape (n_targets,)
    The intercept b0 (0.0 when ``fit_intercept=False``).
edf_ : float or ndarray of shape (n_targets,)
    Effective degrees of freedom, the trace of the hat matrix (including
    the intercept and the covariates); one per target when alpha is.
noise_variance_ : float or ndarray of shape (n_targets,)
    ``sum w_i r_i^2 / (n_samples - edf_)``; NaN when ``edf_ >= n_samples``.
coef_covariance_ : ndarray of shape (n_basis_, n_basis_) or (n_targets, ...)
    Bayesian posterior covariance of ``basis_coef_`` (see Notes), used by
    :meth:`confidence_band`.
grid_ : ndarray of shape (n_grid,)
    The grid of the curve columns (with channels: their grids side by side).
channel_names_, channel_sizes_ : list
    With channels only: their names and numbers of grid points, in order.
quadrature_weights_ : ndarray of shape (n_grid,)
    Quadrature weights on ``grid_``.
n_basis_ : int
    Number of basis functions for beta.
%(n_samples_seen)s
n_features_in_ : int
    Number of columns of X (grid points plus covariates).
feature_names_in_ : ndarray of shape (n_features_in_,)
    Column names of X when they are all strings.
""",
    "scalar_outcome_notes": """
Notes
-----
The fit minimises ``sum_i w_i (y_i - b0 - int x_i beta - gamma' s_i)^2 +
alpha int (D^q beta)^2``; with the identity penalty (``penalty_order=0``)
in an orthonormal basis this is :class:`sklearn.linear_model.Ridge` on
the basis coordinates of the curves, and alpha has the same scale.

The confidence band uses the Bayesian posterior covariance
``sigma^2 (G + alpha P)^{-1}`` of the basis coefficients (Wahba, 1983;
Nychka, 1988), with ``G`` the centered cross products of the integrated
design and ``sigma^2 = noise_variance_``. Unlike the frequentist
(sandwich) covariance ``sigma^2 A G A``, it accounts on average for the
smoothing bias, so its coverage holds on average over the grid rather
than at every point. Bands are conditional on alpha.

The data enter through additive statistics (centered cross products of
the integrated design, merged exactly), so ``partial_fit`` over batches
equals ``fit`` on all of them, and a dask array ``X`` is fitted on the
workers block by block and predicted lazily (alpha by GCV only).

%(cautions)s
""",
    "scalar_outcome_references": """
References
----------
Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
2nd ed., ch. 15. Springer.

Wahba, G. (1983). Bayesian "confidence intervals" for the cross-validated
smoothing spline. *J. R. Statist. Soc. B* 45, 133-150.

Nychka, D. (1988). Bayesian confidence intervals for smoothing splines.
*J. Amer. Statist. Assoc.* 83, 1134-1143.

Ruppert, D., Wand, M. P. and Carroll, R. J. (2003). *Semiparametric
Regression*. Cambridge University Press.
""",
    "plot_examples": """
Examples
--------
>>> import matplotlib
>>> matplotlib.use("Agg")
""",
    "kiln_fpca_example": """
%(plot_examples)s
>>> from skfunc.datasets import make_kiln_firing
>>> from skfunc.decomposition import FunctionalPCA
>>> kiln = make_kiln_firing(60, dropout_fraction=0, random_state=0)
>>> fpca = FunctionalPCA(n_components=3, grid=kiln.grid).fit(kiln.data)
""",
    "dataset_samples_grid": """
n_samples : int, default=100
    Number of curves.
grid : int or array-like of shape (n_points,), default=None
    Sampling points (strictly increasing), or a number of evenly spaced
    points on [0, 1]. None means 101 points on [0, 1].
""",
    "dataset_random_state": """
random_state : int, RandomState instance or None, default=None
    Seed.
""",
    "flagged_curves": """
outliers : ndarray of bool of shape (n_curves,)
    Which curves are flagged.
labels : list of str, default=None
    One label per curve; None means the row numbers.
kinds : ndarray of str of shape (n_curves,), default=None
    How each flagged curve is unusual (see
    :meth:`skfunc.outliers.CurveOutlierDetector.outlier_kind`); shown
    in the legend when given.
""",
    "display_labels_ax": """
labels : list of str, default=None
    One label per curve; None means the row numbers.
ax : matplotlib Axes, default=None
    Axes to draw on; None makes a new figure.
**plot_kwargs
    Passed to :meth:`plot`.
""",
    "points_grid": """
grid : array-like of shape (n_points,), default=None
    Sampling points; None means evenly spaced on [0, 1].
quadrature : {"trapezoid", "simpson"}, default="trapezoid"
    Quadrature rule.
""",
    "paired_curves": """
x, y : array-like of shape (n_points,) or (n_curves, n_points)
    Curves sampled on ``grid``; 2-D inputs pair row i with row i, and a
    single curve broadcasts against many.
%(points_grid)s
""",
    "true_pred_curves": """
y_true, y_pred : array-like of shape (n_samples, n_points)
    True and predicted curves on ``grid``.
%(points_grid)s
""",
    "depth_X": """
X : array-like of shape (n_curves, n_points)
    Curves (rows), complete.
""",
    "band_depth_X": """
%(depth_X)s
reference : array-like of shape (n_reference, n_points), default=None
    The sample the depth refers to, on the same grid; None means ``X``.
    At least 2 curves.
""",
    "depth_grid": """
grid : array-like of shape (n_points,), default=None
    Sampling points; None means the numeric column labels of a
    DataFrame, else evenly spaced on [0, 1].
""",
    "band_depth_returns": """
Returns
-------
depth : ndarray of shape (n_curves,)
    Values in [0, 1]; larger is more central.
""",
    "display_curves_grid": """
X : array-like of shape (n_curves, n_points)
    Curves (rows), complete; at least 2.
%(depth_grid)s
""",
    "scalar_outcome_predict_X": """
Parameters
----------
%(scalar_outcome_X)s
""",
}


def _fill(text):
    lines = []
    for line in text.split("\n"):
        stripped = line.strip()
        if stripped.startswith("%(") and stripped.endswith(")s"):
            indent = line[: len(line) - len(line.lstrip())]
            fragment = _fill(_FRAGMENTS[stripped[2:-2]].strip("\n"))
            lines.append(textwrap.indent(fragment, indent))
        else:
            lines.append(line)
    return "\n".join(lines)


def fill_doc(obj):
    """Replace each placeholder line ``<indent>%(name)s`` of ``obj.__doc__``
    by the fragment ``name`` (whose own placeholders are filled too),
    indented alike."""
    obj.__doc__ = _fill(obj.__doc__)
    return obj
