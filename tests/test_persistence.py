"""Saving and loading: pipelines with skfunc steps load trusting only skfunc;
damaged files and overwrites fail clearly. (The round trip of every exported
estimator is in tests/test_common.py.)
"""

import threading

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


def test_two_concurrent_saves_without_force_one_fails(tmp_path, monkeypatch):
    # Both saves pass the early "exists?" check before either file is in place
    # (the barrier inside the writer makes sure of it); the exclusive move into
    # place must then let exactly one succeed and keep its model whole.
    import joblib

    import skfunc.persistence as persistence

    barrier = threading.Barrier(2, timeout=30)
    real_dump = joblib.dump

    def dump_after_both_checked(*args, **kwargs):
        barrier.wait()
        return real_dump(*args, **kwargs)

    monkeypatch.setattr(persistence.joblib, "dump", dump_after_both_checked)
    X, y = smooth_curves(np.linspace(0, 1, 41))
    path = tmp_path / "model.joblib"
    outcomes = {}

    def save(alpha):
        try:
            save_model(Ridge(alpha=alpha).fit(X, y), path)
            outcomes[alpha] = "saved"
        except FileExistsError as exc:
            outcomes[alpha] = exc

    threads = [threading.Thread(target=save, args=(a,)) for a in (1.0, 2.0)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(60)
    saved = [a for a, outcome in outcomes.items() if outcome == "saved"]
    failed = [o for o in outcomes.values() if isinstance(o, FileExistsError)]
    assert len(saved) == 1 and len(failed) == 1, outcomes
    assert "already exists" in str(failed[0]) and str(path) in str(failed[0])
    assert load_model(path).alpha == saved[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]  # no temp left


def test_unwritable_folder_is_named_by_the_target(tmp_path, monkeypatch):
    # A folder that refuses new files (simulated: the tests may run as root, who
    # may write anywhere) is reported naming the model file, not a temporary one.
    import skfunc.persistence as persistence

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(tmp_path / ".m.part"))

    monkeypatch.setattr(persistence.tempfile, "mkstemp", refuse)
    path = tmp_path / "model.joblib"
    with pytest.raises(PermissionError) as info:
        save_model(Ridge(), path)
    message = str(info.value)
    assert f"Cannot write {path}" in message and "Permission denied" in message
    assert ".part" not in message
    assert not path.exists()


@pytest.mark.parametrize("suffix", [".joblib", ".skops"])
@pytest.mark.parametrize("content", [{"coef": np.ones(3)}, np.ones(3), [1, 2]],
                         ids=["dict", "array", "list"])
def test_file_without_a_model_is_a_model_file_error(tmp_path, suffix, content):
    # the documented promise: a file that holds no model raises ModelFileError
    path = tmp_path / f"data{suffix}"
    if suffix == ".skops":
        sio.dump(content, path)
    else:
        import joblib

        joblib.dump(content, path)
    with pytest.raises(ModelFileError, match=f"holds a {type(content).__name__}, not a model"):
        load_model(path)


def test_trusted_must_be_a_list_of_names(tmp_path):
    X, y = smooth_curves(np.linspace(0, 1, 41))
    path = save_model(NotTrusted().fit(X, y), tmp_path / "other.skops")
    name = sio.get_untrusted_types(file=path)[0]
    with pytest.raises(TypeError, match=r"trusted must be a list of type names, such as \["):
        load_model(path, trusted=name)
    with pytest.raises(TypeError, match="as strings; got 3"):
        load_model(path, trusted=[3])
    assert isinstance(load_model(path, trusted=(name,)), NotTrusted)
