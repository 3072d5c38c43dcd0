"""Display objects for curves and fitted functional models.

In scikit-learn's display style: build a display with ``from_estimator`` (or
``from_data``), which computes what to draw and calls :meth:`plot`; or build
one from arrays (keyword arguments only) and call ``plot(ax=...)`` yourself.
Each display keeps the matplotlib artists it drew (``ax_``, ``figure_``,
``line_``, ...) so that they can be restyled. Every display titles and labels
its axes (labels you set before plotting are kept), puts its legend beside
the axes rather than over the curves, and makes its own figures with
constrained layout, so nothing is clipped when saved. "How many standard
deviations" is ``n_sd`` everywhere.

matplotlib is optional: it is imported only when something is drawn, and a
missing matplotlib is an ImportError that says how to install it.

* :class:`CurveBandDisplay` -- curves with their mean and a mean +- 2 SD band.
* :class:`ComponentPerturbationDisplay` -- functional principal components
  shown as the mean plus and minus a multiple of each component.
* :class:`ComponentScoreDisplay` -- the curves' scores on two principal
  components, with chosen curves labelled.
* :class:`CoefficientFunctionDisplay` -- a coefficient function with its
  pointwise confidence band.
* :class:`AlphaCriterionDisplay` -- the selection criterion (GCV,
  leave-one-out, ...) over the candidate penalties, with the chosen one, or
  the distribution of alphas chosen curve by curve.
* :class:`FunctionalBoxplotDisplay` -- median curve, central region, range
  and flagged curves.
* :class:`OutlyingnessDisplay` -- magnitude against shape outlyingness.
"""

from ._plot_alpha import AlphaCriterionDisplay
from ._plot_base import _Display, _fitted_attributes, _pyplot  # noqa: F401
from ._plot_boxplot import FunctionalBoxplotDisplay
from ._plot_coefficient import CoefficientFunctionDisplay
from ._plot_components import ComponentPerturbationDisplay
from ._plot_curve_band import CurveBandDisplay
from ._plot_outlyingness import OutlyingnessDisplay
from ._plot_scores import ComponentScoreDisplay

__all__ = [
    "CurveBandDisplay",
    "ComponentPerturbationDisplay",
    "ComponentScoreDisplay",
    "CoefficientFunctionDisplay",
    "AlphaCriterionDisplay",
    "FunctionalBoxplotDisplay",
    "OutlyingnessDisplay",
]
