"""FunctionalBoxplotDisplay: median curve, central region, range and outliers."""

import numpy as np

from ._curve_outliers import CurveOutlierDetector
from ._depth import central_region, check_curves, mbd_values, time_weights
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._grid import resolve_grid

#: the package's colours for flagged curves by kind (matplotlib's cycle)
KIND_STYLE = {
    "magnitude": {"color": "C3", "marker": "v"},
    "shape": {"color": "C2", "marker": "s"},
    "magnitude and shape": {"color": "C4", "marker": "D"},
    "unspecified": {"color": "C1", "marker": "o"},
}


def display_axes(display, ax, figsize=(7.5, 4.2)):
    """Axes to draw on (a new constrained-layout figure if None); records
    ``ax_`` and ``figure_`` on the display."""
    if ax is None:
        from .plotting import _pyplot

        plt = _pyplot(f"{type(display).__name__}.plot")
        _, ax = plt.subplots(figsize=figsize, layout="constrained")
    display.ax_ = ax
    display.figure_ = ax.figure
    return ax


def curve_labels(labels, n):
    """Labels of n curves: the row numbers if None."""
    if labels is None:
        return [str(i) for i in range(n)]
    labels = [str(label) for label in labels]
    if len(labels) != n:
        raise ValueError(
            f"labels must have one entry per curve ({n}); got {len(labels)}."
        )
    return labels


def from_fitted_detector(display_cls, X, labels, ax, plot_kwargs, **params):
    """``display_cls.from_estimator`` of a CurveOutlierDetector(**params)
    fitted on the curves X (what each display's ``from_curves`` does)."""
    detector = CurveOutlierDetector(**params).fit(X)
    return display_cls.from_estimator(detector, X, labels=labels, ax=ax, **plot_kwargs)


def flags_and_kinds(estimator, X):
    """The estimator's outlier flags and kinds for X (kinds "unspecified"
    when the estimator cannot tell)."""
    flagged = np.asarray(estimator.predict(X)) == -1
    if hasattr(estimator, "outlier_kind"):
        kinds = np.asarray(estimator.outlier_kind(X))
    else:
        kinds = np.where(flagged, "unspecified", "inlier")
    return flagged, kinds


class FlaggedCurvesDisplayMixin:
    """``from_estimator`` of the displays of flagged curves: what the class
    draws of X (``_display_data(estimator, X)``, a dict of constructor
    arguments), the detector's flags and kinds, then :meth:`plot`."""

    @classmethod
    @fill_doc
    def from_estimator(cls, estimator, X, *, labels=None, ax=None, **plot_kwargs):
        """Draw X with a fitted outlier detector's flags.

        Parameters
        ----------
        estimator : fitted outlier detector
            With ``predict`` (1 / -1) on curves, and optionally
            ``outlier_kind`` (else flagged curves are of kind "unspecified"),
            as :class:`~skfunc.outliers.CurveOutlierDetector` has.
            :class:`FunctionalBoxplotDisplay` reads the grid from ``grid_``
            when there is one; :class:`OutlyingnessDisplay` draws the
            estimator's ``outlyingness`` of X.
        X : array-like of shape (n_curves, n_points)
            Curves on the estimator's grid.
        %(display_labels_ax)s

        Returns
        -------
        display : FunctionalBoxplotDisplay or OutlyingnessDisplay
            The display of the class it is called on.
        """
        data = cls._display_data(estimator, X)
        flagged, kinds = flags_and_kinds(estimator, X)
        display = cls(**data, outliers=flagged, labels=curve_labels(labels, flagged.size),
                      kinds=kinds)
        return display.plot(ax=ax, **plot_kwargs)


@fill_doc
class FunctionalBoxplotDisplay(FlaggedCurvesDisplayMixin):
    """Functional boxplot: median curve, central 50% region, range, outliers.

    The curves are ordered by modified band depth; the median is the
    deepest curve and the central region the envelope of the deepest half
    (Sun & Genton, 2011). The outer band is the range of the curves not
    flagged as outliers (for the boxplot rule: the whiskers), and flagged
    curves are drawn one by one with their labels.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
        Sampling points.
    curves : ndarray of shape (n_curves, n_points)
        The curves.
    median : ndarray of shape (n_points,)
        The deepest curve.
    central_lower, central_upper : ndarray of shape (n_points,)
        Envelope of the deepest half of the curves.
    %(flagged_curves)s

    Attributes
    ----------
    region_ : matplotlib PolyCollection
        The central region.
    range_ : matplotlib PolyCollection
        The range of the curves not flagged.
    median_line_ : matplotlib Line2D
    outlier_lines_ : list of matplotlib Line2D
    outlier_texts_ : list of matplotlib Text
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.outliers.CurveOutlierDetector
    OutlyingnessDisplay : Magnitude against shape outlyingness.

    References
    ----------
    Sun, Y. and Genton, M. G. (2011). Functional boxplots. *Journal of
    Computational and Graphical Statistics* 20(2), 316-334.

    %(plot_examples)s
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.plotting import FunctionalBoxplotDisplay
    >>> kiln = make_kiln_firing(60, dropout_fraction=0, random_state=0)
    >>> display = FunctionalBoxplotDisplay.from_curves(kiln.data,
    ...                                                grid=kiln.grid)
    >>> display.ax_.get_title()
    'Functional boxplot: 5 of 60 curves flagged'
    """

    def __init__(self, *, grid, curves, median, central_lower, central_upper,
                 outliers, labels=None, kinds=None):
        store_init_params(self, locals())

    @classmethod
    @fill_doc
    def from_curves(cls, X, *, grid=None, factor=1.5, labels=None, ax=None,
                    **plot_kwargs):
        """Draw the functional boxplot of X, flagging by the boxplot rule.

        Parameters
        ----------
        %(display_curves_grid)s
        factor : float, default=1.5
            Fences at ``factor`` times the central region's width beyond it.
        %(display_labels_ax)s

        Returns
        -------
        display : FunctionalBoxplotDisplay
        """
        return from_fitted_detector(cls, X, labels, ax, plot_kwargs, method="boxplot",
                                    factor=factor, grid=grid)

    @classmethod
    def _display_data(cls, estimator, X):
        """Curves, median and central region of X, on the estimator's grid."""
        values = check_curves(X, min_curves=2, what="a functional boxplot")
        grid = getattr(estimator, "grid_", None)
        if grid is None:
            grid = resolve_grid(None, X, values.shape[1])
        grid = np.asarray(grid)
        depth = mbd_values(values, values, time_weights(grid, values.shape[1]))
        deepest, lower, upper = central_region(values, depth)
        return dict(grid=grid, curves=values, median=values[deepest],
                    central_lower=lower, central_upper=upper)

    def plot(self, ax=None, *, xlabel="t", ylabel="value", title=None,
             max_labels=8):
        """Draw the display.

        Parameters
        ----------
        ax : matplotlib Axes, default=None
            Axes to draw on; None makes a new figure (constrained layout).
        xlabel, ylabel : str, default="t", "value"
            Axis labels.
        title : str, default=None
            None means "Functional boxplot: k of n curves flagged".
        max_labels : int, default=8
            Label at most this many flagged curves (the most extreme first).

        Returns
        -------
        display : FunctionalBoxplotDisplay
        """
        ax = display_axes(self, ax)
        grid, curves = np.asarray(self.grid), np.asarray(self.curves)
        flagged = np.asarray(self.outliers, dtype=bool)
        labels = curve_labels(self.labels, len(curves))
        kept = curves[~flagged] if np.any(~flagged) else curves
        self.range_ = ax.fill_between(
            grid, kept.min(axis=0), kept.max(axis=0), color="0.85",
            linewidth=0, label="range of curves not flagged")
        self.region_ = ax.fill_between(
            grid, self.central_lower, self.central_upper, color="C0", alpha=0.35,
            linewidth=0, label="central 50% region (deepest half)")
        self.median_line_ = ax.plot(grid, self.median, color="C0", linewidth=2.2,
                                    label="median (deepest curve)")[0]
        self.outlier_lines_, self.outlier_texts_ = [], []
        centre = 0.5 * (np.asarray(self.central_lower) + np.asarray(self.central_upper))
        excursion = np.abs(curves - centre).max(axis=1)
        order = [i for i in np.argsort(-excursion) if flagged[i]]
        shown_kinds = set()
        for rank, i in enumerate(order):
            kind = "unspecified" if self.kinds is None else str(self.kinds[i])
            style = KIND_STYLE.get(kind, KIND_STYLE["unspecified"])
            legend = (f"flagged ({kind})" if self.kinds is not None else "flagged")
            line = ax.plot(grid, curves[i], color=style["color"], linewidth=1.1,
                           label=None if kind in shown_kinds else legend)[0]
            shown_kinds.add(kind)
            self.outlier_lines_.append(line)
            if rank < max_labels:
                j = int(np.argmax(np.abs(curves[i] - centre)))
                self.outlier_texts_.append(ax.annotate(
                    labels[i], (grid[j], curves[i, j]), xytext=(3, 3),
                    textcoords="offset points", color=style["color"],
                    fontsize="small"))
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        if title is None:
            title = (f"Functional boxplot: {int(flagged.sum())} of {len(curves)} "
                     "curves flagged")
        ax.set_title(title)
        ax.legend(loc="best", fontsize="small", framealpha=0.9)
        return self
