"""AlphaCriterionDisplay: the criterion that chose the penalty alpha."""

import numpy as np

from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._plot_base import _Display, _fitted_attributes, _label, _legend_beside

#: display names of the selection criteria estimators name in their parameters
CRITERION_NAMES = {"gcv": "GCV", "loo": "leave-one-out", "reml": "REML"}


def criterion_name_of(estimator):
    """The name of the criterion that chose ``estimator``'s alpha.

    Cross-validation when the estimator has a ``cv`` splitter set (which
    overrides its ``criterion``), else read from its ``criterion``
    parameter, else from an ``alpha`` given as a criterion name
    (``alpha="gcv"``), else GCV for the estimators whose ``alpha=None``
    means GCV.
    """
    if getattr(estimator, "cv", None) is not None:
        return "cross-validation"
    for param in ("criterion", "alpha"):
        value = getattr(estimator, param, None)
        if isinstance(value, str):
            return CRITERION_NAMES.get(value.lower(), value)
    if getattr(estimator, "alpha", 0) is None:
        return "GCV"  # FunctionOnScalarRidge, FunctionOnFunctionRidge
    return "selection criterion"


@fill_doc
class AlphaCriterionDisplay(_Display):
    """The model-selection criterion over candidate penalties ``alpha``.

    With one criterion curve (or one per target), the curve is drawn on a
    log alpha axis with the chosen alpha marked. With alphas chosen per
    curve (``CurveSmoother(per_curve=True)``), what the transform uses is the
    distribution of those choices: it is drawn as a histogram over the
    candidates.

    Parameters
    ----------
    alphas : ndarray of shape (n_alphas,)
        Candidate penalties.
    criterion : ndarray of shape (n_alphas,) or (n_targets, n_alphas)
        Criterion per candidate (lower is better), one row per target for
        estimators that choose a penalty per target.
    alpha : float or ndarray of shape (n_targets,)
        The chosen penalty (one per row of ``criterion``).
    criterion_name : str, default="selection criterion"
        What the criterion is, e.g. "GCV", "leave-one-out", "REML".
    per_curve_alphas : ndarray of shape (n_curves,), default=None
        Alphas chosen curve by curve; when given, their distribution is
        drawn instead of ``criterion``.

    Attributes
    ----------
    lines_ : list of matplotlib Line2D
        One per row of ``criterion`` (empty for per-curve choices).
    chosen_lines_ : list of matplotlib Line2D
        Vertical lines at the chosen alphas (at the median per-curve choice).
    bars_ : matplotlib BarContainer or None
        The histogram of per-curve choices.
    ax_ : matplotlib Axes
    figure_ : matplotlib Figure

    References
    ----------
    Craven, P. and Wahba, G. (1979). Smoothing noisy data with spline
    functions. *Numerische Mathematik* 31, 377-403.

    %(plot_examples)s
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.plotting import AlphaCriterionDisplay
    >>> from skfunc.preprocessing import CurveSmoother
    >>> kiln = make_kiln_firing(20, random_state=0)
    >>> smoother = CurveSmoother(grid=kiln.grid).fit(kiln.data)
    >>> display = AlphaCriterionDisplay.from_estimator(smoother)
    >>> display.ax_.get_ylabel()
    'GCV score (lower is better)'
    >>> per_curve = CurveSmoother(grid=kiln.grid, per_curve=True).fit(kiln.data)
    >>> display = AlphaCriterionDisplay.from_estimator(per_curve, kiln.data)
    >>> display.ax_.get_ylabel()
    'number of curves'
    """

    def __init__(self, *, alphas, criterion, alpha, criterion_name="selection criterion",
                 per_curve_alphas=None):
        store_init_params(self, locals())

    @classmethod
    def from_estimator(cls, estimator, X=None, *, criterion_name=None, max_lines=20,
                       ax=None):
        """Plot a fitted estimator's ``criterion_path_`` against ``alphas_path_``.

        Parameters
        ----------
        estimator : fitted estimator
            With ``alphas_path_``, ``criterion_path_`` (not None: alpha
            chosen from candidates) and ``alpha_``.
        X : array-like of shape (n_curves, n_points), default=None
            For an estimator that chooses alpha per curve at transform time
            (``per_curve=True``): the curves whose choices to show. Required
            then, ignored otherwise.
        criterion_name : str, default=None
            What the criterion is; None reads it from the estimator (its
            ``criterion`` parameter, or ``alpha="gcv"``).
        max_lines : int, default=20
            With one criterion row per target, draw at most this many rows.
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
            criterion_name = criterion_name_of(estimator)
        per_curve = None
        if getattr(estimator, "per_curve", False):
            if X is None:
                raise ValueError(
                    f"{type(estimator).__name__}(per_curve=True) chooses alpha for "
                    "each curve at transform time: pass the curves X to show the "
                    "distribution of those choices."
                )
            per_curve = np.asarray(estimator.choose_alphas(X), dtype=float)
        alpha = np.broadcast_to(np.asarray(alpha, dtype=float), (len(criterion),))
        display = cls(alphas=alphas, criterion=criterion[:max_lines],
                      alpha=alpha[:max_lines], criterion_name=criterion_name,
                      per_curve_alphas=per_curve)
        return display.plot(ax=ax)

    def plot(self, ax=None):
        """Draw the criterion curve(s) on a log alpha axis and mark the choice,
        or the distribution of per-curve choices.

        Parameters
        ----------
        ax : matplotlib Axes, default=None

        Returns
        -------
        display : AlphaCriterionDisplay
        """
        ax = self._axes(ax)
        name = self.criterion_name
        self.lines_, self.chosen_lines_, self.bars_ = [], [], None
        ax.set_xscale("log")
        if self.per_curve_alphas is not None:
            self._plot_per_curve(ax)
            _legend_beside(ax)
            return self
        criterion = np.atleast_2d(self.criterion)
        chosen = np.atleast_1d(self.alpha)
        single = len(criterion) == 1
        for k, (row, a) in enumerate(zip(criterion, chosen)):
            style = {"marker": "o", "markersize": 3} if single else {"linewidth": 0.8}
            label = name if single else f"target {k}"
            line = ax.plot(self.alphas, row, label=label, **style)[0]
            self.lines_.append(line)
            self.chosen_lines_.append(ax.axvline(
                a, color="k" if single else line.get_color(), linestyle=":",
                linewidth=1, label=f"chosen alpha = {a:.3g}" if single else None,
            ))
        finite = criterion[np.isfinite(criterion)]
        if finite.size and finite.min() > 0 and finite.max() > 100 * finite.min():
            ax.set_yscale("log")  # criteria spanning decades
        errors = {"leave-one-out": "leave-one-out error",
                  "cross-validation": "cross-validated error"}
        ylabel = errors.get(name, f"{name} score")
        _label(ax, title=f"{name} over the candidate penalties",
               xlabel="alpha (roughness penalty)", ylabel=f"{ylabel} (lower is better)")
        _legend_beside(ax)
        return self

    def _plot_per_curve(self, ax):
        chosen = np.asarray(self.per_curve_alphas, dtype=float)
        alphas = np.sort(np.asarray(self.alphas, dtype=float))
        # one bin per candidate, edges half-way between candidates on a log scale
        logs = np.log10(alphas)
        inner = (logs[1:] + logs[:-1]) / 2
        step = np.diff(logs).mean() if logs.size > 1 else 1.0
        edges = 10 ** np.concatenate([[logs[0] - step / 2], inner, [logs[-1] + step / 2]])
        counts, edges, self.bars_ = ax.hist(chosen, bins=edges, color="C0", alpha=0.7,
                                            label=f"{chosen.size} curves")
        median = float(np.median(chosen))
        self.chosen_lines_.append(ax.axvline(
            median, color="k", linestyle=":", linewidth=1,
            label=f"median choice = {median:.3g}",
        ))
        _label(ax, title=f"Alpha chosen curve by curve ({self.criterion_name})",
               xlabel="alpha (roughness penalty)", ylabel="number of curves")
