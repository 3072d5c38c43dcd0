"""Display objects for curves and fitted functional models.

In scikit-learn's display style: build a display with ``from_estimator`` (or
``from_data``), which computes what to draw and calls :meth:`plot`; or build
one from arrays and call ``plot(ax=...)`` yourself. Each display keeps the
matplotlib artists it drew (``ax_``, ``figure_``, ``line_``, ...) so that they
can be restyled.

matplotlib is optional: it is imported only when something is drawn, and a
missing matplotlib is an ImportError that says how to install it.

* :class:`CurveBandDisplay` -- curves with their mean and a mean +- 2 SD band.
* :class:`ComponentPerturbationDisplay` -- functional principal components
  shown as the mean plus and minus a multiple of each component.
* :class:`CoefficientFunctionDisplay` -- a coefficient function with its
  pointwise confidence band.
* :class:`AlphaCriterionDisplay` -- the selection criterion (GCV,
  leave-one-out, ...) over the candidate penalties, with the chosen one.
"""

import numpy as np
from sklearn.utils.validation import check_array

from ._grid import resolve_grid

__all__ = [
    "CurveBandDisplay",
    "ComponentPerturbationDisplay",
    "CoefficientFunctionDisplay",
    "AlphaCriterionDisplay",
]


def _pyplot(caller):
    """matplotlib.pyplot, or an ImportError naming ``caller`` and the fix."""
    try:
        import matplotlib.pyplot as plt
    except ImportError as exc:
        raise ImportError(
            f"{caller} needs matplotlib, which is not installed. Install it with "
            "`pip install matplotlib` (or `pip install skfunc[plot]`)."
        ) from exc
    return plt


def _fitted_attributes(estimator, names, what):
    """The estimator's fitted attributes ``names``, or a clear error."""
    missing = [n for n in names if not hasattr(estimator, n)]
    if missing:
        raise ValueError(
            f"{what} needs a fitted estimator with the attributes "
            f"{', '.join(names)}; {type(estimator).__name__} has no "
            f"{', '.join(missing)} (is it fitted, and of the right kind?)."
        )
    return [getattr(estimator, n) for n in names]


def _coef_grid(estimator, n_points):
    """The grid a coefficient function lives on: ``grid_`` (curve inputs) or
    ``response_grid_`` (curve responses), whichever matches its length."""
    for name in ("grid_", "response_grid_"):
        grid = getattr(estimator, name, None)
        if grid is not None and np.size(grid) == n_points:
            return np.asarray(grid)
    raise ValueError(
        "CoefficientFunctionDisplay needs a fitted estimator whose grid_ or "
        "response_grid_ has one point per value of coef_function_ "
        f"({n_points}); {type(estimator).__name__} has neither."
    )


class _Display:
    """Shared bookkeeping: where the display drew."""

    def _axes(self, ax):
        plt = _pyplot(f"{type(self).__name__}.plot")
        if ax is None:
            _, ax = plt.subplots()
        self.ax_ = ax
        self.figure_ = ax.figure
        return ax


class CurveBandDisplay(_Display):
    """Curves with their pointwise mean and a mean +- ``n_sd`` SD band.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
        Sampling points.
    curves : ndarray of shape (n_curves, n_points)
        The curves to draw (NaN leaves a gap).
    mean, sd : ndarray of shape (n_points,)
        Pointwise mean and standard deviation of the curves.
    n_sd : float, default=2.0
        Half-width of the band in standard deviations.

    Attributes
    ----------
    curve_lines_ : list of matplotlib Line2D
    mean_line_ : matplotlib Line2D
    band_ : matplotlib PolyCollection
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.hilbert.mean_function, skfunc.hilbert.variance_function

    Examples
    --------
    >>> import matplotlib
    >>> matplotlib.use("Agg")
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.plotting import CurveBandDisplay
    >>> kiln = make_kiln_firing(30, random_state=0)
    >>> display = CurveBandDisplay.from_data(kiln.data, grid=kiln.grid)
    >>> len(display.curve_lines_)
    30
    """

    def __init__(self, grid, curves, mean, sd, *, n_sd=2.0):
        self.grid = grid
        self.curves = curves
        self.mean = mean
        self.sd = sd
        self.n_sd = n_sd

    @classmethod
    def from_data(cls, X, *, grid=None, n_sd=2.0, max_curves=50, ax=None):
        """Compute the mean and SD of the curves ``X`` and plot them.

        Parameters
        ----------
        X : array-like of shape (n_curves, n_points)
            Curves as rows; NaN marks missing values, ignored in the mean
            and SD. A DataFrame with numeric column labels gives the grid.
        grid : array-like of shape (n_points,), default=None
            Sampling points; None means the numeric column labels of a
            DataFrame, else evenly spaced on [0, 1].
        n_sd : float, default=2.0
            Half-width of the band in standard deviations.
        max_curves : int, default=50
            Draw at most this many curves (the first ones); all curves enter
            the mean and SD.
        ax : matplotlib Axes, default=None
            Axes to draw on; None makes a new figure.

        Returns
        -------
        display : CurveBandDisplay
        """
        values = check_array(X, ensure_all_finite="allow-nan", input_name="X")
        grid = resolve_grid(grid, X, values.shape[1])
        if values.shape[0] < 2:
            raise ValueError("CurveBandDisplay needs at least 2 curves for an SD.")
        if not (isinstance(max_curves, int | np.integer) and max_curves >= 0):
            raise ValueError(f"max_curves must be an int >= 0; got {max_curves!r}.")
        if not np.isfinite(n_sd) or n_sd < 0:
            raise ValueError(f"n_sd must be a finite number >= 0; got {n_sd!r}.")
        observed = np.sum(~np.isnan(values), axis=0)
        if np.any(observed < 2):
            j = int(np.flatnonzero(observed < 2)[0])
            raise ValueError(
                f"Grid point {grid[j]!r} (column {j}) has fewer than 2 observed "
                "values; the mean and SD there are undefined."
            )
        mean = np.nanmean(values, axis=0)
        sd = np.nanstd(values, axis=0, ddof=1)
        display = cls(grid, values[:max_curves], mean, sd, n_sd=n_sd)
        return display.plot(ax=ax)

    def plot(self, ax=None, *, curve_kwargs=None, mean_kwargs=None,
             band_kwargs=None):
        """Draw the curves, the mean and the band.

        Parameters
        ----------
        ax : matplotlib Axes, default=None
            Axes to draw on; None makes a new figure.
        curve_kwargs, mean_kwargs, band_kwargs : dict, default=None
            Styles passed to matplotlib's ``plot`` (curves, mean) and
            ``fill_between`` (band).

        Returns
        -------
        display : CurveBandDisplay
        """
        ax = self._axes(ax)
        curve_style = {"color": "0.6", "linewidth": 0.6, "alpha": 0.6,
                       **(curve_kwargs or {})}
        mean_style = {"color": "C0", "linewidth": 2, "label": "mean",
                      **(mean_kwargs or {})}
        band_style = {"color": "C0", "alpha": 0.2,
                      "label": f"mean \u00b1 {self.n_sd:g} SD", **(band_kwargs or {})}
        self.curve_lines_ = [ax.plot(self.grid, c, **curve_style)[0]
                             for c in self.curves]
        half = self.n_sd * self.sd
        self.band_ = ax.fill_between(self.grid, self.mean - half, self.mean + half,
                                     **band_style)
        self.mean_line_ = ax.plot(self.grid, self.mean, **mean_style)[0]
        ax.legend(loc="best")
        return self


class ComponentPerturbationDisplay(_Display):
    """Functional principal components as perturbations of the mean curve.

    For component k the panel shows the mean ``mu``, and ``mu +- factor *
    sqrt(lambda_k) * xi_k``: the curves one would see ``factor`` standard
    deviations along that component.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
    mean : ndarray of shape (n_points,)
    components : ndarray of shape (n_components, n_points)
        Components on ``grid``, L2-normalised.
    explained_variance : ndarray of shape (n_components,)
    explained_variance_ratio : ndarray of shape (n_components,), default=None
        Shown in the panel titles when given.
    factor : float, default=2.0
        Multiple of each component's standard deviation.

    Attributes
    ----------
    axes_ : ndarray of matplotlib Axes, one per component
    mean_lines_, plus_lines_, minus_lines_ : list of matplotlib Line2D
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.decomposition.FunctionalPCA

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., section 8.3. Springer.
    """

    def __init__(self, grid, mean, components, explained_variance,
                 explained_variance_ratio=None, *, factor=2.0):
        self.grid = grid
        self.mean = mean
        self.components = components
        self.explained_variance = explained_variance
        self.explained_variance_ratio = explained_variance_ratio
        self.factor = factor

    @classmethod
    def from_estimator(cls, estimator, *, n_components=None, factor=2.0, ax=None):
        """Plot the leading components of a fitted FunctionalPCA.

        Parameters
        ----------
        estimator : fitted estimator
            With ``grid_``, ``mean_``, ``components_`` and
            ``explained_variance_`` (and optionally
            ``explained_variance_ratio_``), as FunctionalPCA has.
        n_components : int, default=None
            How many leading components to show; None means up to 3.
        factor : float, default=2.0
            Multiple of each component's standard deviation.
        ax : matplotlib Axes or array of Axes, default=None
            One Axes per component; None makes a new figure with a row of
            panels.

        Returns
        -------
        display : ComponentPerturbationDisplay
        """
        grid, mean, comps, var = _fitted_attributes(
            estimator, ["grid_", "mean_", "components_", "explained_variance_"],
            "ComponentPerturbationDisplay",
        )
        ratio = getattr(estimator, "explained_variance_ratio_", None)
        available = len(comps)
        if n_components is None:
            n_components = min(3, available)
        if not (isinstance(n_components, int | np.integer)
                and 1 <= n_components <= available):
            raise ValueError(
                f"n_components must be an int from 1 to {available} (the fitted "
                f"components); got {n_components!r}."
            )
        k = int(n_components)
        if not np.isfinite(factor) or factor <= 0:
            raise ValueError(f"factor must be a finite number > 0; got {factor!r}.")
        display = cls(
            np.asarray(grid), np.asarray(mean), np.asarray(comps)[:k],
            np.asarray(var)[:k], None if ratio is None else np.asarray(ratio)[:k],
            factor=factor,
        )
        return display.plot(ax=ax)

    def plot(self, ax=None):
        """Draw one panel per component.

        Parameters
        ----------
        ax : matplotlib Axes or array of Axes, default=None
            One Axes per component; None makes a new figure.

        Returns
        -------
        display : ComponentPerturbationDisplay
        """
        plt = _pyplot(f"{type(self).__name__}.plot")
        k = len(self.components)
        if ax is None:
            _, ax = plt.subplots(1, k, figsize=(4 * k, 3.2), squeeze=False,
                                 sharey=True)
        axes = np.ravel(np.asarray(ax, dtype=object))
        if axes.size != k:
            raise ValueError(
                f"ax must hold one Axes per component ({k}); got {axes.size}."
            )
        self.axes_, self.figure_ = axes, axes[0].figure
        self.mean_lines_, self.plus_lines_, self.minus_lines_ = [], [], []
        for j, panel in enumerate(axes):
            sd = np.sqrt(self.explained_variance[j])
            shift = self.factor * sd * self.components[j]
            self.mean_lines_.append(panel.plot(self.grid, self.mean, color="k",
                                               linewidth=1.5, label="mean")[0])
            self.plus_lines_.append(panel.plot(
                self.grid, self.mean + shift, color="C3",
                label=f"mean + {self.factor:g} SD \u00d7 component")[0])
            self.minus_lines_.append(panel.plot(
                self.grid, self.mean - shift, color="C0", linestyle="--",
                label=f"mean \u2212 {self.factor:g} SD \u00d7 component")[0])
            title = f"Component {j + 1}"
            if self.explained_variance_ratio is not None:
                title += f" ({100 * self.explained_variance_ratio[j]:.1f}% of variance)"
            panel.set_title(title)
        axes[0].legend(loc="best", fontsize="small")
        return self


class CoefficientFunctionDisplay(_Display):
    """A coefficient function with its pointwise confidence band.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
    coef : ndarray of shape (n_points,)
        The estimated coefficient function on ``grid``.
    lower, upper : ndarray of shape (n_points,)
        Confidence band.
    level : float
        Confidence level of the band (for the legend).
    reference : ndarray of shape (n_points,), default=None
        A known coefficient function to compare with (simulations).

    Attributes
    ----------
    line_ : matplotlib Line2D
    band_ : matplotlib PolyCollection
    reference_line_ : matplotlib Line2D or None
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.linear_model.FunctionalRidge
    """

    def __init__(self, grid, coef, lower, upper, *, level, reference=None):
        self.grid = grid
        self.coef = coef
        self.lower = lower
        self.upper = upper
        self.level = level
        self.reference = reference

    @classmethod
    def from_estimator(cls, estimator, *, level=0.95, target=0, reference=None,
                       ax=None):
        """Plot a fitted estimator's ``coef_function_`` and confidence band.

        Parameters
        ----------
        estimator : fitted estimator
            With ``coef_function_`` on ``grid_`` (curve inputs) or on
            ``response_grid_`` (curve responses), and a method
            ``confidence_band(level)`` returning (lower, upper).
        level : float in (0, 1), default=0.95
            Confidence level.
        target : int, default=0
            Which row of ``coef_function_`` when it is 2-D: a target, or a
            covariate of a function-on-scalar model.
        reference : array-like of shape (n_points,), default=None
            A known coefficient function on ``grid_`` to draw for comparison.
        ax : matplotlib Axes, default=None

        Returns
        -------
        display : CoefficientFunctionDisplay
        """
        (coef,) = _fitted_attributes(
            estimator, ["coef_function_"], "CoefficientFunctionDisplay"
        )
        grid = _coef_grid(estimator, np.shape(coef)[-1])
        if not callable(getattr(estimator, "confidence_band", None)):
            raise ValueError(
                f"CoefficientFunctionDisplay needs an estimator with a "
                f"confidence_band(level) method; {type(estimator).__name__} has none."
            )
        if not (0 < level < 1):
            raise ValueError(f"level must be in (0, 1); got {level!r}.")
        lower, upper = estimator.confidence_band(level)
        coef, lower, upper = (np.atleast_2d(a) for a in (coef, lower, upper))
        if not (isinstance(target, int | np.integer) and 0 <= target < len(coef)):
            raise ValueError(
                f"target must be an int from 0 to {len(coef) - 1} (one per "
                f"coefficient function); got {target!r}."
            )
        if reference is not None:
            reference = check_array(reference, ensure_2d=False, input_name="reference")
            if reference.shape != grid.shape:
                raise ValueError(
                    f"reference must have one value per grid point ({grid.size}); "
                    f"got shape {reference.shape}."
                )
        display = cls(grid, coef[target], lower[target], upper[target], level=level,
                      reference=reference)
        return display.plot(ax=ax)

    def plot(self, ax=None, *, line_kwargs=None, band_kwargs=None):
        """Draw the coefficient function, its band, zero, and the reference.

        Parameters
        ----------
        ax : matplotlib Axes, default=None
        line_kwargs, band_kwargs : dict, default=None
            Styles passed to ``plot`` and ``fill_between``.

        Returns
        -------
        display : CoefficientFunctionDisplay
        """
        ax = self._axes(ax)
        band_style = {"color": "C0", "alpha": 0.25,
                      "label": f"{100 * self.level:g}% confidence band",
                      **(band_kwargs or {})}
        line_style = {"color": "C0", "linewidth": 2, "label": "estimate",
                      **(line_kwargs or {})}
        ax.axhline(0.0, color="0.5", linewidth=0.8)
        self.band_ = ax.fill_between(self.grid, self.lower, self.upper, **band_style)
        self.line_ = ax.plot(self.grid, self.coef, **line_style)[0]
        self.reference_line_ = None
        if self.reference is not None:
            self.reference_line_ = ax.plot(self.grid, self.reference, color="k",
                                           linestyle="--", label="true")[0]
        ax.legend(loc="best")
        return self


class AlphaCriterionDisplay(_Display):
    """The model-selection criterion over candidate penalties ``alpha``.

    Parameters
    ----------
    alphas : ndarray of shape (n_alphas,)
        Candidate penalties.
    criterion : ndarray of shape (n_alphas,) or (n_curves, n_alphas)
        Criterion per candidate (lower is better), or one row per curve for
        estimators that choose a penalty per curve.
    alpha : float or ndarray of shape (n_curves,)
        The chosen penalty (one per row of ``criterion``).
    criterion_name : str, default="criterion"
        Label of the y axis, e.g. "GCV".

    Attributes
    ----------
    lines_ : list of matplotlib Line2D
        One per row of ``criterion``.
    chosen_lines_ : list of matplotlib Line2D
        Vertical lines at the chosen alphas.
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    References
    ----------
    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.
    """

    def __init__(self, alphas, criterion, alpha, *, criterion_name="criterion"):
        self.alphas = alphas
        self.criterion = criterion
        self.alpha = alpha
        self.criterion_name = criterion_name

    @classmethod
    def from_estimator(cls, estimator, *, criterion_name=None, max_lines=20, ax=None):
        """Plot a fitted estimator's ``criterion_path_`` against ``alphas_path_``.

        Parameters
        ----------
        estimator : fitted estimator
            With ``alphas_path_``, ``criterion_path_`` (not None: alpha
            chosen from candidates) and ``alpha_``.
        criterion_name : str, default=None
            Label of the y axis; None uses the estimator's ``criterion``
            parameter when it is a string, else "criterion".
        max_lines : int, default=20
            With one criterion row per curve, draw at most this many rows.
        ax : matplotlib Axes, default=None

        Returns
        -------
        display : AlphaCriterionDisplay
        """
        alphas, criterion, alpha = _fitted_attributes(
            estimator, ["alphas_path_", "criterion_path_", "alpha_"],
            "AlphaCriterionDisplay"
        )
        if criterion is None:
            raise ValueError(
                "The estimator's alpha was fixed, so there is no criterion path "
                "to plot; fit it with alpha='auto' or candidates."
            )
        alphas = np.asarray(alphas, dtype=float)
        criterion = np.atleast_2d(np.asarray(criterion, dtype=float))
        if alphas.ndim != 1 or criterion.shape[1] != alphas.size:
            raise ValueError(
                f"criterion_path_ must have one value per alpha in alphas_path_ "
                f"({alphas.size}); got shape {criterion.shape}."
            )
        if criterion_name is None:
            name = getattr(estimator, "criterion", None)
            criterion_name = name.upper() if isinstance(name, str) else "criterion"
        alpha = np.broadcast_to(np.asarray(alpha, dtype=float), (len(criterion),))
        display = cls(alphas, criterion[:max_lines], alpha[:max_lines],
                      criterion_name=criterion_name)
        return display.plot(ax=ax)

    def plot(self, ax=None):
        """Draw the criterion curve(s) on a log alpha axis and mark the choice.

        Parameters
        ----------
        ax : matplotlib Axes, default=None

        Returns
        -------
        display : AlphaCriterionDisplay
        """
        ax = self._axes(ax)
        criterion = np.atleast_2d(self.criterion)
        chosen = np.atleast_1d(self.alpha)
        single = len(criterion) == 1
        style = {"marker": "o", "markersize": 3} if single else {"linewidth": 0.8}
        self.lines_ = [ax.plot(self.alphas, row, **style)[0] for row in criterion]
        self.chosen_lines_ = [
            ax.axvline(a, color="k", linestyle=":", linewidth=1,
                       label=f"chosen alpha = {a:.3g}" if single else None)
            for a in chosen
        ]
        ax.set_xscale("log")
        finite = criterion[np.isfinite(criterion)]
        if finite.size and finite.min() > 0 and finite.max() > 100 * finite.min():
            ax.set_yscale("log")  # criteria spanning decades
        ax.set_xlabel("alpha (penalty)")
        ax.set_ylabel(f"{self.criterion_name} (lower is better)")
        if single:
            ax.legend(loc="best")
        return self
