"""LandmarkAligner: smooth monotone warps that map landmarks onto targets."""

from functools import partial

import numpy as np
from sklearn.utils._param_validation import StrOptions

from ._aligner_base import AlignerBase
from ._blocks import KeptRows, is_dask_array
from ._docstrings import fill_doc
from ._estimator import store_init_params
from ._warping import compose, pchip_rows

FINDERS = ("peak", "trough")


def find_extremum(grid, X, sign=1.0):
    """Time of each row's largest interior value (``sign=1``) or smallest
    (``sign=-1``), refined by the vertex of the parabola through the best
    grid point and its neighbours, so the result lies strictly inside the
    domain and does not jump with the grid."""
    Y = sign * X[:, 1:-1]
    j = np.argmax(Y, axis=1) + 1
    rows = np.arange(X.shape[0])
    t0, t1, t2 = grid[j - 1], grid[j], grid[j + 1]
    y0, y1, y2 = sign * X[rows, j - 1], sign * X[rows, j], sign * X[rows, j + 1]
    # vertex of the parabola through three points (common practice)
    num = (t1 - t0) ** 2 * (y1 - y2) - (t1 - t2) ** 2 * (y1 - y0)
    den = (t1 - t0) * (y1 - y2) - (t1 - t2) * (y1 - y0)
    with np.errstate(invalid="ignore", divide="ignore"):
        vertex = np.where(den != 0, t1 - 0.5 * num / den, t1)
    return np.clip(vertex, 0.5 * (t0 + t1), 0.5 * (t1 + t2))[:, None]


@fill_doc
class LandmarkAligner(AlignerBase):
    """Align curves by smooth monotone warps through landmark times.

    Each curve has ``k`` landmark times (a peak, a threshold crossing, the
    start of a phase), given per curve or found by a function. Curve i is
    read on the warp that carries the target times ``tau_1 < ... < tau_k``
    onto its landmarks ``l_i1 < ... < l_ik`` and the ends onto the ends,
    a monotone piecewise-cubic (PCHIP) interpolant: smooth, strictly
    increasing, and exact at the landmarks, so every aligned curve has its
    landmarks at the targets.

    Parameters
    ----------
    landmarks : {"peak", "trough"} or callable, default="peak"
        How landmarks are found when they are not passed to ``fit`` or
        ``transform``: the time of each curve's largest (``"peak"``) or
        smallest (``"trough"``) interior value, refined between grid points;
        or a function ``landmarks(X, grid)`` returning an array of shape
        (n_samples, k) (for a dask X it is called on each row block).
    target_landmarks : array-like of shape (k,), default=None
        Where the landmarks go, strictly increasing and strictly inside the
        domain. None means the mean landmark times of the training curves.
    %(aligner_output)s

    Attributes
    ----------
    target_landmarks_ : ndarray of shape (k,)
    landmarks_ : ndarray of shape (n_samples, k)
        Landmark times of the training curves.
    template_ : ndarray of shape (n_features,)
        Mean of the aligned training curves.
    %(curve_input_attributes)s

    See Also
    --------
    ShiftAligner : One shift per curve.
    ElasticAligner : General warps by the Fisher-Rao metric.

    Notes
    -----
    The warp returned by :meth:`transform_warps` is curve i's clock
    ``gamma_i`` (``gamma_i(l_ik) = tau_k``); aligned curves are
    ``x_i o phi_i``, where ``phi_i`` is the PCHIP interpolant through
    (targets -> landmarks), so landmarks map exactly. ``gamma_i`` is the PCHIP
    interpolant through (landmarks -> targets): also exact at the landmarks,
    and equal to ``phi_i^{-1}`` up to the interpolation error (both are
    monotone cubic interpolants of the same points).

    Curves on two grid points have no point strictly inside the domain,
    where landmarks must lie, and the only warp that keeps the ends fixed
    is the identity. There ``"peak"`` and ``"trough"`` find no landmark
    (``landmarks_`` has 0 columns) and the curves are returned unchanged
    with identity warps; landmark times given to :meth:`fit` or
    :meth:`transform`, returned by a landmarks function, or given as
    ``target_landmarks`` are a ValueError, since no grid point could carry
    them.

    References
    ----------
    Ramsay, J. O. and Silverman, B. W. (2005). *Functional Data Analysis*,
    2nd ed., ch. 7 (landmark registration). Springer.

    Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic
    interpolation. *SIAM J. Numer. Anal.* 17(2), 238-246.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.alignment import LandmarkAligner
    >>> t = np.linspace(0, 1, 101)
    >>> X = np.exp(-((t - np.array([[0.4], [0.6]])) / 0.1) ** 2)
    >>> aligner = LandmarkAligner(target_landmarks=[0.5]).fit(X)
    >>> aligned = aligner.transform(X)
    >>> t[np.argmax(aligned, axis=1)]
    array([0.5, 0.5])
    """

    #: fits on dask arrays: landmarks found per row block, the template
    #: from per-block sums (landmarks given to transform: numpy X only)
    _accepts_dask = True

    _parameter_constraints = {
        "landmarks": [StrOptions(set(FINDERS)), callable],
        "target_landmarks": ["array-like", None],
        **AlignerBase._output_constraint,
    }

    def __init__(self, landmarks="peak", *, target_landmarks=None, output="curves",
                 grid=None):
        store_init_params(self, locals())

    # -- landmarks ------------------------------------------------------------

    def _landmarks(self, X, landmarks):
        if landmarks is None:
            if is_dask_array(X):  # found block by block; one row per curve comes back
                return self._per_row(partial(self._landmarks, landmarks=None), X)
            if callable(self.landmarks):
                landmarks = self.landmarks(X, self.grid_.copy())
                source = "the landmarks function"
            elif self.grid_.size < 3:
                # no interior grid point: no landmark, identity warps
                return np.empty((X.shape[0], 0))
            else:
                sign = 1.0 if self.landmarks == "peak" else -1.0
                return find_extremum(self.grid_, X, sign)
        else:
            source = "landmarks"
        values = np.asarray(landmarks, dtype=np.float64)
        if values.ndim == 1:
            values = values[:, None]
        if values.ndim != 2 or values.shape[0] != X.shape[0]:
            raise ValueError(
                f"{source} gave an array of shape {np.shape(landmarks)}; expected "
                f"(n_samples, k) = ({X.shape[0]}, k): k landmark times per curve."
            )
        return self._check_times(values, source)

    def _check_times(self, values, name):
        a, b = self.grid_[0], self.grid_[-1]
        if self.grid_.size < 3:
            raise ValueError(
                f"{name} gives landmark times, but X has only {self.grid_.size} "
                f"grid points (columns): no grid point lies strictly inside the "
                f"domain ({a}, {b}), where landmarks must go. Give curves on at "
                "least 3 grid points, or use landmarks='peak' or 'trough', which "
                "find no landmark on two points and leave the curves unchanged."
            )
        if values.size == 0 or not np.all(np.isfinite(values)):
            raise ValueError(f"{name} must be finite landmark times; got NaN, inf or none.")
        outside = (values <= a) | (values >= b)
        if np.any(outside):
            i, k = np.argwhere(outside)[0]
            raise ValueError(
                f"{name}[{i}, {k}]={values[i, k]!r} is not strictly inside the "
                f"domain ({a}, {b}); warps keep the ends fixed, so landmarks "
                "must lie between them."
            )
        order = np.diff(values, axis=1) <= 0
        if np.any(order):
            i, k = np.argwhere(order)[0]
            raise ValueError(
                f"{name} must be strictly increasing along each row; row {i} has "
                f"{values[i, k]!r} followed by {values[i, k + 1]!r}."
            )
        return values

    # -- fit / transform ------------------------------------------------------

    @fill_doc
    def fit(self, X, y=None, landmarks=None):
        """Find the training landmarks, the targets and the template.

        %(fit_curves)s
        %(landmark_times)s

        Returns
        -------
        self : object
            Fitted aligner.
        """
        X = self._validate(X, reset=True)
        if is_dask_array(X):  # read twice (landmarks, template): persisted once
            X = KeptRows(X).arrays[0]
        self.landmarks_ = self._landmarks(X, landmarks)
        if self.target_landmarks is None:
            self.target_landmarks_ = self.landmarks_.mean(axis=0)
        else:
            targets = np.asarray(self.target_landmarks, dtype=np.float64).reshape(1, -1)
            self.target_landmarks_ = self._check_times(targets, "target_landmarks")[0]
        if self.target_landmarks_.size != self.landmarks_.shape[1]:
            raise ValueError(
                f"target_landmarks has {self.target_landmarks_.size} times but the "
                f"curves have {self.landmarks_.shape[1]} landmarks each."
            )
        self.template_ = self._mean_of_rows(self._aligned_rows, X, self.landmarks_)
        return self

    def _warp(self, times, inverse):
        """``gamma_i`` on the grid, PCHIP through (landmarks -> targets), or
        ``gamma_i^{-1}``, PCHIP through (targets -> landmarks)."""
        t = self.grid_
        a, b = t[0], t[-1]
        n = times.shape[0]
        targets = np.tile(np.concatenate([[a], self.target_landmarks_, [b]]), (n, 1))
        own = np.column_stack([np.full(n, a), times, np.full(n, b)])
        warp = pchip_rows(targets, own, t) if inverse else pchip_rows(own, targets, t)
        warp[:, 0], warp[:, -1] = a, b
        return warp

    def _align(self, X, curves=True, warps=True, landmarks=None):
        times = self._landmarks(X, landmarks)
        if times.shape[1] != self.target_landmarks_.size:
            raise ValueError(
                f"landmarks has {times.shape[1]} times per curve; the aligner was "
                f"fitted with {self.target_landmarks_.size}."
            )
        n = X.shape[0]
        return (self._by_blocks(partial(self._aligned, X, times), n) if curves else None,
                self._by_blocks(lambda rows: self._warp(times[rows], False), n)
                if warps else None)

    def _aligned(self, X, times, rows):
        """The curves of these rows, aligned: ``x_i o gamma_i^{-1}``."""
        return self._aligned_rows(X[rows], times[rows])

    def _aligned_rows(self, X, times):
        """Curves aligned by their landmark ``times``."""
        return compose(self.grid_, X, self._warp(times, True))

    def _check_dask_landmarks(self, X, landmarks):
        if landmarks is not None and is_dask_array(X):
            raise ValueError(
                "landmarks= cannot be given with a dask X in transform or "
                "transform_warps (they would not follow its row blocks); give "
                "numpy curves, or leave landmarks=None to find them block by block."
            )

    @fill_doc
    def transform(self, X, landmarks=None):
        """Warp curves so their landmarks fall on the fitted targets.

        %(fitted_curves)s
        %(landmark_times)s

        %(aligned_returns)s
        """
        self._check_dask_landmarks(X, landmarks)
        return self._transform(X, landmarks=landmarks)

    @fill_doc
    def fit_transform(self, X, y=None, landmarks=None):
        """Fit, then transform the same curves with the same landmarks.

        %(fit_curves)s
        %(landmark_times)s

        %(aligned_returns)s
        """
        return self.fit(X, landmarks=landmarks).transform(X, landmarks=landmarks)

    @fill_doc
    def transform_warps(self, X, landmarks=None):
        """Each curve's warp ``gamma_i`` (its clock) on the fitted grid: the
        PCHIP interpolant through (landmarks -> targets) and the ends.

        %(fitted_curves)s
        %(landmark_times)s

        %(warps_returns)s
        """
        self._check_dask_landmarks(X, landmarks)
        return self._warps(X, landmarks=landmarks)
