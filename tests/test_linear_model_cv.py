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


@pytest.mark.slow
def test_gcv_equals_brute_force(data):
    # Source: GCV(alpha) = (RSS / n) / (1 - tr(H) / n)^2 (Craven and Wahba,
    # 1979), with RSS from a refit at each alpha and tr(H) from the hat
    # matrix assembled column by column: column j is the fit to the j-th unit
    # vector (the smoother is linear in y).
    X, y = data
    n = len(y)
    est = FunctionalRidgeCV(alpha=ALPHAS, n_basis=12).fit(X, y)
    for alpha, score in zip(ALPHAS, est.criterion_path_, strict=True):
        fit = FunctionalRidge(alpha=alpha, n_basis=12)
        rss = np.sum((y - fit.fit(X, y).predict(X)) ** 2)
        hat = np.column_stack([fit.fit(X, e).predict(X) for e in np.eye(n)])
        gcv = (rss / n) / (1 - np.trace(hat) / n) ** 2
        np.testing.assert_allclose(score, gcv, rtol=1e-8)
    assert est.alpha_ == ALPHAS[np.argmin(est.criterion_path_)]
    assert est.best_score_ == -est.criterion_path_.min()


@pytest.mark.parametrize("weighted", [False, True])
@pytest.mark.slow
def test_leave_one_out_equals_brute_force(data, rng, weighted):
    # Source: the definition of leave-one-out cross-validation (Stone, 1974):
    # refit without curve i, predict it; weighted mean of the squared errors.
    # Weights are frequencies (scikit-learn's meaning), so leaving one
    # observation out removes one unit of a row's weight, or the whole row
    # when its weight is below 1 (weights from 0.5 to 2.5 take both branches).
    X, y = data
    n = len(y)
    w = rng.uniform(0.5, 2.5, size=n) if weighted else np.ones(n)
    est = FunctionalRidgeCV(alpha=ALPHAS, criterion="loo", n_basis=12)
    est.fit(X, y, sample_weight=w)
    # The leverage identity holds the penalty's weight fixed at the full
    # data's; the unit-free alpha scales with the data's largest eigenvalue
    # (docs/bases_and_penalties.rst), so each refit's alpha is rescaled by the
    # ratio of the two scales to keep that weight.
    # (The statistics hold X divided by 2**x_exp, so the path's scale is in
    # those units: times 4**x_exp in the data's.)
    def scale(fit):
        stats = fit._partial_statistics
        return np.ldexp(fit._path(stats, fit._basis())[0].scale, 2 * stats["x_exp"][0])

    full = scale(FunctionalRidge(alpha=1.0, n_basis=12).fit(X, y, sample_weight=w))
    for alpha, score in zip(ALPHAS[::2], est.criterion_path_[::2], strict=True):
        errors = np.empty(n)
        for i in range(n):
            left = w.copy()
            left[i] -= min(w[i], 1.0)
            keep = left > 0
            fit = FunctionalRidge(alpha=alpha, n_basis=12)
            fit.fit(X[keep], y[keep], sample_weight=left[keep])
            fit.set_params(alpha=alpha * full / scale(fit))
            fit.fit(X[keep], y[keep], sample_weight=left[keep])
            errors[i] = y[i] - fit.predict(X[i : i + 1])[0]
        np.testing.assert_allclose(score, w @ errors**2 / w.sum(), rtol=1e-8)


def _duplicated(w):
    """Row indices repeating row i w[i] times (integer frequency weights)."""
    return np.repeat(np.arange(w.size), w.astype(int))


@pytest.mark.filterwarnings("ignore::skfunc._alpha.AlphaAtEdgeWarning")
def test_weighted_criteria_equal_duplicated_rows(data, rng):
    # Source: scikit-learn's meaning of sample_weight (its glossary, common
    # practice): a row of weight k counts as k copies of it, weight 0 as no
    # row. Leave-one-out then leaves out one copy at a time (the other copies
    # stay in the fit), and K-fold keeps a row's copies together in its fold
    # (the folds below map each original row's fold to all of its copies).
    # Before frequency weights, weight 2 moved the leave-one-out criterion by
    # up to 49% and its choice of alpha by three orders of magnitude.
    X, y = data
    w = rng.integers(0, 4, size=len(y)).astype(float)
    rows = _duplicated(w)
    loo = FunctionalRidgeCV(alpha=ALPHAS, criterion="loo", n_basis=12)
    weighted = loo.fit(X, y, sample_weight=w).criterion_path_
    copies = loo.fit(X[rows], y[rows]).criterion_path_
    np.testing.assert_allclose(weighted, copies, rtol=1e-9)
    folds = list(KFold(5, shuffle=True, random_state=0).split(X))
    copy_folds = [(np.flatnonzero(np.isin(rows, train)), np.flatnonzero(np.isin(rows, test)))
                  for train, test in folds]
    weighted = FunctionalRidgeCV(alpha=ALPHAS, cv=folds, n_basis=12).fit(
        X, y, sample_weight=w).criterion_path_
    copies = FunctionalRidgeCV(alpha=ALPHAS, cv=copy_folds, n_basis=12).fit(
        X[rows], y[rows]).criterion_path_
    np.testing.assert_allclose(weighted, copies, rtol=1e-9)


def test_leave_one_out_equals_sklearn_ridgecv(data):
    # Source: sklearn.linear_model.RidgeCV's efficient leave-one-out squared
    # errors (store_cv_results) on BasisFeatures output; identity penalty in
    # the orthonormal Fourier basis makes the two problems identical.
    X, y = data
    # sklearn's alpha is the unit-free alpha times the largest eigenvalue of
    # the centred Z'Z (the definition in docs/bases_and_penalties.rst; Fourier
    # of period 1 is orthonormal on [0, 1]).
    Z = BasisFeatures(basis="fourier", n_basis=7, period=1.0, alpha=0,
                      data_term="integral").fit_transform(X)
    Zc = Z - Z.mean(axis=0)
    top = np.linalg.eigvalsh(Zc.T @ Zc)[-1]
    ours = FunctionalRidgeCV(
        alpha=ALPHAS / top, criterion="loo", basis="fourier", n_basis=7,
        penalty_order=0, period=1.0,
    ).fit(X, y)
    ref = RidgeCV(alphas=ALPHAS, store_cv_results=True).fit(Z, y)
    np.testing.assert_allclose(ours.criterion_path_, ref.cv_results_.mean(axis=0), rtol=1e-8)
    np.testing.assert_allclose(ours.alpha_ * top, ref.alpha_, rtol=1e-12)


@pytest.mark.slow
def test_kfold_equals_grid_search(data):
    # Source: sklearn.model_selection.GridSearchCV over FunctionalRidge with
    # the same folds and the mean squared error scorer.
    X, y = data
    folds = KFold(5, shuffle=True, random_state=0)
    ours = FunctionalRidgeCV(alpha=ALPHAS, cv=folds, n_basis=12).fit(X, y)
    search = GridSearchCV(
        FunctionalRidge(n_basis=12),
        {"alpha": ALPHAS},
        cv=folds,
        scoring="neg_mean_squared_error",
    ).fit(X, y)
    np.testing.assert_allclose(
        ours.criterion_path_, -search.cv_results_["mean_test_score"], rtol=1e-8
    )
    assert ours.alpha_ == search.best_params_["alpha"]
    np.testing.assert_allclose(
        ours.predict(X), search.best_estimator_.predict(X), rtol=1e-10
    )


def test_multiple_targets_average_the_criterion(data):
    # The criterion for several targets is the mean of the per-target ones.
    X, y = data
    Y = np.column_stack([y, y**2])
    both = FunctionalRidgeCV(alpha=ALPHAS, criterion="loo", n_basis=10).fit(X, Y)
    each = [
        FunctionalRidgeCV(alpha=ALPHAS, criterion="loo", n_basis=10)
        .fit(X, col)
        .criterion_path_
        for col in Y.T
    ]
    np.testing.assert_allclose(both.criterion_path_, np.mean(each, axis=0), rtol=1e-10)
    assert both.coef_function_.shape == (2, T.size)


def test_default_alphas(data):
    X, y = data
    est = FunctionalRidgeCV(criterion="loo").fit(X, y)
    assert est.alphas_path_.shape == (25,) and np.all(est.alphas_path_ > 0)
    assert np.all(np.diff(np.log(est.alphas_path_)) > 0)
    assert est.alpha_ in est.alphas_path_
    # from the null space (a straight line and the intercept: 3) to what the
    # data identify (at most the basis and the intercept; these curves come
    # from finitely many scores), within the candidates' margin of 0.05
    assert 3 < est.edf_path_[-1] < 3.1
    assert 10 < est.edf_path_[0] < est.n_basis_ + 1


@pytest.mark.parametrize(
    "alphas", [[1.0, 0.0], [-1.0, 1.0], [np.nan], [], [[1.0, 2.0]], -1.0]
)
def test_bad_alphas(data, alphas):
    X, y = data
    with pytest.raises(ValueError, match="alpha"):
        FunctionalRidgeCV(alpha=alphas).fit(X, y)


def test_bad_criterion(data):
    X, y = data
    with pytest.raises(ValueError, match="criterion"):
        FunctionalRidgeCV(criterion="aic").fit(X, y)


def test_alpha_per_target_equals_separate_fits(data):
    # Each target's alpha and fit equal a FunctionalRidgeCV fit on that
    # target alone (the same convention as RidgeCV(alpha_per_target=True)).
    X, y = data
    Y = np.column_stack([y, 5 * y**2 + 1])
    both = FunctionalRidgeCV(alpha=ALPHAS, alpha_per_target=True, n_basis=10).fit(X, Y)
    for j, col in enumerate(Y.T):
        one = FunctionalRidgeCV(alpha=ALPHAS, n_basis=10).fit(X, col)
        assert both.alpha_[j] == one.alpha_
        np.testing.assert_allclose(both.criterion_path_[j], one.criterion_path_, rtol=1e-10)
        np.testing.assert_allclose(
            both.coef_function_[j], one.coef_function_, rtol=1e-8
        )
        np.testing.assert_allclose(both.edf_[j], one.edf_, rtol=1e-10)
        np.testing.assert_allclose(
            both.confidence_band()[1][j], one.confidence_band()[1], rtol=1e-8
        )
