"""ElasticAligner: alignment by the Fisher-Rao metric (square-root slope
functions, dynamic programming, Karcher mean)."""

from functools import partial
from numbers import Integral, Real

import numpy as np
from sklearn.utils._param_validation import Interval
from sklearn.utils.validation import check_is_fitted

from ._aligner_base import AlignerBase
from ._blocks import KeptRows, delayed_row_blocks, is_dask_array, kept_blocks, reduce_delayed
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._grid import check_grid, quadrature_weights
from ._warping import (
    compose,
    dynamic_program_warps,
    interp_rows,
    invert_warps,
    l2_norms,
    phase_distances,
    srsf,
    warp_srsf,
)


def _block_warps(X, grid, mu, penalty):
    """Warps aligning a block of curves to the square-root slope function
    ``mu``."""
    return dynamic_program_warps(grid, mu, srsf(grid, np.asarray(X, dtype=np.float64)),
                                 penalty)


def _row_sums(rows):
    """The sum of the rows and their number."""
    return {"sum": rows.sum(axis=0), "n": rows.shape[0]}


def _warped_srsf_sums(X, phi, grid, mean_inv):
    """Sums of a block's square-root slope functions warped by its warps
    ``phi`` composed with the inverse of the mean warp ``mean_inv``."""
    Q = srsf(grid, np.asarray(X, dtype=np.float64))
    return _row_sums(warp_srsf(grid, Q, interp_rows(mean_inv, grid, phi)))


@fill_doc
class ElasticAligner(AlignerBase):
    """Align curves by general warps under the Fisher-Rao metric.

    Each curve ``f`` is represented by its square-root slope function
    ``q = sign(f') sqrt(|f'|)``. Warping ``f`` by ``gamma`` acts on ``q`` as
    ``(q o gamma) sqrt(gamma')``, an isometry of L2, so the distance between
    two curves' ``q`` minimised over warps (the amplitude distance) is a
    proper distance between shapes. Each curve is aligned to the template by
    dynamic programming over piecewise-linear warps; without a given template
    ``fit`` estimates the Karcher mean of the curves' ``q`` (alternating
    alignment and averaging), centred so that the mean warp is the identity.

    Parameters
    ----------
    penalty : float, default=0.0
        Roughness penalty on the warp, ``penalty * ||q_T||^2 / (b - a) *
        int (sqrt(phi') - 1)^2`` added to the criterion (``q_T`` is the
        template's square-root slope function, so ``penalty`` has no units).
        0 lets warps stretch freely (slopes between 1/4 and 4); larger values
        keep them closer to the identity.
    template : array-like of shape (n_features,), default=None
        Template curve on the curves' grid. None means the Karcher mean.
    max_iter : int, default=5
        Largest number of Karcher-mean iterations (each aligns every curve).
    tol : float, default=1e-3
        Stop when the template's square-root slope function changes by less
        than ``tol`` times its L2 norm.
    %(aligner_output)s

    Attributes
    ----------
    template_ : ndarray of shape (n_features,)
        Template curve: the mean of the aligned training curves (or the
        given template).
    template_srsf_ : ndarray of shape (n_features,)
        Square-root slope function the curves are aligned to (the Karcher
        mean, or that of the given template).
    n_iter_ : int
        Number of Karcher-mean iterations run.
    %(curve_input_attributes)s

    See Also
    --------
    ShiftAligner : One shift per curve.
    LandmarkAligner : Smooth warps through given landmark times.

    Notes
    -----
    The slope is estimated by second-order finite differences (on a grid of
    two points, by the secant). A warp through grid points that keeps the
    ends fixed needs an interior point to move, and with steps of slope
    1/4 to 4 it needs at least 4 grid points; on 2 or 3 grid points the
    only such warp is the identity, so curves are returned unchanged, every
    warp is the identity and the phase distances are 0. Noise in the curves enters ``q`` through the
    slope: smooth noisy curves first (for example with ``CurveSmoother``).
    The dynamic program runs one row of its table at a time for a whole
    block of curves, in numpy; steps ``(di, dj)`` are coprime pairs up to 4.
    Warps are curve clocks ``gamma_i`` (``f_i ~ template o gamma_i``); the
    aligned curves are ``f_i o gamma_i^{-1}``.

    References
    ----------
    Srivastava, A., Wu, W., Kurtek, S., Klassen, E. and Marron, J. S. (2011).
    Registration of functional data using Fisher-Rao metric.
    arXiv:1103.3817.

    Srivastava, A. and Klassen, E. P. (2016). *Functional and Shape Data
    Analysis*, ch. 4 and 8. Springer.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.alignment import ElasticAligner
    >>> t = np.linspace(0, 1, 101)
    >>> X = np.array([np.sin(np.pi * t ** p) for p in (0.8, 1.0, 1.25)])
    >>> aligner = ElasticAligner().fit(X)
    >>> aligned = aligner.transform(X)
    >>> np.ptp(t[np.argmax(aligned, axis=1)]) <= 0.02  # peaks line up
    np.True_
    """

    #: fits on dask arrays: each Karcher iteration is one dynamic program
    #: per curve on the workers and two passes of sums
    _accepts_dask = True

    _parameter_constraints = {
        "penalty": [Interval(Real, 0, None, closed="left")],
        "template": ["array-like", None],
        "max_iter": [Interval(Integral, 1, None, closed="left")],
        "tol": [Interval(Real, 0, None, closed="left")],
        **AlignerBase._output_constraint,
    }

    def __init__(self, penalty=0.0, *, template=None, max_iter=5, tol=1e-3,
                 output="curves", grid=None):
        store_init_params(self, locals())

    def _fit(self, X):
        t = self.grid_
        if self.template is not None:
            self.template_ = self._check_template(self.template)
            self.template_srsf_ = srsf(t, self.template_[None, :])[0]
            self.n_iter_ = 0
            return
        w = quadrature_weights(t)
        if is_dask_array(X):  # read at every iteration: persisted once
            X = KeptRows(X).arrays[0]
            mu = self._mean_of_rows(partial(srsf, t), X)
            step = partial(self._karcher_step_on_blocks, X)
        else:
            Q = srsf(t, X)
            mu = Q.mean(axis=0)
            step = partial(self._karcher_step, Q)
        for it in range(1, self.max_iter + 1):  # noqa: B007  (n_iter_)
            new = step(mu)
            change = np.sqrt(((new - mu) ** 2) @ w)
            mu = new
            if change <= self.tol * np.sqrt((mu ** 2) @ w):
                break
        self.template_srsf_ = mu
        self.template_ = self._mean_of_rows(self._aligned_rows, X)
        self.n_iter_ = it

    def _karcher_step(self, Q, mu):
        """The next Karcher mean of the square-root slope functions ``Q``:
        each aligned to ``mu``, the warps centred (composed with the inverse
        of their mean, so that they average to the identity), then averaged."""
        t = self.grid_
        phi = dynamic_program_warps(t, mu, Q, self.penalty)
        mean_inv = invert_warps(t, phi.mean(axis=0, keepdims=True))[0]
        return warp_srsf(t, Q, interp_rows(mean_inv, t, phi)).mean(axis=0)

    def _karcher_step_on_blocks(self, X, mu):
        """:meth:`_karcher_step` for a dask X: each block's warps are kept on
        the workers between the two sums (their mean, then the mean of the
        warped square-root slope functions), so the dynamic program runs
        once per curve and iteration."""
        t = self.grid_
        kept = kept_blocks(partial(_block_warps, grid=t, mu=mu, penalty=self.penalty), X)
        sums = reduce_delayed(_row_sums, [(phi,) for phi in kept])
        mean_inv = invert_warps(t, (sums["sum"] / sums["n"])[None, :])[0]
        blocks = [(block[0], phi) for block, phi in zip(delayed_row_blocks(X), kept,
                                                         strict=True)]
        sums = reduce_delayed(partial(_warped_srsf_sums, grid=t, mean_inv=mean_inv), blocks)
        return sums["sum"] / sums["n"]

    def _aligned_rows(self, X):
        """Curves aligned to the template's square-root slope function."""
        return compose(self.grid_, X, self._phi(X))

    def _phi(self, X):
        return dynamic_program_warps(self.grid_, self.template_srsf_,
                                     srsf(self.grid_, X), self.penalty)

    def _align(self, X, curves=True, warps=True):
        phi = self._phi(X)
        return (compose(self.grid_, X, phi) if curves else None,
                invert_warps(self.grid_, phi) if warps else None)

    @fill_doc
    def distances(self, X):
        """Amplitude and phase distances of curves to the template.

        %(fitted_curves)s

        Returns
        -------
        amplitude : ndarray of shape (n_samples,)
            ``min_gamma ||q_T - (q o gamma) sqrt(gamma')||``, the Fisher-Rao
            distance between the curve's and the template's shapes.
        phase : ndarray of shape (n_samples,)
            ``arccos(int sqrt(gamma') / (b - a))``: the length of the arc from
            the identity to the aligning warp on the sphere of square-root
            slopes (0 for no warping, at most pi/2).
        """
        check_is_fitted(self)
        both = self._per_row(self._distances_rows, self._validate(X, reset=False))
        return both[:, 0], both[:, 1]

    def _distances_rows(self, X):
        """:meth:`distances` of numpy curves, as two columns."""
        t = self.grid_
        Q = srsf(t, X)
        phi = dynamic_program_warps(t, self.template_srsf_, Q, self.penalty)
        amplitude = l2_norms(t, warp_srsf(t, Q, phi) - self.template_srsf_)
        return np.column_stack([amplitude, phase_distances(t, phi)])


def _paired_curves(X, Y, grid):
    X = np.atleast_2d(np.asarray(X, dtype=np.float64))
    Y = np.atleast_2d(np.asarray(Y, dtype=np.float64))
    if X.shape != Y.shape:
        raise ValueError(
            f"X and Y must have the same shape (pairs of curves on one grid); "
            f"got {X.shape} and {Y.shape}."
        )
    if not (np.all(np.isfinite(X)) and np.all(np.isfinite(Y))):
        raise ValueError("X and Y must contain only finite values; got NaN or inf.")
    t = np.linspace(0.0, 1.0, X.shape[1]) if grid is None else grid
    t = check_grid(t, X.shape[1])
    return X, Y, t


@fill_doc
def fisher_rao_distance(X, Y, *, grid=None):
    """Fisher-Rao distance between paired curves: ``||q_X - q_Y||_L2``.

    ``q = sign(f') sqrt(|f'|)`` is the square-root slope function. The
    distance is unchanged when both curves are warped by the same warp,
    ``d(f o gamma, h o gamma) = d(f, h)``.

    Parameters
    ----------
    X, Y : array-like of shape (n_samples, n_features)
        Curves, paired by row, on the same grid.
    %(paired_grid)s

    Returns
    -------
    distances : ndarray of shape (n_samples,)

    References
    ----------
    Srivastava, A., Wu, W., Kurtek, S., Klassen, E. and Marron, J. S. (2011).
    Registration of functional data using Fisher-Rao metric.
    arXiv:1103.3817.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.alignment import fisher_rao_distance
    >>> t = np.linspace(0, 1, 101)
    >>> float(fisher_rao_distance([t], [t])[0])
    0.0
    """
    X, Y, t = _paired_curves(X, Y, grid)
    return l2_norms(t, srsf(t, X) - srsf(t, Y))


@fill_doc
def amplitude_distance(X, Y, *, penalty=0.0, grid=None):
    """Elastic (amplitude) distance between paired curves:
    ``min_gamma ||q_X - (q_Y o gamma) sqrt(gamma')||_L2``.

    The minimum over warps is found by the same dynamic program as
    :class:`ElasticAligner` uses, for all pairs at once.

    Parameters
    ----------
    X, Y : array-like of shape (n_samples, n_features)
        Curves, paired by row, on the same grid.
    penalty : float, default=0.0
        Roughness penalty on the warp (see :class:`ElasticAligner`).
    %(paired_grid)s

    Returns
    -------
    distances : ndarray of shape (n_samples,)

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.alignment import amplitude_distance, fisher_rao_distance
    >>> t = np.linspace(0, 1, 101)
    >>> f = np.sin(np.pi * t)
    >>> g = np.sin(np.pi * t ** 1.3)  # the same shape, warped
    >>> elastic = amplitude_distance([f], [g])[0]
    >>> rigid = fisher_rao_distance([f], [g])[0]
    >>> bool(elastic < rigid / 5)
    True
    """
    X, Y, t = _paired_curves(X, Y, grid)
    QX, QY = srsf(t, X), srsf(t, Y)
    phi = dynamic_program_warps(t, QX, QY, penalty)
    return l2_norms(t, QX - warp_srsf(t, QY, phi))
