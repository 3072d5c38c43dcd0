"""OutlyingnessDisplay: magnitude against shape outlyingness, one point a curve."""

import numpy as np

from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._plot_boxplot import (
    KIND_STYLE,
    FlaggedCurvesDisplayMixin,
    curve_labels,
    display_axes,
    from_fitted_detector,
)


@fill_doc
class OutlyingnessDisplay(FlaggedCurvesDisplayMixin):
    """Magnitude against shape outlyingness, one point per curve.

    The horizontal axis is the mean directional outlyingness of a curve
    (signed: below or above the pointwise median, in robust SD units), the
    vertical axis its variation (how differently the curve moves), as in
    Dai & Genton (2018). Typical curves gather near the bottom centre;
    flagged curves are drawn by kind and labelled.

    Parameters
    ----------
    magnitude : ndarray of shape (n_curves,)
        Mean directional outlyingness.
    shape : ndarray of shape (n_curves,)
        Variation of directional outlyingness.
    %(flagged_curves)s

    Attributes
    ----------
    inliers_ : matplotlib PathCollection
    outlier_points_ : dict of {kind: matplotlib PathCollection}
    outlier_texts_ : list of matplotlib Text
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.outliers.magnitude_shape_outlyingness
    skfunc.outliers.CurveOutlierDetector
    FunctionalBoxplotDisplay

    References
    ----------
    Dai, W. and Genton, M. G. (2018). Multivariate functional data
    visualization and outlier detection. *Journal of Computational and
    Graphical Statistics* 27(4), 923-934.

    %(plot_examples)s
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.plotting import OutlyingnessDisplay
    >>> kiln = make_kiln_firing(60, dropout_fraction=0, random_state=0)
    >>> display = OutlyingnessDisplay.from_curves(kiln.data, grid=kiln.grid,
    ...                                           random_state=0)
    >>> display.ax_.get_xlabel()
    'magnitude: mean directional outlyingness'
    """

    def __init__(self, *, magnitude, shape, outliers, labels=None, kinds=None):
        store_init_params(self, locals())

    @classmethod
    @fill_doc
    def from_curves(cls, X, *, grid=None, random_state=None, labels=None,
                    ax=None, **plot_kwargs):
        """Outlyingness of X relative to X, flagged by the magnitude-shape rule.

        Parameters
        ----------
        %(display_curves_grid)s
        random_state : int, RandomState instance or None, default=None
            Seed of the minimum covariance determinant fit.
        %(display_labels_ax)s

        Returns
        -------
        display : OutlyingnessDisplay
        """
        return from_fitted_detector(cls, X, labels, ax, plot_kwargs,
                                    method="magnitude_shape",
                                    random_state=random_state, grid=grid)

    @classmethod
    def _display_data(cls, estimator, X):
        """Magnitude and shape outlyingness of X from the estimator."""
        if not hasattr(estimator, "outlyingness"):
            raise ValueError(
                "OutlyingnessDisplay.from_estimator needs a fitted detector with "
                f"an outlyingness method (CurveOutlierDetector); got "
                f"{type(estimator).__name__}."
            )
        magnitude, shape = estimator.outlyingness(X)
        return dict(magnitude=magnitude, shape=shape)

    def plot(self, ax=None, *, title=None, max_labels=12):
        """Draw the display.

        Parameters
        ----------
        ax : matplotlib Axes, default=None
            Axes to draw on; None makes a new figure (constrained layout).
        title : str, default=None
            None means "Magnitude and shape outlyingness: k of n flagged".
        max_labels : int, default=12
            Label at most this many flagged curves (the farthest first).

        Returns
        -------
        display : OutlyingnessDisplay
        """
        ax = display_axes(self, ax, figsize=(7.5, 4.5))
        mo = np.asarray(self.magnitude, dtype=float)
        vo = np.asarray(self.shape, dtype=float)
        flagged = np.asarray(self.outliers, dtype=bool)
        labels = curve_labels(self.labels, len(mo))
        kinds = (np.where(flagged, "unspecified", "inlier") if self.kinds is None
                 else np.asarray(self.kinds))
        self.inliers_ = ax.scatter(mo[~flagged], vo[~flagged], s=18, color="0.55",
                                   alpha=0.8, linewidths=0, label="not flagged")
        self.outlier_points_ = {}
        for kind, style in KIND_STYLE.items():
            chosen = flagged & (kinds == kind)
            if np.any(chosen):
                self.outlier_points_[kind] = ax.scatter(
                    mo[chosen], vo[chosen], s=36, color=style["color"],
                    marker=style["marker"], label=f"flagged ({kind})")
        # farthest from the typical cloud first (robust standardisation)
        spread = [np.median(np.abs(v - np.median(v))) or 1.0 for v in (mo, vo)]
        far = np.hypot((mo - np.median(mo)) / spread[0],
                       (vo - np.median(vo)) / spread[1])
        order = [i for i in np.argsort(-far) if flagged[i]][:max_labels]
        self.outlier_texts_ = [
            ax.annotate(labels[i], (mo[i], vo[i]), xytext=(4, 3),
                        textcoords="offset points", fontsize="small",
                        color=KIND_STYLE.get(str(kinds[i]),
                                             KIND_STYLE["unspecified"])["color"])
            for i in order
        ]
        positive = vo[vo > 0]
        if positive.size and positive.max() > 100 * positive.min():
            ax.set_yscale("log")
        ax.axvline(0.0, color="0.7", linewidth=0.8, zorder=0)
        ax.set_xlabel("magnitude: mean directional outlyingness")
        ax.set_ylabel("shape: variation of directional outlyingness")
        if title is None:
            title = (f"Magnitude and shape outlyingness: {int(flagged.sum())} of "
                     f"{len(mo)} flagged")
        ax.set_title(title)
        ax.legend(loc="best", fontsize="small", framealpha=0.9)
        return self
