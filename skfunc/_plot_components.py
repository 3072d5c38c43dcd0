"""ComponentPerturbationDisplay: principal components as perturbations of
the mean curve."""

import numpy as np

from ._channels import channel_columns
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._plot_base import (
    GRID_LABEL,
    VALUE_LABEL,
    _check_n_sd,
    _Display,
    _fitted_attributes,
    _label,
    _legend_beside,
    _pyplot,
)


@fill_doc
class ComponentPerturbationDisplay(_Display):
    """Functional principal components as perturbations of the mean curve.

    For component k the panel shows the mean ``mu``, and ``mu +- n_sd *
    sqrt(lambda_k) * xi_k``: the curves one would see ``n_sd`` standard
    deviations along that component. The perturbations are linear: far along
    a component they can leave the range any real curve takes.

    Parameters
    ----------
    grid : ndarray of shape (n_points,)
    mean : ndarray of shape (n_points,)
    components : ndarray of shape (n_components, n_points)
        Components on ``grid``, L2-normalised.
    explained_variance : ndarray of shape (n_components,)
    explained_variance_ratio : ndarray of shape (n_components,), default=None
        Shown in the panel titles when given.
    n_sd : float, default=2.0
        How many standard deviations along each component.

    Attributes
    ----------
    axes_ : ndarray of matplotlib Axes, one per component
    mean_lines_, plus_lines_, minus_lines_ : list of matplotlib Line2D
    figure_ : matplotlib Figure

    See Also
    --------
    skfunc.decomposition.FunctionalPCA
    ComponentScoreDisplay : The curves' scores on two components.

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., section 8.3. Springer.

    %(kiln_fpca_example)s
    >>> from skfunc.plotting import ComponentPerturbationDisplay
    >>> display = ComponentPerturbationDisplay.from_estimator(fpca)
    >>> len(display.axes_)
    3
    """

    def __init__(self, *, grid, mean, components, explained_variance,
                 explained_variance_ratio=None, n_sd=2.0):
        store_init_params(self, locals())

    @classmethod
    def from_estimator(cls, estimator, *, n_components=None, n_sd=2.0, channel=None,
                       ax=None):
        """Plot the leading components of a fitted FunctionalPCA.

        Parameters
        ----------
        estimator : fitted estimator
            With ``grid_``, ``mean_``, ``components_`` and
            ``explained_variance_`` (and optionally
            ``explained_variance_ratio_``), as FunctionalPCA has.
        n_components : int, default=None
            How many leading components to show; None means up to 3.
        n_sd : float, default=2.0
            How many standard deviations along each component.
        channel : str, default=None
            For components of several channels (:doc:`/channels`), the
            channel whose part of the mean and components to draw; required
            there.
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
        columns = channel_columns(estimator, channel, "ComponentPerturbationDisplay")
        display = cls(
            grid=np.asarray(grid)[columns], mean=np.asarray(mean)[columns],
            components=np.asarray(comps)[:k, columns], explained_variance=np.asarray(var)[:k],
            explained_variance_ratio=None if ratio is None else np.asarray(ratio)[:k],
            n_sd=_check_n_sd(n_sd, strict=True),
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
            _, ax = plt.subplots(1, k, figsize=(3.6 * k + 2.2, 3.4), squeeze=False,
                                 sharey=True, layout="constrained")
        axes = np.ravel(np.asarray(ax, dtype=object))
        if axes.size != k:
            raise ValueError(
                f"ax must hold one Axes per component ({k}); got {axes.size}."
            )
        self.axes_, self.figure_ = axes, axes[0].figure
        self.mean_lines_, self.plus_lines_, self.minus_lines_ = [], [], []
        for j, panel in enumerate(axes):
            sd = np.sqrt(self.explained_variance[j])
            shift = self.n_sd * sd * self.components[j]
            self.mean_lines_.append(panel.plot(self.grid, self.mean, color="k",
                                               linewidth=1.5, label="mean")[0])
            self.plus_lines_.append(panel.plot(
                self.grid, self.mean + shift, color="C3",
                label=f"mean + {self.n_sd:g} SD \u00d7 component")[0])
            self.minus_lines_.append(panel.plot(
                self.grid, self.mean - shift, color="C0", linestyle="--",
                label=f"mean \u2212 {self.n_sd:g} SD \u00d7 component")[0])
            title = f"Component {j + 1}"
            if self.explained_variance_ratio is not None:
                title += f" ({100 * self.explained_variance_ratio[j]:.1f}% of variance)"
            _label(panel, title=title, xlabel=GRID_LABEL,
                   ylabel=VALUE_LABEL if j == 0 else None)
        _legend_beside(axes[-1])
        return self
