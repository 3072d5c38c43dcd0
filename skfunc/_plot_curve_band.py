"""CurveBandDisplay: curves with their pointwise mean and an SD band."""

import numpy as np
from sklearn.utils.validation import check_array

from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._grid import resolve_grid
from ._plot_base import GRID_LABEL, VALUE_LABEL, _check_n_sd, _Display, _label, _legend_beside


@fill_doc
class CurveBandDisplay(_Display):
    """Curves with their pointwise mean and a mean +- ``n_sd`` SD band.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
        Sampling points.
    curves : ndarray of shape (n_drawn, n_points)
        The curves to draw (NaN leaves a gap).
    mean, sd : ndarray of shape (n_points,)
        Pointwise mean and standard deviation of the curves.
    n_sd : float, default=2.0
        Half-width of the band in standard deviations.
    n_curves : int, default=None
        How many curves entered ``mean`` and ``sd``; when more than
        ``n_drawn``, the title and legend say how many were left out. None
        means ``n_drawn``.

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

    %(plot_examples)s
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.plotting import CurveBandDisplay
    >>> kiln = make_kiln_firing(30, random_state=0)
    >>> display = CurveBandDisplay.from_data(kiln.data, grid=kiln.grid,
    ...                                      max_curves=10)
    >>> len(display.curve_lines_), display.ax_.get_title()
    (10, '30 curves: mean ± 2 SD (10 drawn)')
    """

    def __init__(self, *, grid, curves, mean, sd, n_sd=2.0, n_curves=None):
        store_init_params(self, locals())

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
            the mean and SD, and the title says how many were drawn.
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
        n_sd = _check_n_sd(n_sd)
        observed = np.sum(~np.isnan(values), axis=0)
        if np.any(observed < 2):
            j = int(np.flatnonzero(observed < 2)[0])
            raise ValueError(
                f"Grid point {grid[j]!r} (column {j}) has fewer than 2 observed "
                "values; the mean and SD there are undefined."
            )
        mean = np.nanmean(values, axis=0)
        sd = np.nanstd(values, axis=0, ddof=1)
        display = cls(grid=grid, curves=values[:max_curves], mean=mean, sd=sd,
                      n_sd=n_sd, n_curves=values.shape[0])
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
        n_drawn = len(self.curves)
        n_curves = n_drawn if self.n_curves is None else int(self.n_curves)
        drawn = f"{n_drawn} of {n_curves} curves drawn" if n_drawn < n_curves \
            else f"{n_curves} curves"
        curve_style = {"color": "0.6", "linewidth": 0.6, "alpha": 0.6,
                       **(curve_kwargs or {})}
        mean_style = {"color": "C0", "linewidth": 2, "label": "mean",
                      **(mean_kwargs or {})}
        band_style = {"color": "C0", "alpha": 0.2,
                      "label": f"mean \u00b1 {self.n_sd:g} SD", **(band_kwargs or {})}
        self.curve_lines_ = [ax.plot(self.grid, c, **curve_style)[0]
                             for c in self.curves]
        if self.curve_lines_ and "label" not in (curve_kwargs or {}):
            self.curve_lines_[0].set_label(drawn)
        half = self.n_sd * self.sd
        self.band_ = ax.fill_between(self.grid, self.mean - half, self.mean + half,
                                     **band_style)
        self.mean_line_ = ax.plot(self.grid, self.mean, **mean_style)[0]
        title = f"{n_curves} curves: mean \u00b1 {self.n_sd:g} SD"
        if n_drawn < n_curves:
            title += f" ({n_drawn} drawn)"
        _label(ax, title=title, xlabel=GRID_LABEL, ylabel=VALUE_LABEL)
        _legend_beside(ax)
        return self
