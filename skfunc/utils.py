"""Utilities for working with skfunc's estimators."""

from ._batches import partial_fit_batches

__all__ = ["all_estimators", "partial_fit_batches"]

#: the public modules that export estimators
_ESTIMATOR_MODULES = ("preprocessing", "decomposition", "linear_model", "alignment",
                      "outliers")


def all_estimators():
    """Every public skfunc estimator, as scikit-learn's ``all_estimators`` lists
    its own.

    Returns
    -------
    estimators : list of (str, type) tuples
        ``(name, class)`` of each estimator class exported by
        :mod:`skfunc.preprocessing`, :mod:`skfunc.decomposition`,
        :mod:`skfunc.linear_model`, :mod:`skfunc.alignment` and :mod:`skfunc.outliers`,
        sorted by name.

    Examples
    --------
    >>> from skfunc.utils import all_estimators
    >>> dict(all_estimators())["CurveSmoother"].__name__
    'CurveSmoother'
    """
    import inspect
    from importlib import import_module

    from sklearn.base import BaseEstimator

    found = {}
    for name in _ESTIMATOR_MODULES:
        module = import_module(f"skfunc.{name}")
        for attr in module.__all__:
            obj = getattr(module, attr)
            if inspect.isclass(obj) and issubclass(obj, BaseEstimator):
                found[attr] = obj
    return sorted(found.items())
