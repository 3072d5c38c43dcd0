"""What every display shares: the lazy matplotlib import, fitted-attribute
checks, new figures with constrained layout, default labels and legends
placed beside the axes (never over the curves)."""

import numpy as np


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


def _check_n_sd(n_sd, *, strict=False):
    """``n_sd``: how many standard deviations (finite, >= 0; > 0 if strict)."""
    ok = isinstance(n_sd, int | float | np.integer | np.floating) and np.isfinite(n_sd)
    if not ok or n_sd < 0 or (strict and n_sd == 0):
        bound = "> 0" if strict else ">= 0"
        raise ValueError(f"n_sd must be a finite number {bound}; got {n_sd!r}.")
    return float(n_sd)


def _label(ax, *, title=None, xlabel=None, ylabel=None):
    """Set the title and axis labels the caller has not set already."""
    if title is not None and not ax.get_title():
        ax.set_title(title)
    if xlabel is not None and not ax.get_xlabel():
        ax.set_xlabel(xlabel)
    if ylabel is not None and not ax.get_ylabel():
        ax.set_ylabel(ylabel)


def _legend_beside(ax, **kwargs):
    """A legend to the right of the axes, outside the plotting area, so that
    it never hides a curve; constrained layout makes room for it."""
    style = {"loc": "upper left", "bbox_to_anchor": (1.02, 1.0),
             "borderaxespad": 0.0, "fontsize": "small", **kwargs}
    return ax.legend(**style)


#: default axis labels of curves: the grid and the curves' values
GRID_LABEL = "t (grid)"
VALUE_LABEL = "curve value"


class _Display:
    """Shared bookkeeping: where the display drew."""

    def _axes(self, ax, **subplots):
        """``ax``, or new axes on a figure with constrained layout."""
        plt = _pyplot(f"{type(self).__name__}.plot")
        if ax is None:
            _, ax = plt.subplots(layout="constrained", **subplots)
        self.ax_ = ax
        self.figure_ = ax.figure
        return ax
