"""Fitting data suited to any estimator in ``skfunc.ESTIMATORS``, read from its
parameters: a ``response_grid`` means curves out, no ``grid`` means scalars
in. Shared by the persistence tests and the bad-input battery."""

import numpy as np
from sklearn.base import is_classifier, is_regressor

from skfunc.datasets import make_smooth_regression


def curves():
    X, y, _ = make_smooth_regression(60, grid=41, noise=0.1, random_state=0)
    return X, y


def fit_data(estimator):
    """``(X, y)`` for ``estimator.fit``; y is None for transformers."""
    X, y = curves()
    params = estimator.get_params()
    if "response_grid" in params:
        if "grid" not in params:
            return np.random.default_rng(0).normal(size=(X.shape[0], 3)), X
        return X, np.cumsum(X, axis=1)[:, ::2]
    if is_classifier(estimator):
        return X, (y > np.median(y)).astype(int)
    if is_regressor(estimator):
        return X, y
    return X, None
