"""FunctionalRidgeCV: every alpha's GCV, leave-one-out and K-fold criterion
against brute force and scikit-learn."""

import numpy as np
import pytest
from _linear_model_data import curve_scores, curves_on, integral_with_beta
from sklearn.linear_model import RidgeCV
from sklearn.model_selection import GridSearchCV, KFold

from skfunc import FunctionalRidge, FunctionalRidgeCV
from skfunc.preprocessing import BasisFeatures

T = np.linspace(0, 1, 51)
ALPHAS = np.logspace(-7, 1, 9)


@pytest.fixture
def data(rng):
    scores = curve_scores(25, rng)
    X = curves_on(scores, T)
    y = integral_with_beta(scores) + 0.2 * rng.normal(size=25)
    return X, y


def test_gcv_equals_brute_force(data):
    # Source: GCV(alpha) = (RSS / n) / (1 - tr(H) / n)^2 (Craven and Wahba,
    # 1979), with RSS from a refit at each alpha and tr(H) from the hat
    # matrix assembled column by column: column j is the fit to the j-th unit
    # vector (the smoother is linear in y).
    X, y = data
    n = len(y)
    est = FunctionalRidgeCV(alphas=ALPHAS, n_basis=12).fit(X, y)
    for alpha, score in zip(ALPHAS, est.criterion_, strict=True):
        fit = FunctionalRidge(alpha=alpha, n_basis=12)
        rss = np.sum((y - fit.fit(X, y).predict(X)) ** 2)
        hat = np.column_stack([fit.fit(X, e).predict(X) for e in np.eye(n)])
        gcv = (rss / n) / (1 - np.trace(hat) / n) ** 2
        np.testing.assert_allclose(score, gcv, rtol=1e-8)
    assert est.alpha_ == ALPHAS[np.argmin(est.criterion_)]
    assert est.best_score_ == -est.criterion_.min()


@pytest.mark.parametrize("weighted", [False, True])
def test_leave_one_out_equals_brute_force(data, rng, weighted):
    # Source: the definition of leave-one-out cross-validation (Stone, 1974):
    # refit without curve i, predict it; weighted mean of the squared errors.
    X, y = data
    n = len(y)
    w = rng.uniform(0.5, 2.0, size=n) if weighted else np.ones(n)
    est = FunctionalRidgeCV(alphas=ALPHAS, criterion="loo", n_basis=12)
    est.fit(X, y, sample_weight=w)
    for alpha, score in zip(ALPHAS[::2], est.criterion_[::2], strict=True):
        errors = np.empty(n)
        for i in range(n):
            keep = np.arange(n) != i
            fit = FunctionalRidge(alpha=alpha, n_basis=12)
            fit.fit(X[keep], y[keep], sample_weight=w[keep])
            errors[i] = y[i] - fit.predict(X[i : i + 1])[0]
        np.testing.assert_allclose(score, w @ errors**2 / w.sum(), rtol=1e-8)


def test_leave_one_out_equals_sklearn_ridgecv(data):
    # Source: sklearn.linear_model.RidgeCV's efficient leave-one-out squared
    # errors (store_cv_results) on BasisFeatures output; identity penalty in
    # the orthonormal Fourier basis makes the two problems identical.
    X, y = data
    Z = BasisFeatures(basis="fourier", n_basis=7).fit_transform(X)
    ours = FunctionalRidgeCV(
        alphas=ALPHAS, criterion="loo", basis="fourier", n_basis=7, penalty_order=0
    ).fit(X, y)
    ref = RidgeCV(alphas=ALPHAS, store_cv_results=True).fit(Z, y)
    np.testing.assert_allclose(ours.criterion_, ref.cv_results_.mean(axis=0), rtol=1e-8)
    assert ours.alpha_ == ref.alpha_


def test_kfold_equals_grid_search(data):
    # Source: sklearn.model_selection.GridSearchCV over FunctionalRidge with
    # the same folds and the mean squared error scorer.
    X, y = data
    folds = KFold(5, shuffle=True, random_state=0)
    ours = FunctionalRidgeCV(alphas=ALPHAS, cv=folds, n_basis=12).fit(X, y)
    search = GridSearchCV(
        FunctionalRidge(n_basis=12),
        {"alpha": ALPHAS},
        cv=folds,
        scoring="neg_mean_squared_error",
    ).fit(X, y)
    np.testing.assert_allclose(
        ours.criterion_, -search.cv_results_["mean_test_score"], rtol=1e-8
    )
    assert ours.alpha_ == search.best_params_["alpha"]
    np.testing.assert_allclose(
        ours.predict(X), search.best_estimator_.predict(X), rtol=1e-10
    )


def test_multiple_targets_average_the_criterion(data):
    # The criterion for several targets is the mean of the per-target ones.
    X, y = data
    Y = np.column_stack([y, y**2])
    both = FunctionalRidgeCV(alphas=ALPHAS, criterion="loo", n_basis=10).fit(X, Y)
    each = [
        FunctionalRidgeCV(alphas=ALPHAS, criterion="loo", n_basis=10)
        .fit(X, col)
        .criterion_
        for col in Y.T
    ]
    np.testing.assert_allclose(both.criterion_, np.mean(each, axis=0), rtol=1e-10)
    assert both.coef_function_.shape == (2, T.size)


def test_default_alphas(data):
    X, y = data
    est = FunctionalRidgeCV().fit(X, y)
    assert est.alphas_.shape == (25,) and np.all(est.alphas_ > 0)
    assert np.all(np.diff(np.log(est.alphas_)) > 0)
    assert est.alpha_ in est.alphas_


@pytest.mark.parametrize(
    "alphas", [[1.0, 0.0], [-1.0, 1.0], [np.nan], [], [[1.0, 2.0]]]
)
def test_bad_alphas(data, alphas):
    X, y = data
    with pytest.raises(ValueError, match="alphas must be"):
        FunctionalRidgeCV(alphas=alphas).fit(X, y)


def test_bad_criterion(data):
    X, y = data
    with pytest.raises(ValueError, match="criterion"):
        FunctionalRidgeCV(criterion="aic").fit(X, y)


def test_alpha_per_target_equals_separate_fits(data):
    # Each target's alpha and fit equal a FunctionalRidgeCV fit on that
    # target alone (the same convention as RidgeCV(alpha_per_target=True)).
    X, y = data
    Y = np.column_stack([y, 5 * y**2 + 1])
    both = FunctionalRidgeCV(alphas=ALPHAS, alpha_per_target=True, n_basis=10).fit(X, Y)
    for j, col in enumerate(Y.T):
        one = FunctionalRidgeCV(alphas=ALPHAS, n_basis=10).fit(X, col)
        assert both.alpha_[j] == one.alpha_
        np.testing.assert_allclose(both.criterion_[j], one.criterion_, rtol=1e-10)
        np.testing.assert_allclose(
            both.coef_function_[j], one.coef_function_, rtol=1e-8
        )
        np.testing.assert_allclose(both.edf_[j], one.edf_, rtol=1e-10)
        np.testing.assert_allclose(
            both.confidence_band()[1][j], one.confidence_band()[1], rtol=1e-8
        )
