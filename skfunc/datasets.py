"""Data generators with a known truth: the kiln-firing scenario and test curves.

Every number these functions produce is **invented**. The kiln scenario is a
made-up ceramics plant, meant to look and behave like process data so that the
examples and the demo read naturally; it is not a model of any real kiln, clay
body or standard, and nothing learnt from it applies to a real process.

The underlying curves are smooth functions of continuous time, evaluated on
whatever grid is asked for, and every integral that defines a response is
computed on a fixed fine grid (or exactly), independently of that grid. The
same ``random_state`` therefore gives the same underlying curves and the same
responses at any resolution, which is what resolution-invariance tests need.
"""

from ._datasets import make_brownian_paths, make_kiln_firing, make_smooth_regression

__all__ = ["make_kiln_firing", "make_smooth_regression", "make_brownian_paths"]
