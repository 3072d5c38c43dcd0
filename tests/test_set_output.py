"""set_output(transform="polars") behaves as transform="pandas" does.

scikit-learn's set_output contract: the same values as the default numpy
output, with columns named by get_feature_names_out(); a curve output's
labels are its grid points, so the next step of a pipeline reads the grid
from them whichever DataFrame library carries them.
"""

import numpy as np
import pytest

import skfunc
from skfunc.datasets import make_kiln_firing

pytest.importorskip("pandas")
polars = pytest.importorskip("polars")

TRANSFORMERS = [
    skfunc.BasisFeatures(n_basis=12),
    skfunc.CurveSmoother(n_basis=20, eval_points=np.arange(0.0, 600.0, 25.0)),
    skfunc.FunctionalPCA(n_components=3),
]


def _kiln():
    kiln = make_kiln_firing(25, grid=np.arange(0, 600, 10), dropout_fraction=0,
                            random_state=0)
    return kiln.data, kiln.grid


@pytest.mark.parametrize("transformer", TRANSFORMERS, ids=lambda e: type(e).__name__)
@pytest.mark.parametrize("library", ["pandas", "polars"])
def test_dataframe_output_matches_numpy_output(transformer, library):
    X, minutes = _kiln()
    plain = transformer.set_params(grid=minutes).set_output(transform="default")
    expected = plain.fit_transform(X)
    frame = transformer.set_output(transform=library).fit(X).transform(X)
    module = polars if library == "polars" else pytest.importorskip("pandas")
    assert isinstance(frame, module.DataFrame)
    assert list(frame.columns) == list(transformer.get_feature_names_out())
    np.testing.assert_allclose(frame.to_numpy(), expected)


@pytest.mark.parametrize("library", ["pandas", "polars"])
def test_pipeline_reads_the_grid_from_the_previous_step_labels(library):
    from sklearn.pipeline import make_pipeline

    X, minutes = _kiln()
    out = np.arange(0.0, 600.0, 30.0)
    pipe = make_pipeline(skfunc.CurveSmoother(grid=minutes, eval_points=out),
                         skfunc.FunctionalPCA(n_components=2))
    scores = pipe.set_output(transform=library).fit_transform(X)
    np.testing.assert_allclose(pipe[-1].grid_, out)  # read from the labels
    assert list(scores.columns) == ["functionalpca0", "functionalpca1"]
