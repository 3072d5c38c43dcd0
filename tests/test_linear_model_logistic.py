"""FunctionalLogisticRegression against scikit-learn's LogisticRegression."""

import warnings

import numpy as np
import pytest
from _linear_model_data import (
    curve_scores,
    curves_on,
    integral_with_beta,
    trapezoid_weights,
)
from numpy.polynomial import legendre
from scipy.special import expit
from sklearn.exceptions import ConvergenceWarning
from sklearn.linear_model import LogisticRegression

from skfunc import FunctionalLogisticRegression
from skfunc.preprocessing import BasisFeatures

T = np.linspace(0, 1, 101)


def make_data(rng, n=300, n_classes=2):
    scores = curve_scores(n, rng)
    X = curves_on(scores, T)
    signal = integral_with_beta(scores)
    if n_classes == 2:
        y = (rng.uniform(size=n) < expit(2 * signal)).astype(int)
    else:
        logits = np.column_stack([np.zeros(n), 2 * signal, -2 * signal + 0.5])
        cumulative = np.cumsum(np.exp(logits), axis=1)
        u = rng.uniform(size=n) * cumulative[:, -1]
        y = (u[:, None] > cumulative).sum(axis=1)
    return X, np.array(["cracked", "sound", "warped"])[y]


def legendre_design(X, n_basis):
    phi = legendre.legvander(2 * T - 1, n_basis - 1)
    return X @ (trapezoid_weights(T)[:, None] * phi)


def test_vanishing_penalty_binary_equals_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression without penalty
    # (C=inf) on the integrated design built with numpy's Legendre polynomials.
    X, y = make_data(rng)
    ours = FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=5).fit(
        X, y
    )
    Z = legendre_design(X, 5)
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_array_equal(ours.classes_, ref.classes_)
    np.testing.assert_allclose(ours.basis_coef_, ref.coef_, rtol=1e-6)
    np.testing.assert_allclose(ours.intercept_, ref.intercept_, rtol=1e-6, atol=1e-8)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-9)
    np.testing.assert_allclose(
        ours.decision_function(X), ref.decision_function(Z), atol=1e-8
    )
    np.testing.assert_array_equal(ours.predict(X), ref.predict(Z))


def test_vanishing_penalty_multinomial_equals_sklearn(rng):
    # Source: as above, multinomial; probabilities are unique even though the
    # unpenalized coefficients are determined only up to a common shift.
    X, y = make_data(rng, n_classes=3)
    ours = FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=4).fit(
        X, y
    )
    Z = legendre_design(X, 4)
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-8)
    np.testing.assert_allclose(
        ours.predict_log_proba(X), np.log(ref.predict_proba(Z)), rtol=1e-6
    )
    np.testing.assert_allclose(ours.basis_coef_.sum(axis=0), 0, atol=1e-8)


@pytest.mark.parametrize("n_classes", [2, 3])
def test_identity_penalty_equals_sklearn_l2(rng, n_classes):
    # Source: sklearn.linear_model.LogisticRegression with C = 1 / alpha on
    # BasisFeatures output: with penalty_order=0 in the orthonormal Fourier
    # basis, alpha/2 ||c||^2 is scikit-learn's l2 penalty ||c||^2 / (2 C);
    # for three classes both use one (centered) coefficient set per class.
    X, y = make_data(rng, n_classes=n_classes)
    alpha = 0.5
    ours = FunctionalLogisticRegression(
        alpha=alpha, basis="fourier", n_basis=7, penalty_order=0
    ).fit(X, y)
    Z = BasisFeatures(basis="fourier", n_basis=7, alpha=0, period=1.0,
                      data_term="integral").fit_transform(X)
    ref = LogisticRegression(C=1 / alpha, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.basis_coef_, ref.coef_, rtol=1e-5, atol=1e-7)
    np.testing.assert_allclose(ours.predict_proba(X), ref.predict_proba(Z), atol=1e-7)


def test_class_weight_equals_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression(class_weight=...).
    X, y = make_data(rng)
    Z = legendre_design(X, 4)
    for class_weight in ("balanced", {"cracked": 3.0, "sound": 0.5}):
        ours = FunctionalLogisticRegression(
            alpha=0.0, basis="legendre", n_basis=4, class_weight=class_weight
        ).fit(X, y)
        ref = LogisticRegression(
            C=np.inf, solver="newton-cg", tol=1e-12, class_weight=class_weight
        ).fit(Z, y)
        np.testing.assert_allclose(
            ours.predict_proba(X), ref.predict_proba(Z), atol=1e-8
        )


def test_recovers_beta_and_band(rng):
    # With many curves the penalized estimate is close to the true 2 * beta
    # used to simulate the log-odds, and the band is a proper interval.
    X, y = make_data(rng, n=3000)
    est = FunctionalLogisticRegression(alpha=1e-5, n_basis=10).fit(X, y)
    truth = 2 * (2.0 * np.sin(2 * np.pi * T) + 1.5 * np.cos(np.pi * T))
    error = np.sqrt(trapezoid_weights(T) @ (est.coef_function_[0] - truth) ** 2)
    assert error < 0.35 * np.sqrt(trapezoid_weights(T) @ truth**2)
    lower, upper = est.confidence_band(0.95)
    assert lower.shape == upper.shape == (1, T.size)
    assert np.all(upper > lower)
    assert np.mean((lower[0] <= truth) & (truth <= upper[0])) > 0.5


def test_separable_classes_warn(rng):
    # the classes are separated by int x(t) dt: no finite maximum likelihood
    X, _ = make_data(rng, n=40)
    y = (legendre_design(X, 1)[:, 0] > 0).astype(int)
    with pytest.warns(ConvergenceWarning, match="did not converge"):
        FunctionalLogisticRegression(alpha=0.0, basis="legendre", n_basis=4).fit(X, y)
    with pytest.warns(ConvergenceWarning, match="max_iter=1"):
        FunctionalLogisticRegression(max_iter=1).fit(*make_data(rng, n=60))


def test_converges_quietly(rng):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        est = FunctionalLogisticRegression(alpha=1e-3).fit(*make_data(rng, n=100))
    assert est.n_iter_ < 30


def test_bad_input(rng):
    X, y = make_data(rng, n=40)
    with pytest.raises(ValueError, match="at least 2 classes"):
        FunctionalLogisticRegression().fit(X, np.zeros(40))
    with pytest.raises(ValueError, match="Unknown label type"):
        FunctionalLogisticRegression().fit(X, np.linspace(0, 1, 40))
    with pytest.raises(ValueError, match="inconsistent numbers of samples"):
        FunctionalLogisticRegression().fit(X, y[:-1])
    with pytest.raises(ValueError, match="Negative values"):
        FunctionalLogisticRegression().fit(X, y, sample_weight=-np.ones(40))
    with pytest.raises(ValueError, match="class_weight"):
        FunctionalLogisticRegression(class_weight="equal").fit(X, y)
    with pytest.raises(ValueError, match=r"alpha > 0"):
        FunctionalLogisticRegression(alpha=0.0, n_basis=60).fit(X, y)


def test_scalar_covariates_equal_sklearn(rng):
    # Source: sklearn.linear_model.LogisticRegression (C=inf) on
    # [integrated design, covariates].
    X, y = make_data(rng)
    S = rng.normal(size=(len(y), 2))
    ours = FunctionalLogisticRegression(
        alpha=0.0, basis="legendre", n_basis=4, n_covariates=2
    ).fit(np.hstack([X, S]), y)
    Z = np.hstack([legendre_design(X, 4), S])
    ref = LogisticRegression(C=np.inf, solver="newton-cg", tol=1e-12).fit(Z, y)
    np.testing.assert_allclose(ours.covariate_coef_, ref.coef_[:, 4:], rtol=1e-6)
    np.testing.assert_allclose(
        ours.predict_proba(np.hstack([X, S])), ref.predict_proba(Z), atol=1e-9
    )
