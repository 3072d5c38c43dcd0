"""Saving and loading: pipelines with skfunc steps load trusting only skfunc;
damaged files and overwrites fail clearly. (The round trip of every exported
estimator is in tests/test_common.py.)
"""

import numpy as np
import pytest
from conftest import smooth_curves
from sklearn.base import clone
from sklearn.linear_model import Ridge
from sklearn.pipeline import make_pipeline

from skfunc import BasisFeatures
from skfunc.persistence import (
    ModelFileError,
    _is_skfunc_estimator,
    load_model,
    save_model,
)

sio = pytest.importorskip("skops.io")



def test_pipeline_with_skfunc_step_loads_trusting_only_skfunc(tmp_path):
    X, y = smooth_curves(np.linspace(0, 1, 41))
    pipe = make_pipeline(clone(BasisFeatures()), Ridge()).fit(X, y)
    path = save_model(pipe, tmp_path / "pipe.skops")
    loaded = load_model(path)
    np.testing.assert_array_equal(loaded.predict(X), pipe.predict(X))


def test_only_skfunc_estimator_classes_are_trusted():
    assert _is_skfunc_estimator("skfunc._basis_features.BasisFeatures")
    assert not _is_skfunc_estimator("skfunc.persistence.joblib")
    assert not _is_skfunc_estimator("skfunc.datasets.make_kiln_firing")
    assert not _is_skfunc_estimator("skfunc.persistence.ModelFileError")
    assert not _is_skfunc_estimator("skfunc_evil.Thing")
    assert not _is_skfunc_estimator("builtins.eval")


class NotTrusted(Ridge):
    """A scikit-learn subclass outside skfunc: skops must not trust it."""


def test_skops_refuses_untrusted_types(tmp_path):
    X, y = smooth_curves(np.linspace(0, 1, 41))
    path = save_model(NotTrusted().fit(X, y), tmp_path / "other.skops")
    with pytest.raises(ModelFileError, match="NotTrusted.*trusted=") as info:
        load_model(path)
    assert "not trusted" in str(info.value)
    name = sio.get_untrusted_types(file=path)
    assert isinstance(load_model(path, trusted=name), NotTrusted)


@pytest.mark.parametrize("suffix", [".joblib", ".skops"])
def test_existing_file_is_not_overwritten_without_force(tmp_path, suffix):
    X, y = smooth_curves(np.linspace(0, 1, 41))
    path = tmp_path / f"model{suffix}"
    path.write_bytes(b"precious")
    with pytest.raises(FileExistsError, match="force"):
        save_model(Ridge().fit(X, y), path)
    assert path.read_bytes() == b"precious"
    save_model(Ridge(alpha=2.0).fit(X, y), path, force=True)
    assert load_model(path).alpha == 2.0
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]  # no temp left


@pytest.mark.parametrize("suffix", [".joblib", ".skops"])
@pytest.mark.parametrize("damage", ["truncate", "flip", "empty", "text"])
def test_damaged_file_fails_with_clear_error(tmp_path, suffix, damage):
    X, y = smooth_curves(np.linspace(0, 1, 41))
    path = save_model(make_pipeline(clone(BasisFeatures()), Ridge()).fit(X, y),
                      tmp_path / f"model{suffix}")
    data = bytearray(path.read_bytes())
    if damage == "truncate":
        data = data[: len(data) // 2]
    elif damage == "flip":
        middle = len(data) // 2
        data[middle : middle + 8] = bytes(b ^ 0xFF for b in data[middle : middle + 8])
    elif damage == "empty":
        data = b""
    else:
        data = b"this is not a model\n"
    path.write_bytes(bytes(data))
    with pytest.raises(ModelFileError, match="truncated, corrupted"):
        load_model(path)


def test_bad_arguments(tmp_path):
    with pytest.raises(FileNotFoundError, match="No model file"):
        load_model(tmp_path / "missing.joblib")
    with pytest.raises(FileNotFoundError, match="does not exist"):
        save_model(Ridge(), tmp_path / "no" / "such" / "m.joblib")
    with pytest.raises(IsADirectoryError, match="folder"):
        save_model(Ridge(), tmp_path)
    with pytest.raises(ValueError, match="compress must be an integer from 1 to 9"):
        save_model(Ridge(), tmp_path / "m.joblib", compress=0)
