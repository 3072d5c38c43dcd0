"""ShiftAligner: align curves by shifting them in time."""

from functools import partial
from numbers import Integral, Real

import numpy as np
from sklearn.utils._param_validation import Interval, StrOptions

from ._aligner_base import AlignerBase
from ._blocks import (
    KeptRows,
    cache_rows,
    is_dask_array,
    row_blocks,
    single_thread_blas_from_main,
)
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._grid import quadrature_weights
from ._warping import interp_rows, partial_weights

ENDS = ("constant", "overlap")
#: candidate shifts on each side of zero: spacing max_shift / 32 whatever the
#: grid (so the search does not depend on the sampling), refined between
#: candidates by a parabola
N_HALF = 32


class ShiftCriterion:
    """L2 criterion of curves at every candidate shift against one template.

    ``cost[i, k] = int_a^b (x_i(t + d_k) - T(t))^2 dt`` with ``x_i`` held at
    its end values beyond the domain (``ends="constant"``), or the mean of
    the squared difference over the overlap of the two domains
    (``ends="overlap"``). The change of variables ``s = t + d_k`` moves the
    shift onto the template, so all candidates cost two matrix products with
    X; integrals are exact for the piecewise-linear interpolants. The
    weights over each candidate's overlap are computed once (they do not
    depend on the template), the template's side once per template
    (:meth:`set_template`), so that calling it on small blocks of curves
    costs no more per curve than on all of them.
    """

    def __init__(self, grid, shifts, ends):
        # the template-free part (weights over each candidate's overlap and
        # where a curve is held at its ends): once per fit, not per template
        a, b = grid[0], grid[-1]
        lo = a + np.maximum(shifts, 0.0)
        hi = b + np.minimum(shifts, 0.0)
        self.grid = grid
        self.shifts = shifts
        self.W = partial_weights(grid, lo, hi)  # (K, m), over s in [lo, hi]
        self.overlap = hi - lo if ends == "overlap" else None
        if ends == "overlap":
            return
        # the part of [a, b] where x(t + d) is held at an end value
        right = partial_weights(grid, b - np.maximum(shifts, 0.0), np.full_like(shifts, b))
        left = partial_weights(grid, np.full_like(shifts, a), a + np.maximum(-shifts, 0.0))
        self.end_weights = [(-1, np.maximum(shifts, 0.0), right),
                            (0, np.maximum(-shifts, 0.0), left)]

    def set_template(self, template):
        """Compute the template's side; returns self."""
        grid, shifts = self.grid, self.shifts
        T_shift = np.interp(grid[None, :] - shifts[:, None], grid, template)
        self.WT = self.W * T_shift
        self.template_term = np.sum(self.WT * T_shift, axis=1)
        if self.overlap is None:
            self.ends = [  # (column of X, length held, integrals of T and T^2 there)
                (column, length, Wend @ template, Wend @ (template * template))
                for column, length, Wend in self.end_weights
            ]
        return self

    def __call__(self, X):
        """The criterion of every row of X at every candidate, shape (n, K)."""
        cost = (X * X) @ self.W.T
        cost -= 2.0 * (X @ self.WT.T)
        cost += self.template_term
        if self.overlap is not None:
            return cost / self.overlap
        for column, length, end_template, end_square in self.ends:
            end_values = X[:, column]
            cost += end_values[:, None] ** 2 * length[None, :]
            cost -= 2.0 * end_values[:, None] * end_template[None, :]
            cost += end_square[None, :]
        return cost

    def best_shifts(self, X):
        """The candidate shift with the smallest cost for every row, refined
        by the vertex of the parabola through it and its two neighbours."""
        shifts = self.shifts
        cost = self(X)
        k = np.argmin(cost, axis=1)
        rows = np.arange(X.shape[0])
        best = shifts[k]
        inner = (k > 0) & (k < shifts.size - 1)
        kk = np.clip(k, 1, shifts.size - 2)
        c0, c1, c2 = cost[rows, kk - 1], cost[rows, kk], cost[rows, kk + 1]
        curvature = c0 - 2.0 * c1 + c2
        step = shifts[1] - shifts[0] if shifts.size > 1 else 0.0
        with np.errstate(invalid="ignore", divide="ignore"):
            move = np.where(curvature > 0, 0.5 * step * (c0 - c2) / curvature, 0.0)
        return np.where(inner, best + np.clip(move, -step, step), best)


def _best_shifts(X, criterion):
    """``criterion.best_shifts`` of every row of X, in blocks whose
    temporaries stay in the cache, with one BLAS thread: a block's products
    are small, and a team of threads meeting once per block waits for each
    other (seconds per fit on a busy machine). (From the main thread only:
    in Dask's threads the limit is set around the pass, or not at all.)"""
    X = np.asarray(X, dtype=np.float64)
    out = np.empty(X.shape[0])
    with single_thread_blas_from_main():
        for rows in row_blocks(*X.shape, rows=cache_rows(X.shape[1])):
            out[rows] = criterion.best_shifts(X[rows])
    return out


def _shift_rows(X, shifts, grid):
    """Curves shifted: ``x_i(t + d_i)``, held at their end values."""
    return interp_rows(grid[None, :] + shifts[:, None], grid, X)


@fill_doc
class ShiftAligner(AlignerBase):
    """Align curves by shifting each one in time towards a template.

    Each curve ``x_i`` is replaced by ``x_i(t + d_i)``, with the shift
    ``d_i`` minimising the L2 distance ``int (x_i(t + d_i) - T(t))^2 dt`` to
    the template ``T``, within ``|d_i| <= max_shift``. Without a given
    template, ``fit`` alternates (Procrustes iterations): shifts against the
    current template, then the template re-estimated as the mean of the
    shifted curves, with the shifts centred so that their mean is zero.

    Parameters
    ----------
    max_shift : float, default=None
        Largest shift allowed, in the units of the grid. None means a quarter
        of the domain's length.
    ends : {"constant", "overlap"}, default="constant"
        What the criterion does where a shifted curve leaves the domain:
        ``"constant"`` holds the curve at its end value; ``"overlap"``
        compares the curve and the template only where both are observed
        (mean squared difference over the overlap). Aligned curves are held
        at their end values in both cases.
    template : array-like of shape (n_features,), default=None
        Template on the curves' grid. None means estimate it in ``fit``.
    max_iter : int, default=10
        Largest number of Procrustes iterations.
    tol : float, default=1e-4
        Stop when the template changes by less than ``tol`` times its L2
        norm.
    %(aligner_output)s

    Attributes
    ----------
    template_ : ndarray of shape (n_features,)
        The template on ``grid_``.
    shifts_ : ndarray of shape (n_samples,)
        Shifts of the training curves against ``template_``.
    candidate_shifts_ : ndarray of shape (n_candidates,)
        The 65 evenly spaced shifts in ``[-max_shift, max_shift]`` scored
        before parabolic refinement.
    n_iter_ : int
        Number of Procrustes iterations run.
    %(curve_input_attributes)s

    See Also
    --------
    LandmarkAligner : Smooth warps through given landmark times.
    ElasticAligner : General warps by the Fisher-Rao metric.

    Notes
    -----
    All candidate shifts are scored at once: the substitution ``s = t + d``
    turns the criterion into integrals of ``x_i`` against shifted copies of
    the template, i.e. two matrix products with ``X``. The best candidate is
    refined by the vertex of the parabola through it and its neighbours.
    The warps are ``gamma_i(t) = t - d_i``: curve i is the template read on
    the clock ``gamma_i``.

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 7 (shift registration, Procrustes method). Springer.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.alignment import ShiftAligner
    >>> t = np.linspace(0, 1, 201)
    >>> delays = np.array([-0.1, 0.0, 0.1])
    >>> X = np.exp(-((t - 0.5 - delays[:, None]) / 0.1) ** 2)
    >>> aligner = ShiftAligner().fit(X)
    >>> np.round(aligner.shifts_, 3) + 0.0
    array([-0.1,  0. ,  0.1])
    """

    #: fits on dask arrays: each Procrustes iteration is a pass of per-block
    #: shifts and sums over the rows, persisted once
    _accepts_dask = True

    _parameter_constraints = {
        "max_shift": [Interval(Real, 0, None, closed="neither"), None],
        "ends": [StrOptions(set(ENDS))],
        "template": ["array-like", None],
        "max_iter": [Interval(Integral, 1, None, closed="left")],
        "tol": [Interval(Real, 0, None, closed="left")],
        **AlignerBase._output_constraint,
    }

    def __init__(self, max_shift=None, *, ends="constant", template=None,
                 max_iter=10, tol=1e-4, output="curves", grid=None):
        store_init_params(self, locals())

    def _fit(self, X):
        t = self.grid_
        length = t[-1] - t[0]
        max_shift = 0.25 * length if self.max_shift is None else float(self.max_shift)
        if max_shift >= length:
            raise ValueError(
                f"max_shift={self.max_shift} must be shorter than the domain "
                f"[{t[0]}, {t[-1]}] (length {length}): no overlap would remain."
            )
        self.candidate_shifts_ = np.linspace(-max_shift, max_shift, 2 * N_HALF + 1)
        w = quadrature_weights(t)
        criterion = ShiftCriterion(t, self.candidate_shifts_, self.ends)
        if is_dask_array(X):  # read at every iteration: persisted once
            X = KeptRows(X).arrays[0]
        if self.template is not None:
            self.template_ = self._check_template(self.template)
            self.n_iter_ = 0
        else:
            template = self._mean_shifted(X, None)
            for it in range(1, self.max_iter + 1):  # noqa: B007  (n_iter_)
                shifts = self._shifts(X, template, criterion)
                new = self._mean_shifted(X, shifts - shifts.mean())
                change = np.sqrt(((new - template) ** 2) @ w)
                template = new
                if change <= self.tol * np.sqrt((template ** 2) @ w):
                    break
            self.template_ = template
            self.n_iter_ = it
        self.shifts_ = self._shifts(X, self.template_, criterion)

    def _shifts(self, X, template, criterion=None):
        """Every curve's shift against ``template``."""
        if criterion is None:
            criterion = ShiftCriterion(self.grid_, self.candidate_shifts_, self.ends)
        criterion.set_template(template)
        return self._per_row(partial(_best_shifts, criterion=criterion), X)

    def _mean_shifted(self, X, shifts):
        """The mean of the curves shifted by ``shifts`` (None: not shifted)."""
        if shifts is not None:
            return self._mean_of_rows(partial(_shift_rows, grid=self.grid_), X, shifts)
        return self._mean_of_rows(np.asarray, X) if is_dask_array(X) else X.mean(axis=0)

    def _shifted(self, X, shifts, rows):
        """The curves of these rows, shifted."""
        return _shift_rows(X[rows], shifts[rows], self.grid_)

    def _align(self, X, curves=True, warps=True):
        shifts = self._shifts(X, self.template_)
        return (self._by_blocks(partial(self._shifted, X, shifts), X.shape[0])
                if curves else None,
                self.grid_[None, :] - shifts[:, None] if warps else None)
