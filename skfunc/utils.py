"""Utilities for working with skfunc's estimators."""

from ._batches import partial_fit_batches

__all__ = ["all_estimators", "partial_fit_batches"]


def all_estimators():
    """Every public skfunc estimator, as scikit-learn's ``all_estimators`` lists
    its own.

    Returns
    -------
    estimators : list of (str, type) tuples
        ``(name, class)`` of each estimator class (a scikit-learn
        ``BaseEstimator``) in the ``__all__`` of a public skfunc module,
        sorted by name.

    Examples
    --------
    >>> from skfunc.utils import all_estimators
    >>> dict(all_estimators())["CurveSmoother"].__name__
    'CurveSmoother'
    """
    import inspect
    import pkgutil
    from importlib import import_module

    from sklearn.base import BaseEstimator

    import skfunc

    found = {}
    for info in pkgutil.iter_modules(skfunc.__path__):
        if info.name.startswith("_"):
            continue
        module = import_module(f"skfunc.{info.name}")
        for attr in getattr(module, "__all__", ()):
            obj = getattr(module, attr)
            if inspect.isclass(obj) and issubclass(obj, BaseEstimator):
                found[attr] = obj
    return sorted(found.items())
