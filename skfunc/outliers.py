"""Unusual curves: depth, outlyingness and outlier detection.

* :func:`band_depth`, :func:`modified_band_depth`, :func:`integrated_depth`
  -- how central each curve is within a reference sample.
* :func:`magnitude_shape_outlyingness` -- how far (magnitude) and how
  differently (shape) each curve departs from the pointwise median.
* :class:`CurveOutlierDetector` -- scikit-learn's outlier-detector interface
  over depth trimming, the functional boxplot rule and magnitude-shape
  outlyingness, saying how each flagged curve is unusual.
"""

from ._curve_outliers import CurveOutlierDetector
from ._depth import (
    band_depth,
    integrated_depth,
    magnitude_shape_outlyingness,
    modified_band_depth,
)

__all__ = [
    "CurveOutlierDetector",
    "band_depth",
    "integrated_depth",
    "magnitude_shape_outlyingness",
    "modified_band_depth",
]
