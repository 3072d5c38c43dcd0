"""ComponentScoreDisplay: the curves' scores on two principal components."""

import numpy as np

from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._plot_base import _Display, _fitted_attributes, _label, _legend_beside


def _component_pair(components, available):
    pair = tuple(components) if np.ndim(components) == 1 else ()
    ok = len(pair) == 2 and all(
        isinstance(c, int | np.integer) and 0 <= c < available for c in pair
    ) and pair[0] != pair[1]
    if not ok:
        raise ValueError(
            f"components must be two different ints from 0 to {available - 1} (the "
            f"fitted components, 0 for the first); got {components!r}."
        )
    return tuple(int(c) for c in pair)


def _row_selection(highlight, n_rows):
    """Indices of the rows to label: ints or a boolean mask."""
    if highlight is None:
        return np.array([], dtype=int)
    sel = np.asarray(highlight)
    if sel.dtype == bool:
        if sel.shape != (n_rows,):
            raise ValueError(
                f"highlight as a boolean mask needs one value per curve ({n_rows}); "
                f"got shape {sel.shape}."
            )
        return np.flatnonzero(sel)
    sel = np.atleast_1d(sel)
    if sel.ndim != 1 or not np.issubdtype(sel.dtype, np.integer) or (
        sel.size and (sel.min() < -n_rows or sel.max() >= n_rows)
    ):
        raise ValueError(
            f"highlight must be row indices from 0 to {n_rows - 1} or a boolean "
            f"mask of length {n_rows}; got {highlight!r}."
        )
    return sel % n_rows


@fill_doc
class ComponentScoreDisplay(_Display):
    """The curves' scores on two functional principal components.

    Each point is one curve at its scores ``<x - mean, xi_j>`` and ``<x -
    mean, xi_k>``; chosen points (unusual runs, say) are labelled. An optional
    value per curve colours the points.

    Parameters
    ----------
    scores : ndarray of shape (n_curves, 2)
        Scores on the two components.
    components : tuple of two ints, default=(0, 1)
        Which components the columns are (0 for the first), for the labels.
    explained_variance_ratio : ndarray of shape (2,), default=None
        Shown in the axis labels when given.
    labels : array-like of shape (n_curves,), default=None
        Text of each curve's label; None means its row number.
    highlight : array-like of int or bool, default=None
        Curves to label and ring (indices or a boolean mask).
    color : array-like of shape (n_curves,), default=None
        A value per curve that colours the points (with a colour bar).
    color_label : str, default=None
        Label of the colour bar.

    Attributes
    ----------
    points_ : matplotlib PathCollection
    highlighted_ : matplotlib PathCollection or None
    annotations_ : list of matplotlib Annotation
    colorbar_ : matplotlib Colorbar or None
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.decomposition.FunctionalPCA
    ComponentPerturbationDisplay : What moving along a component looks like.

    %(kiln_fpca_example)s
    >>> from skfunc.plotting import ComponentScoreDisplay
    >>> display = ComponentScoreDisplay.from_estimator(
    ...     fpca, kiln.data, highlight=kiln.faulty, color=kiln.strength,
    ...     color_label="strength (MPa)")
    >>> bool(len(display.annotations_) == kiln.faulty.sum())
    True
    """

    def __init__(self, *, scores, components=(0, 1), explained_variance_ratio=None,
                 labels=None, highlight=None, color=None, color_label=None):
        store_init_params(self, locals())

    @classmethod
    def from_estimator(cls, estimator, X, *, components=(0, 1), labels=None,
                       highlight=None, color=None, color_label=None, ax=None):
        """Plot the scores of the curves ``X`` on two fitted components.

        Parameters
        ----------
        estimator : fitted estimator
            With ``components_`` and a ``transform`` returning scores, as
            FunctionalPCA has (``explained_variance_ratio_`` is used when
            present).
        X : array-like of shape (n_curves, n_points)
            Curves on the estimator's grid.
        components : tuple of two ints, default=(0, 1)
            Which components (0 for the first).
        labels : array-like of shape (n_curves,), default=None
            Text of each curve's label; None means the DataFrame index of
            ``X`` if it has one, else the row number.
        highlight : array-like of int or bool, default=None
            Curves to label (indices or a boolean mask).
        color : array-like of shape (n_curves,), default=None
            A value per curve that colours the points.
        color_label : str, default=None
            Label of the colour bar.
        ax : matplotlib Axes, default=None

        Returns
        -------
        display : ComponentScoreDisplay
        """
        (comps,) = _fitted_attributes(estimator, ["components_"], "ComponentScoreDisplay")
        pair = _component_pair(components, len(comps))
        scores = np.asarray(estimator.transform(X))[:, list(pair)]
        n = len(scores)
        if labels is None:
            index = getattr(X, "index", None)
            labels = np.asarray(index) if index is not None else np.arange(n)
        labels = np.asarray(labels)
        if labels.shape != (n,):
            raise ValueError(
                f"labels must have one entry per curve ({n}); got shape {labels.shape}."
            )
        if color is not None:
            color = np.asarray(color, dtype=float)
            if color.shape != (n,):
                raise ValueError(
                    f"color must have one value per curve ({n}); got shape "
                    f"{color.shape}."
                )
        ratio = getattr(estimator, "explained_variance_ratio_", None)
        display = cls(
            scores=scores, components=pair,
            explained_variance_ratio=None if ratio is None
            else np.asarray(ratio)[list(pair)],
            labels=labels, highlight=_row_selection(highlight, n), color=color,
            color_label=color_label,
        )
        return display.plot(ax=ax)

    def plot(self, ax=None, *, scatter_kwargs=None):
        """Draw the points, ring and label the highlighted ones.

        Parameters
        ----------
        ax : matplotlib Axes, default=None
        scatter_kwargs : dict, default=None
            Styles passed to matplotlib's ``scatter``.

        Returns
        -------
        display : ComponentScoreDisplay
        """
        ax = self._axes(ax)
        scores = np.asarray(self.scores)
        n = len(scores)
        labels = np.arange(n) if self.labels is None else np.asarray(self.labels)
        chosen = _row_selection(self.highlight, n)
        style = {"s": 18, "alpha": 0.8, "label": f"{n} curves", **(scatter_kwargs or {})}
        if self.color is not None:
            style.setdefault("c", self.color)
            style.setdefault("cmap", "viridis")
        else:
            style.setdefault("color", "C0")
        self.points_ = ax.scatter(scores[:, 0], scores[:, 1], **style)
        self.colorbar_ = None
        if self.color is not None:
            self.colorbar_ = self.figure_.colorbar(self.points_, ax=ax)
            if self.color_label:
                self.colorbar_.set_label(self.color_label)
        self.highlighted_ = None
        self.annotations_ = []
        if chosen.size:
            self.highlighted_ = ax.scatter(
                scores[chosen, 0], scores[chosen, 1], s=70, facecolors="none",
                edgecolors="C3", linewidths=1.2, label=f"labelled ({chosen.size})",
            )
            for i in chosen:
                self.annotations_.append(ax.annotate(
                    str(labels[i]), (scores[i, 0], scores[i, 1]),
                    xytext=(4, 4), textcoords="offset points", fontsize="small",
                    color="C3",
                ))
        names = []
        for j, c in enumerate(self.components):
            name = f"component {c + 1} score"
            if self.explained_variance_ratio is not None:
                name += f" ({100 * self.explained_variance_ratio[j]:.1f}% of variance)"
            names.append(name)
        first, second = (c + 1 for c in self.components)
        _label(ax, title=f"Scores on principal components {first} and {second}",
               xlabel=names[0], ylabel=names[1])
        ax.axhline(0.0, color="0.8", linewidth=0.8, zorder=0)
        ax.axvline(0.0, color="0.8", linewidth=0.8, zorder=0)
        _legend_beside(ax)
        return self
