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
through a temporary file in the same folder that is moved into place, so an
interrupted save leaves no half-written model behind. Without ``force`` the
move is exclusive (a hard link, which fails if the target exists): of two
processes saving to the same new path at once, exactly one succeeds and the
other gets ``FileExistsError``; nothing is silently replaced.
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
    >>> round(float(load_model(path).predict([[2]])[0]), 6)  # ridge slope 1/3, intercept 1/3
    1.0
    """
    path = Path(path)
    if not isinstance(compress, int) or isinstance(compress, bool) or not (
        1 <= compress <= 9
    ):
        raise ValueError(f"compress must be an integer from 1 to 9; got {compress!r}.")
    _check_target(path, force=force, probe=False)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part",
                                   dir=path.parent)
    except OSError as exc:
        raise _unwritable(path, exc) from exc
    os.close(fd)
    try:
        try:
            if _is_skops(path):
                _import_skops().dump(model, tmp, compression=8)  # zipfile.ZIP_DEFLATED
            else:
                joblib.dump(model, tmp, compress=("zlib", compress))
        except OSError as exc:
            raise OSError(f"Cannot write {path}: {exc.strerror or exc}.") from exc
        if force:
            os.replace(tmp, path)
        else:
            _move_exclusive(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)
    return path


def _check_target(path, *, force=False, probe=True):
    """Check that a file can be written at ``path`` before any work is done.

    Raises ``IsADirectoryError``, ``FileNotFoundError`` (no such folder),
    ``FileExistsError`` (exists and not ``force``) or ``PermissionError``
    (the folder refuses new files: found by creating and removing an empty
    probe file when ``probe``), each naming ``path`` itself.
    """
    path = Path(path)
    if path.is_dir():
        raise IsADirectoryError(f"{path} is a folder; give a file name to save to.")
    if path.exists() and not force:  # early and cheap; the exclusive move decides
        _refuse_existing(path)
    if not path.parent.exists():
        raise FileNotFoundError(f"The folder {path.parent} does not exist.")
    if probe:
        try:
            fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".probe",
                                        dir=path.parent)
        except OSError as exc:
            raise _unwritable(path, exc) from exc
        os.close(fd)
        os.remove(name)
    return path


def _unwritable(path, exc):
    cls = exc.__class__ if isinstance(exc, PermissionError) else OSError
    return cls(
        f"Cannot write {path}: the folder {path.parent} does not accept new files "
        f"({exc.strerror or exc})."
    )


def _refuse_existing(path):
    raise FileExistsError(
        f"{path} already exists; not overwriting it. Choose another path or "
        "pass force=True (--force on the command line) to replace it."
    )


def _move_exclusive(tmp, path):
    """Put the finished file ``tmp`` at ``path`` unless ``path`` exists, as
    one atomic step: a hard link fails if the target exists."""
    try:
        os.link(tmp, path)
        return
    except FileExistsError:
        exists = True
    except OSError:  # a file system without hard links: reserve the name first
        try:
            os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY))
            exists = False
        except FileExistsError:
            exists = True
    if exists:
        _refuse_existing(path)
    os.replace(tmp, path)


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
        (scikit-learn, numpy, builtins) and skfunc's own classes, such as
        ``["mypackage.MyTransformer"]``. A file that needs any other type is
        refused, naming the types.

    Returns
    -------
    model : object
        An object with a ``fit`` method (an estimator or pipeline).

    Raises
    ------
    ModelFileError
        The file is truncated, corrupted or holds no model (for example a
        dict or an array).
    TypeError
        ``trusted`` is a single string instead of a list of strings.
    """
    path = Path(path)
    trusted = _check_trusted(trusted)
    if not path.is_file():
        raise FileNotFoundError(f"No model file at {path}.")
    try:
        model = _load_skops(path, trusted) if _is_skops(path) else joblib.load(path)
    except (ModelFileError, ImportError):
        raise
    except Exception as exc:  # every reader error means the same to the user
        raise ModelFileError(
            f"Could not load a model from {path}: the file is truncated, corrupted "
            f"or not a model saved by skfunc ({type(exc).__name__}: {exc})."
        ) from exc
    if not callable(getattr(model, "fit", None)):
        raise ModelFileError(
            f"{path} holds a {type(model).__name__}, not a model (an estimator or "
            "pipeline with a fit method)."
        )
    return model


def _check_trusted(trusted):
    if isinstance(trusted, (str, bytes)):
        raise TypeError(
            f"trusted must be a list of type names, such as [{trusted!r}]; got the "
            "string itself, which would be read one character at a time."
        )
    try:
        names = list(trusted)
    except TypeError:
        raise TypeError(
            f"trusted must be a list of type names; got {type(trusted).__name__}."
        ) from None
    bad = [name for name in names if not isinstance(name, str)]
    if bad:
        raise TypeError(
            f"trusted must hold type names as strings; got {bad[0]!r}."
        )
    return names


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
