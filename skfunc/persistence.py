"""Saving and loading fitted models, safely.

Two formats, chosen by the file name:

* ``*.skops`` -- :mod:`skops.io` (optional dependency). Loading inspects the
  file and builds only types it trusts: scikit-learn's and numpy's by
  skops' defaults, skfunc's own estimators, and whatever you list in
  ``trusted``. Use this format for models you receive from others.
* anything else -- :mod:`joblib` (a pickle, zlib-compressed so that a
  truncated or corrupted file fails its checksum). **Loading a pickle or
  joblib file runs code stored in it**: load only files you made yourself or
  fully trust.

skfunc estimators keep only numpy arrays and plain Python values as fitted
state, so both formats store them compactly and ``skops`` needs to trust no
helper objects.

Writing never replaces an existing file unless ``force=True``, and goes
through a temporary file in the same folder that is renamed into place, so
an interrupted save leaves no half-written model behind.
"""

import importlib
import os
import tempfile
from pathlib import Path

import joblib
from sklearn.base import BaseEstimator

__all__ = ["ModelFileError", "save_model", "load_model", "skfunc_types"]

#: file suffix that selects the skops format
SKOPS_SUFFIX = ".skops"


class ModelFileError(ValueError):
    """A model file could not be read: truncated, corrupted or not a model."""


def _is_skops(path):
    return Path(path).suffix.lower() == SKOPS_SUFFIX


def _import_skops():
    try:
        import skops.io as sio
    except ImportError as exc:
        raise ImportError(
            "Saving or loading '*.skops' files needs the optional package skops "
            "(pip install skops); or use a '.joblib' file for your own models."
        ) from exc
    return sio


def save_model(model, path, *, force=False, compress=3):
    """Save a fitted model to ``path`` (skops for ``*.skops``, else joblib).

    Parameters
    ----------
    model : object
        The fitted estimator or pipeline.
    path : str or path-like
        Destination file. The suffix ``.skops`` selects :mod:`skops.io`;
        anything else is written with :func:`joblib.dump`.
    force : bool, default=False
        Replace ``path`` if it exists. Without it an existing file is an
        error and is left untouched.
    compress : int from 1 to 9, default=3
        zlib compression level of joblib files. Compression also stores a
        checksum, so a damaged file is detected at load time.

    Returns
    -------
    path : pathlib.Path
        The file written.

    Examples
    --------
    >>> import os, tempfile
    >>> from sklearn.linear_model import Ridge
    >>> from skfunc.persistence import save_model, load_model
    >>> model = Ridge().fit([[0], [1]], [0, 1])
    >>> path = save_model(model, os.path.join(tempfile.mkdtemp(), "m.joblib"))
    >>> float(load_model(path).predict([[2]])[0]) > 1
    True
    """
    path = Path(path)
    if not isinstance(compress, int) or isinstance(compress, bool) or not (
        1 <= compress <= 9
    ):
        raise ValueError(f"compress must be an integer from 1 to 9; got {compress!r}.")
    if path.is_dir():
        raise IsADirectoryError(f"{path} is a folder; give a file name to save to.")
    if path.exists() and not force:
        raise FileExistsError(
            f"{path} already exists; not overwriting it. Choose another path or "
            "pass force=True (--force on the command line) to replace it."
        )
    if not path.parent.exists():
        raise FileNotFoundError(f"The folder {path.parent} does not exist.")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    try:
        if _is_skops(path):
            _import_skops().dump(model, tmp, compression=8)  # zipfile.ZIP_DEFLATED
        else:
            joblib.dump(model, tmp, compress=("zlib", compress))
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)
    return path


def _is_skfunc_estimator(name):
    """True when ``name`` is ``skfunc.<module>.<Class>`` of an estimator class
    defined in that skfunc module (nothing else from skfunc is trusted)."""
    module, _, attr = name.rpartition(".")
    if not module.startswith("skfunc.") or not attr:
        return False
    try:
        obj = getattr(importlib.import_module(module), attr)
    except (ImportError, AttributeError):
        return False
    return (
        isinstance(obj, type)
        and obj.__module__ == module
        and issubclass(obj, BaseEstimator)
    )


def skfunc_types(path):
    """The skfunc estimator classes a ``*.skops`` file asks to build.

    These are the types :func:`load_model` trusts besides skops' defaults.
    """
    sio = _import_skops()
    return [t for t in sio.get_untrusted_types(file=path) if _is_skfunc_estimator(t)]


def load_model(path, *, trusted=()):
    """Load a model saved by :func:`save_model`.

    Parameters
    ----------
    path : str or path-like
        A ``*.skops`` file (loaded with :func:`skops.io.load`) or a joblib
        file. **Joblib and pickle files run code when loaded**: load them only
        from sources you trust; prefer ``*.skops`` for anything else.
    trusted : sequence of str, default=()
        For ``*.skops`` files: type names to trust besides skops' defaults
        (scikit-learn, numpy, builtins) and skfunc's own classes. A file that
        needs any other type is refused, naming the types.

    Returns
    -------
    model : object

    Raises
    ------
    ModelFileError
        The file is truncated, corrupted or holds no model.
    """
    path = Path(path)
    if not path.is_file():
        raise FileNotFoundError(f"No model file at {path}.")
    try:
        if _is_skops(path):
            return _load_skops(path, list(trusted))
        return joblib.load(path)
    except (ModelFileError, ImportError):
        raise
    except Exception as exc:  # every reader error means the same to the user
        raise ModelFileError(
            f"Could not load a model from {path}: the file is truncated, corrupted "
            f"or not a model saved by skfunc ({type(exc).__name__}: {exc})."
        ) from exc


def _load_skops(path, trusted):
    sio = _import_skops()
    needed = sio.get_untrusted_types(file=path)
    allowed = set(trusted) | {t for t in needed if _is_skfunc_estimator(t)}
    refused = sorted(set(needed) - allowed)
    if refused:
        raise ModelFileError(
            f"{path} needs types that are not trusted: {', '.join(refused)}. If "
            "you trust the file's source, pass them in trusted=[...]."
        )
    return sio.load(path, trusted=sorted(set(needed)))
