import matplotlib
import pytest

matplotlib.use("Agg")


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(0)
