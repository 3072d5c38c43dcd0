"""CoefficientFunctionDisplay: a coefficient function with its band."""

import numpy as np
from sklearn.utils.validation import check_array

from ._channels import channel_columns
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._plot_base import GRID_LABEL, _Display, _fitted_attributes, _label, _legend_beside


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


@fill_doc
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

    %(plot_examples)s
    >>> from skfunc.datasets import make_smooth_regression
    >>> from skfunc.linear_model import FunctionalRidgeCV
    >>> from skfunc.plotting import CoefficientFunctionDisplay
    >>> X, y, beta = make_smooth_regression(80, grid=51, random_state=0)
    >>> model = FunctionalRidgeCV().fit(X, y)
    >>> display = CoefficientFunctionDisplay.from_estimator(model, reference=beta)
    >>> display.band_.get_label()
    '95% confidence band'
    """

    def __init__(self, *, grid, coef, lower, upper, level, reference=None):
        store_init_params(self, locals())

    @classmethod
    def from_estimator(cls, estimator, *, level=0.95, target=0, reference=None,
                       channel=None, ax=None):
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
            A known coefficient function on ``grid_`` (on the channel's grid
            with ``channel``) to draw for comparison.
        channel : str, default=None
            For an estimator fitted on several channels (:doc:`/channels`),
            the channel whose coefficient function to draw; required there.
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
        columns = channel_columns(estimator, channel, "CoefficientFunctionDisplay")
        grid = grid[columns]
        coef, lower, upper = (np.atleast_2d(a)[:, columns] for a in (coef, lower, upper))
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
        display = cls(grid=grid, coef=coef[target], lower=lower[target],
                      upper=upper[target], level=level, reference=reference)
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
        _label(ax, title=f"Coefficient function, {100 * self.level:g}% pointwise band",
               xlabel=GRID_LABEL, ylabel="\u03b2(t)")
        _legend_beside(ax)
        return self
