"""CurveOutlierDetector: which curves are unusual, and how."""

from numbers import Real

import numpy as np
from scipy.stats import chi2
from sklearn.base import BaseEstimator, OutlierMixin
from sklearn.utils import check_random_state
from sklearn.utils._param_validation import Interval, StrOptions
from sklearn.utils.validation import check_is_fitted

from ._depth import (
    band_values,
    central_region,
    fence_exceedance,
    integrated_values,
    magnitude_shape_values,
    mbd_values,
    robust_location_scale,
    time_weights,
)
from ._docstrings import fill_doc
from ._estimator import ShortReprMixin, store_init_params
from ._robust_covariance import deterministic_mcd
from ._validation import validate_curves

METHODS = ("boxplot", "magnitude_shape", "depth")
DEPTHS = {
    "modified_band": lambda X, ref, w: mbd_values(X, ref, w),
    "band": lambda X, ref, w: band_values(X, ref),
    "integrated": lambda X, ref, w: integrated_values(X, ref, w),
}
#: what ``outlier_kind`` can return
KINDS = ("inlier", "magnitude", "shape", "magnitude and shape", "unspecified")

#: tail probability of the magnitude-shape cutoff: Dai & Genton (2018) flag
#: curves beyond the 0.993 quantile (from memory)
MS_QUANTILE = 0.993
#: smoothed bootstrap of the depth cutoff (Febrero, Galeano & Gonzalez-
#: Manteiga, 2008, from memory): replicates, noise as a fraction of the
#: sample covariance, and the depth quantile a typical curve falls below
BOOTSTRAP_REPLICATES = 50
BOOTSTRAP_SMOOTHING = 0.05
BOOTSTRAP_QUANTILE = 0.01
#: at most this many rounds of trimming (each removes the curves below the
#: cutoff and recomputes it from the rest)
TRIMMING_ROUNDS = 10


@fill_doc
class CurveOutlierDetector(ShortReprMixin, OutlierMixin, BaseEstimator):
    """Unusual curves: depth trimming, functional boxplot or magnitude-shape.

    An outlier detector with scikit-learn's interface (as
    :class:`sklearn.ensemble.IsolationForest`): :meth:`fit` on a sample of
    curves, then :meth:`predict` returns 1 for typical curves and -1 for
    outliers, :meth:`score_samples` a score (lower is more unusual) and
    :meth:`decision_function` that score minus ``offset_`` (negative for
    outliers). :meth:`outlier_kind` says how a flagged curve is unusual when
    the method can tell.

    Parameters
    ----------
    method : {"magnitude_shape", "boxplot", "depth"}, default="magnitude_shape"
        * "magnitude_shape": the mean MO (magnitude) and variation VO
          (shape) of each curve's directional outlyingness (Dai & Genton,
          2018), and the robust Mahalanobis distance of (MO, VO^(1/3)) from
          a minimum covariance determinant fit, computed with the
          deterministic algorithm of Hubert, Rousseeuw & Verdonck (2012)
          (no random subsets: the fit does not depend on ``random_state``
          or on the order of the curves; consistency and reweighting as
          :class:`sklearn.covariance.MinCovDet`). The score is minus the
          squared distance; "auto" flags distances beyond the 0.993 quantile
          of the chi-square distribution with 2 degrees of freedom. VO, a
          mean of squares, has a long right tail; its cube root is close to
          normal (Wilson & Hilferty, 1931), so the cloud is closer to the
          ellipse the cutoff assumes (a departure from the published rule,
          which uses VO itself). Tells magnitude from shape outliers. The
          default: in the simulation of the user guide it finds every kind
          of planted outlier and flags 3-4% of clean curves.
        * "boxplot": the functional boxplot rule (Sun & Genton, 2011): a
          curve is an outlier when it leaves the central region (the
          envelope of the deepest half of the curves) by more than ``factor``
          times the region's width somewhere. The score is minus the largest
          such excursion, in widths (negative inside the region); "auto"
          flags excursions beyond ``factor``. Flagged curves are magnitude
          outliers (their values leave the fences).
        * "depth": depth trimming. The score is the curve's depth with
          respect to the training curves; "auto" flags depths below a cutoff
          from a smoothed bootstrap of the training curves (Febrero et al.,
          2008): the median over 50 replicates of the 1% quantile of depth,
          recomputed after dropping the curves below it until none is
          dropped (the depth then refers to the curves kept). Depth alone
          does not say how a curve is unusual.
    depth : {"modified_band", "band", "integrated"}, default="modified_band"
        Depth used by "depth" (the score) and "boxplot" (to find the
        central region). Modified band depth and integrated depth cost
        O(n log n) per grid point; band depth O(n^2) per grid point.
    contamination : "auto" or float in (0, 0.5], default="auto"
        "auto" uses the method's own rule above; a float flags that
        proportion of the training curves (``offset_`` is that quantile of
        their scores).
    factor : float > 0, default=1.5
        Fence of the boxplot rule in widths of the central region.
    random_state : int, RandomState instance or None, default=None
        Seed for the bootstrap ("depth" with contamination="auto"); the
        other methods are deterministic.
    %(grid)s

    Attributes
    ----------
    offset_ : float
        Scores below it are outliers: ``decision_function = score_samples -
        offset_``.
    median_ : ndarray of shape (n_features,)
        Pointwise median of the training curves.
    scale_ : ndarray of shape (n_features,)
        Pointwise robust scale (MAD scaled to a normal SD) of the training
        curves, the unit of the directional outlyingness.
    reference_ : ndarray of shape (n_reference, n_features) or None
        "depth" only: the curves new curves are ranked among. The training
        curves, or with contamination="auto" those left after the iterated
        trimming (Febrero et al., 2008), so the flagged curves do not mask
        each other.
    central_lower_, central_upper_ : ndarray of shape (n_features,) or None
        The central region of the training curves ("boxplot" only).
    location_ : ndarray of shape (2,) or None
        Robust centre of (magnitude, shape) of the training curves
        ("magnitude_shape" only).
    covariance_ : ndarray of shape (2, 2) or None
        Robust covariance of (magnitude, shape) ("magnitude_shape" only).
    outlier_kind_ : ndarray of str of shape (n_samples,)
        :meth:`outlier_kind` of the training curves.
    %(curve_input_attributes)s

    See Also
    --------
    skfunc.outliers.modified_band_depth, skfunc.outliers.band_depth,
    skfunc.outliers.integrated_depth,
    skfunc.outliers.magnitude_shape_outlyingness
    skfunc.plotting.FunctionalBoxplotDisplay,
    skfunc.plotting.OutlyingnessDisplay
    sklearn.ensemble.IsolationForest : The same interface for feature vectors.

    Notes
    -----
    The fit needs the training curves in memory (pointwise medians, ranks
    and the robust covariance are not sums over rows), so it does not take
    Dask arrays or ``partial_fit``; scoring new curves is row by row.

    Integrals over time use the grid's trapezoid weights, so scores do not
    depend on how finely or evenly the curves are sampled (up to the
    quadrature's error). Missing values are not accepted: fill them first,
    for example with :class:`skfunc.preprocessing.CurveSmoother` in a
    pipeline.

    The automatic rules differ in how often they flag typical curves. In
    the simulation models of Sun & Genton (2011) (see the user guide page
    "Unusual curves") the boxplot rule flagged about 0.1% of clean curves,
    magnitude-shape outlyingness 3-4% (more than its nominal 0.7%: the
    chi-square cutoff, used here in place of the published F approximation
    of Hardin & Rocke (2005), is anti-conservative in small samples, and the
    cloud is only roughly elliptical) and depth trimming 3-6%. The boxplot
    rule finds magnitude outliers only, and flags nothing when no curve
    leaves its fences; use it when false alarms are costly. With many flags,
    set ``contamination`` and read :meth:`outlier_kind`.

    A flag is a statistical statement about a curve relative to the others,
    not a diagnosis: confirm it with process knowledge, and follow the
    applicable standards and qualified practice before acting on it.

    References
    ----------
    Sun, Y. and Genton, M. G. (2011). Functional boxplots. *Journal of
    Computational and Graphical Statistics* 20(2), 316-334.

    Dai, W. and Genton, M. G. (2018). Multivariate functional data
    visualization and outlier detection. *Journal of Computational and
    Graphical Statistics* 27(4), 923-934.

    Febrero, M., Galeano, P. and Gonzalez-Manteiga, W. (2008). Outlier
    detection in functional data by depth measures, with application to
    identify abnormal NOx levels. *Environmetrics* 19(4), 331-345.

    Lopez-Pintado, S. and Romo, J. (2009). On the concept of depth for
    functional data. *Journal of the American Statistical Association*
    104(486), 718-734.

    Hubert, M., Rousseeuw, P. J. and Verdonck, T. (2012). A deterministic
    algorithm for robust location and scatter. *Journal of Computational
    and Graphical Statistics* 21(3), 618-637.

    Hardin, J. and Rocke, D. M. (2005). The distribution of robust
    distances. *Journal of Computational and Graphical Statistics* 14(4),
    928-946.

    Wilson, E. B. and Hilferty, M. M. (1931). The distribution of
    chi-square. *Proceedings of the National Academy of Sciences* 17(12),
    684-688.

    Examples
    --------
    Invented kiln-firing runs; a few faulty kilns never reach their
    set-point.

    >>> import numpy as np
    >>> from skfunc.datasets import make_kiln_firing
    >>> from skfunc.outliers import CurveOutlierDetector
    >>> kiln = make_kiln_firing(100, dropout_fraction=0, faulty_fraction=0.05,
    ...                         late_start_fraction=0, random_state=0)
    >>> detector = CurveOutlierDetector(random_state=0, grid=kiln.grid)
    >>> flags = detector.fit_predict(kiln.data)
    >>> detector.outlier_kind_[kiln.faulty]
    array(['magnitude and shape', 'magnitude and shape', 'magnitude',
           'magnitude and shape', 'magnitude', 'magnitude and shape',
           'inlier', 'inlier'], dtype='<U19')
    >>> int(np.sum(flags[~kiln.faulty] == -1))
    7

    Magnitude-shape outlyingness (the default) flags six of the eight
    faulty runs (lower than the others: magnitude), and also a few runs that
    heat or cool unusually early or late. The boxplot rule flags only the
    two runs that stall furthest below the others:

    >>> boxplot = CurveOutlierDetector("boxplot", grid=kiln.grid)
    >>> flags = boxplot.fit_predict(kiln.data)
    >>> np.flatnonzero(flags == -1), np.flatnonzero(kiln.faulty)
    (array([22, 45]), array([ 7, 22, 24, 30, 40, 45, 71, 86]))
    >>> boxplot.outlier_kind_[flags == -1]
    array(['magnitude', 'magnitude'], dtype='<U19')
    """

    _parameter_constraints = {
        "method": [StrOptions(set(METHODS))],
        "depth": [StrOptions(set(DEPTHS))],
        "contamination": [StrOptions({"auto"}),
                          Interval(Real, 0, 0.5, closed="right")],
        "factor": [Interval(Real, 0, None, closed="neither")],
        "random_state": ["random_state"],
        "grid": ["array-like", None],
    }

    def __init__(self, method="magnitude_shape", *, depth="modified_band",
                 contamination="auto", factor=1.5, random_state=None, grid=None):
        store_init_params(self, locals())

    # ------------------------------------------------------------------ fit
    def fit(self, X, y=None):
        """Learn what typical curves look like from the curves X.

        Parameters
        ----------
        X : array-like of shape (n_samples, n_features)
            Training curves (rows), complete; at least 2 (a band is made of
            two curves).
        y : None
            Ignored.

        Returns
        -------
        self : object
            Fitted detector.
        """
        self._validate_params()
        X = self._validate(X, reset=True)
        n = X.shape[0]
        if n < 2:
            raise ValueError(
                f"CurveOutlierDetector needs at least 2 curves (a band is made of "
                f"two curves, and a curve is unusual only among others); got {n} "
                "sample (one curve)."
            )
        weights = time_weights(self.grid_, X.shape[1])
        self.median_, self.scale_ = robust_location_scale(X)
        self.reference_, cutoff = None, None
        if self.method == "depth":
            self.reference_, cutoff = (self._trimmed(X, weights)
                                       if self.contamination == "auto" else (X, None))
        self.central_lower_ = self.central_upper_ = None
        self.location_ = self.covariance_ = points = None
        if self.method == "boxplot":
            depth = DEPTHS[self.depth](X, X, weights)
            _, self.central_lower_, self.central_upper_ = central_region(X, depth)
        elif self.method == "magnitude_shape":
            points = self._ms_points(X, weights)  # scored and told apart below
            self._fit_covariance(points)
        scores = self._scores(X, weights, points)
        if self.contamination == "auto":
            self.offset_ = self._auto_offset(cutoff)
        else:
            self.offset_ = float(np.percentile(scores, 100.0 * self.contamination))
        self.outlier_kind_ = self._kinds(X, scores - self.offset_ < 0, weights, points)
        return self

    def _fit_covariance(self, points):
        """Deterministic MCD of the (magnitude, shape) points; a singular
        estimate (an exact fit, or too few curves) is an error."""
        try:
            mcd = deterministic_mcd(points)
            singular = bool(np.linalg.det(mcd.covariance) <= 0)
        except ValueError as error:
            singular, mcd = str(error), None
        if singular is not False:
            detail = f" ({singular})" if isinstance(singular, str) else ""
            raise ValueError(
                "The magnitude and shape outlyingness of the training curves have "
                "a singular robust covariance (for example, more than half of the "
                f"curves are identical up to a shift){detail}; use method='boxplot' "
                "or 'depth'."
            )
        self.location_ = mcd.location
        self.covariance_ = mcd.covariance

    def _auto_offset(self, depth_cutoff):
        if self.method == "boxplot":
            return -float(self.factor)
        if self.method == "magnitude_shape":
            return -float(chi2.ppf(MS_QUANTILE, df=2))
        return depth_cutoff

    def _trimmed(self, X, weights):
        """Febrero et al. (2008): find the bootstrap cutoff, drop the curves
        whose depth among the remaining ones is below it, and repeat until
        none is dropped. Returns the remaining curves and sets the cutoff."""
        rng = check_random_state(self.random_state)
        depth_of = DEPTHS[self.depth]
        keep = X
        for _ in range(TRIMMING_ROUNDS):
            depth = depth_of(keep, keep, weights)
            cutoff = self._bootstrap_cutoff(keep, depth, weights, rng)
            low = depth < cutoff
            if not np.any(low) or keep.shape[0] - low.sum() < 2:
                break
            keep = keep[~low]
        return keep, cutoff

    def _bootstrap_cutoff(self, X, depth, weights, rng):
        """Median over bootstrap replicates of the 1% depth quantile of a
        smoothed bootstrap sample drawn with probabilities proportional to
        depth (Febrero et al., 2008)."""
        depth_of = DEPTHS[self.depth]
        n = X.shape[0]
        centred = X - X.mean(axis=0)
        # Gaussian noise with covariance smoothing * sample covariance
        _, s, vt = np.linalg.svd(centred, full_matrices=False)
        noise_map = np.sqrt(BOOTSTRAP_SMOOTHING / max(n - 1, 1)) * s[:, None] * vt
        p = depth / depth.sum() if depth.sum() > 0 else None
        cutoffs = np.empty(BOOTSTRAP_REPLICATES)
        for b in range(BOOTSTRAP_REPLICATES):
            sample = X[rng.choice(n, size=n, p=p)]
            sample = sample + rng.standard_normal((n, s.size)) @ noise_map
            cutoffs[b] = np.quantile(depth_of(sample, sample, weights),
                                     BOOTSTRAP_QUANTILE)
        return float(np.median(cutoffs))

    # -------------------------------------------------------------- scoring
    def _validate(self, X, reset):
        return np.asarray(validate_curves(self, X, reset=reset), dtype=np.float64)

    def _outlyingness(self, X, weights):
        return magnitude_shape_values(X, self.median_, self.scale_, weights)

    def _ms_points(self, X, weights):
        """(MO, cube root of VO): the cloud the robust distance is taken in.
        VO is a weighted mean of squares, roughly a scaled chi-square
        variable, whose cube root is close to normal (Wilson & Hilferty,
        1931); the chi-square cutoff assumes an elliptical cloud."""
        mo, vo = self._outlyingness(X, weights)
        return np.column_stack([mo, np.cbrt(vo)])

    def _scores(self, X, weights, points=None):
        """Scores of X; ``points`` are its (MO, VO^(1/3)) when known."""
        if self.method == "depth":
            return DEPTHS[self.depth](X, self.reference_, weights)
        if self.method == "boxplot":
            return -fence_exceedance(X, self.central_lower_, self.central_upper_)
        if points is None:
            points = self._ms_points(X, weights)
        points = points - self.location_
        precision = np.linalg.inv(self.covariance_)
        return -np.einsum("ij,jk,ik->i", points, precision, points)

    def _kinds(self, X, flagged, weights, points=None):
        kinds = np.full(X.shape[0], KINDS[0], dtype=f"<U{max(map(len, KINDS))}")
        if self.method == "depth":
            kinds[flagged] = "unspecified"
        elif self.method == "boxplot":
            kinds[flagged] = "magnitude"
        else:
            if points is None:
                points = self._ms_points(X, weights)
            mo, vo = points.T
            z_mag = (mo - self.location_[0]) ** 2 / self.covariance_[0, 0]
            z_shape = np.where(vo > self.location_[1],
                               (vo - self.location_[1]) ** 2 / self.covariance_[1, 1],
                               0.0)
            cut = chi2.ppf(MS_QUANTILE, df=1)
            magnitude = (z_mag > cut) | ((z_shape <= cut) & (z_mag >= z_shape))
            shape = (z_shape > cut) | ((z_mag <= cut) & (z_shape > z_mag))
            kinds[flagged & magnitude & ~shape] = "magnitude"
            kinds[flagged & shape & ~magnitude] = "shape"
            kinds[flagged & shape & magnitude] = "magnitude and shape"
        return kinds

    @fill_doc
    def score_samples(self, X):
        """Typicality of each curve relative to the training curves.

        Lower is more unusual: depth ("depth"), minus the largest excursion
        from the central region in widths ("boxplot"), or minus the squared
        robust distance of (magnitude, shape) ("magnitude_shape").

        %(fitted_curves)s

        Returns
        -------
        scores : ndarray of shape (n_samples,)
            Larger is more typical of the training curves.
        """
        check_is_fitted(self)
        X = self._validate(X, reset=False)
        return self._scores(X, time_weights(self.grid_, X.shape[1]))

    @fill_doc
    def decision_function(self, X):
        """``score_samples(X) - offset_``: negative for outliers.

        %(fitted_curves)s

        Returns
        -------
        decision : ndarray of shape (n_samples,)
            Negative for outliers, 0 on the threshold ``offset_``.
        """
        return self.score_samples(X) - self.offset_

    @fill_doc
    def predict(self, X):
        """1 for typical curves, -1 for outliers.

        %(fitted_curves)s

        Returns
        -------
        labels : ndarray of shape (n_samples,)
            1 (typical) or -1 (outlier), the sign of :meth:`decision_function`
            (0 counts as typical).
        """
        decision = self.decision_function(X)
        return np.where(decision < 0, -1, 1)

    @fill_doc
    def outlier_kind(self, X):
        """How each curve is unusual.

        %(fitted_curves)s

        Returns
        -------
        kinds : ndarray of str of shape (n_samples,)
            "inlier" for curves :meth:`predict` calls typical. For outliers:
            "magnitude" (the curve lies away from the others: shifted,
            partly shifted, or with a peak), "shape" (it moves differently),
            "magnitude and shape", or "unspecified" (method="depth", which
            does not tell). With "magnitude_shape", a part counts when its
            own robust z-score squared exceeds the 0.993 quantile of the
            chi-square distribution with 1 degree of freedom, or, when
            neither does, the larger part counts.
        """
        check_is_fitted(self)
        X = self._validate(X, reset=False)
        weights = time_weights(self.grid_, X.shape[1])
        points = self._ms_points(X, weights) if self.method == "magnitude_shape" else None
        return self._kinds(X, self._scores(X, weights, points) - self.offset_ < 0,
                           weights, points)

    @fill_doc
    def outlyingness(self, X):
        """Magnitude and shape outlyingness relative to the training curves.

        %(fitted_curves)s

        Returns
        -------
        magnitude : ndarray of shape (n_samples,)
            Mean directional outlyingness (signed, in robust SD units of the
            training curves).
        shape : ndarray of shape (n_samples,)
            Variation of directional outlyingness.
        """
        check_is_fitted(self)
        X = self._validate(X, reset=False)
        return self._outlyingness(X, time_weights(self.grid_, X.shape[1]))

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = False
        return tags
