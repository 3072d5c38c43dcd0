"""Streaming first and second moments of rows: count, mean, centered scatter.

What a principal-component fit needs from the data is the count ``n``, the
mean ``m`` and the centered scatter ``S = sum_i (z_i - m)(z_i - m)'`` of the
rows ``z_i`` (K values each). They are computed per chunk and merged exactly,
so an in-memory fit, ``partial_fit`` over chunks and a fit over the blocks
of a distributed array give the same result, in memory bounded by one chunk
plus K x K.

Each chunk is centered at its own mean before its scatter is formed, and
chunks are merged with the pairwise update of Chan, Golub and LeVeque, which
avoids the cancellation of ``sum z z' - n m m'`` when the mean is large
compared with the spread (curves of a kiln temperature near 1200 °C varying
by a few degrees, say).

References
----------
Chan, T. F., Golub, G. H. and LeVeque, R. J. (1979). Updating formulae and a
pairwise algorithm for computing sample variances. Technical report
STAN-CS-79-773, Stanford University.
"""

import numpy as np

from ._blocks import row_blocks


def moments(X, operator_T=None, chunk_size=None):
    """Count, mean and centered scatter of the rows of ``X`` (or ``X @ operator_T``).

    Parameters
    ----------
    X : array-like of shape (n, m)
        Rows; any float dtype, converted to float64 one chunk at a time.
    operator_T : ndarray of shape (m, K), default=None
        Linear map applied to each row first; None for the rows themselves.
    chunk_size : int, default=None
        Rows per chunk; None for :data:`skfunc._blocks.CHUNK_VALUES` values.

    Returns
    -------
    stats : dict
        ``{"n": int, "mean": (K,), "scatter": (K, K)}``; combine the
        statistics of disjoint rows with :func:`merge_moments`.
    """
    parts = []
    for rows in row_blocks(*X.shape, chunk_size):
        chunk = np.asarray(X[rows], dtype=np.float64)
        if operator_T is not None:
            chunk = chunk @ operator_T
        mean = chunk.mean(axis=0)
        centered = chunk - mean
        scatter = centered.T @ centered
        parts.append({"n": chunk.shape[0], "mean": mean, "scatter": scatter})
        if len(parts) == 2:
            parts = [merge_moments(*parts)]
    return parts[0]


def merge_moments(*stats):
    """Moments of the union of disjoint sets of rows (Chan et al., 1979)."""
    out = dict(stats[0])
    for other in stats[1:]:
        n = out["n"] + other["n"]
        delta = other["mean"] - out["mean"]
        share = other["n"] / n
        out = {
            "n": n,
            "mean": out["mean"] + share * delta,
            "scatter": out["scatter"] + other["scatter"]
            + np.outer(delta, delta) * (out["n"] * share),
        }
    return out


def scale_moments(stats, scale):
    """Moments of the rows multiplied elementwise by ``scale`` (K,)."""
    return {
        "n": stats["n"],
        "mean": stats["mean"] * scale,
        "scatter": stats["scatter"] * np.outer(scale, scale),
    }
