"""Aligning curves in time (registration): shifts, landmarks and elastic
warps, as scikit-learn transformers."""

from ._elastic_aligner import ElasticAligner, amplitude_distance, fisher_rao_distance
from ._landmark_aligner import LandmarkAligner
from ._shift_aligner import ShiftAligner

__all__ = [
    "ElasticAligner",
    "LandmarkAligner",
    "ShiftAligner",
    "amplitude_distance",
    "fisher_rao_distance",
]
