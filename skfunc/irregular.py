"""Curves as they arrive: irregular, sparse and variable-length observations.

Build the NaN-padded matrix (one row per sample, one column per time, NaN
where a sample was not observed) that every skfunc estimator reads, from a
long table of observations or from per-sample arrays of different lengths.
Which estimators accept which patterns of missing values is listed in the
user guide (:doc:`/irregular`).
"""

from ._irregular import curves_from_arrays, curves_from_table

__all__ = ["curves_from_arrays", "curves_from_table"]
