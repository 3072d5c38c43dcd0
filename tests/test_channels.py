"""Several channels per sample: one channel equals the single-channel
estimator, channel weights and per-channel penalty scales make fits
invariant to one channel's units, multivariate FPCA against the definitions
of Happ & Greven (2018), the layout from DataFrame columns and from
``curves_from_table``, and clear errors for bad layouts."""

import warnings

import numpy as np
import pandas as pd
import pytest
from _channel_data import EXACT, T, U  # noqa: F401
from _channel_data import close as _close
from _channel_data import curves as _curves
from _channel_data import two_channels as _two_channels
from sklearn.base import clone
from sklearn.pipeline import make_pipeline

from skfunc import _channels
from skfunc.alignment import ShiftAligner
from skfunc.channels import split_channels
from skfunc.datasets import make_smooth_regression
from skfunc.decomposition import FunctionalPCA
from skfunc.irregular import curves_from_table
from skfunc.linear_model import (
    FunctionalLogisticRegression,
    FunctionalRidge,
    FunctionalRidgeCV,
)
from skfunc.persistence import load_model, save_model
from skfunc.preprocessing import BasisFeatures, CurveSmoother

# -------------------------------------------------- one channel = itself


SINGLE = [
    (BasisFeatures(), "transform"),
    (BasisFeatures(alpha=1e-3, basis="fourier", n_basis=9), "transform"),
    (CurveSmoother(), "transform"),
    (CurveSmoother(per_curve=True, derivative=1), "transform"),
    (FunctionalPCA(3, channel_weights="equal"), "transform"),
    (FunctionalPCA(3, basis="bspline", alpha=0.0, svd_solver="full",
                   channel_weights="equal"), "transform"),
    (FunctionalPCA(3, basis="bspline", alpha=0.0, channel_weights={"T": 1.0}),
     "transform"),
    (FunctionalRidge(), "predict"),
    (FunctionalRidge(1e-2, n_covariates=1), "predict"),
    (FunctionalRidgeCV(), "predict"),
    (FunctionalLogisticRegression(), "decision_function"),
]


@pytest.mark.parametrize(("estimator", "method"), SINGLE, ids=lambda p: repr(p)[:60])
def test_one_channel_equals_the_single_channel_estimator(estimator, method):
    # Identity of definitions: a layout of one channel is the single curve.
    X, y = _curves()
    if getattr(estimator, "n_covariates", 0):
        X = np.hstack([X, np.random.default_rng(3).normal(size=(len(X), 1))])
    if isinstance(estimator, FunctionalLogisticRegression):
        y = (y > np.median(y)).astype(int)
    if isinstance(estimator, CurveSmoother):
        X = X + np.random.default_rng(4).normal(0, 0.05, X.shape)
        X[2, 5:9] = np.nan  # the missing-value path too
    fit_y = None if method == "transform" else y
    single = clone(estimator).set_params(grid=T).fit(X, fit_y)
    multi = clone(estimator).set_params(grid={"T": T}).fit(X, fit_y)
    # the logistic model's Newton iterations stop at a tolerance, not at the
    # optimum: see test_logistic_decisions_do_not_depend_on_one_channels_units
    # for the derivation of 1e-3
    tol = 1e-3 if isinstance(estimator, FunctionalLogisticRegression) else EXACT
    _close(getattr(multi, method)(X), getattr(single, method)(X), tol)
    assert multi.channel_names_ == ["T"] and multi.channel_sizes_ == [T.size]
    for attr in ("coef_function_", "components_", "explained_variance_", "mean_"):
        if hasattr(single, attr):
            _close(getattr(multi, attr), getattr(single, attr), tol)
    if hasattr(single, "alpha_"):
        _close(np.ravel(multi.alpha_), np.ravel(single.alpha_), tol)


# ------------------------------------------- units of one channel changed


def _rescaled(X, factor=1e3):
    out = X.copy()
    out[:, T.size:] *= factor
    return out


@pytest.mark.parametrize("estimator", [
    FunctionalRidge(), FunctionalRidge(1e-3),
    pytest.param(FunctionalRidgeCV(cv=5), marks=pytest.mark.slow),
])
def test_ridge_predictions_do_not_depend_on_one_channels_units(estimator):
    # Derivation (skfunc._channels.channel_penalty): multiplying channel c
    # by a multiplies its cross products and its penalty scale s_c by a^2;
    # with its coefficients divided by a the penalized criterion is
    # unchanged, so the chosen alpha and the predictions are too.
    X, y = _two_channels()
    grid = {"T": T, "O": U}
    a = clone(estimator).set_params(grid=grid).fit(X, y)
    b = clone(estimator).set_params(grid=grid).fit(_rescaled(X), y)
    _close(b.predict(_rescaled(X)), a.predict(X), 1e-9)
    _close(np.ravel(b.alpha_), np.ravel(a.alpha_), 1e-9)
    # the second channel's coefficient function carries the unit change
    _close(b.coef_function_[T.size:] * 1e3, a.coef_function_[T.size:], 1e-9)


def test_one_shared_penalty_scale_would_depend_on_units(monkeypatch):
    # The check above can fail: the composite penalty with one scale for
    # all channels (the single-channel rule applied to the whole basis)
    # shrinks the small-unit channel far more after the change of units.
    X, y = _two_channels()
    monkeypatch.setattr(
        "skfunc._integrated_design.channel_penalty",
        lambda basis, order, gram: _channels.penalty_for(basis, order))
    grid = {"T": T, "O": U}
    a = FunctionalRidge(1e-3, grid=grid).fit(X, y)
    b = FunctionalRidge(1e-3, grid=grid).fit(_rescaled(X, 1e-3), y)
    gap = np.abs(b.predict(_rescaled(X, 1e-3)) - a.predict(X)).max()
    assert gap > 1e-3 * np.abs(a.predict(X)).max()


def test_logistic_decisions_do_not_depend_on_one_channels_units():
    # Same derivation as for the ridge; the fixed ridge is measured in the
    # penalty's metric, which carries each channel's scale. Newton stops
    # when half the squared Newton decrement is below tol (1 + |objective|)
    # = 1e-10 * ~60 for these 120 rows, so the two fits may stop up to a
    # decrement of about sqrt(2 * 6e-9) ~ 1e-4 apart: 1e-3 relative leaves
    # room (measured 2e-5); a shared penalty scale is off by far more.
    X, y = _two_channels(120)
    labels = (y > np.median(y)).astype(int)
    grid = {"T": T, "O": U}
    a = FunctionalLogisticRegression(grid=grid).fit(X, labels)
    b = FunctionalLogisticRegression(grid=grid).fit(_rescaled(X), labels)
    _close(b.decision_function(_rescaled(X)), a.decision_function(X), 1e-3)
    assert a.coef_function_.shape == (1, T.size + U.size)


def test_fpca_inverse_variance_weights_make_scores_unit_free():
    # Happ & Greven (2018, sec. 2-3): with weights 1 / integrated variance
    # of each channel the multivariate components and scores do not depend
    # on the channels' units. Equal weights do (the check can fail).
    X, _ = _two_channels()
    grid = {"T": T, "O": U}
    for kwargs in ({}, {"basis": "bspline", "alpha": 0.0},
                   {"svd_solver": "covariance_eigh"}):
        a = FunctionalPCA(3, grid=grid, **kwargs).fit(X)
        b = FunctionalPCA(3, grid=grid, **kwargs).fit(_rescaled(X))
        _close(b.transform(_rescaled(X)), a.transform(X), 1e-9)
        _close(b.explained_variance_, a.explained_variance_, 1e-9)
        _close(b.components_[:, T.size:], 1e3 * a.components_[:, T.size:], 1e-9)
        _close(b.inverse_transform(b.transform(_rescaled(X))),
               _rescaled(a.inverse_transform(a.transform(X))), 1e-9)
    a = FunctionalPCA(3, grid=grid, channel_weights="equal").fit(X)
    b = FunctionalPCA(3, grid=grid, channel_weights="equal").fit(_rescaled(X))
    assert not np.allclose(b.explained_variance_ratio_, a.explained_variance_ratio_,
                           rtol=1e-2)


# -------------------------------------------- multivariate FPCA, references


def test_identical_channels_give_single_fpca_scaled_as_happ_greven():
    # Happ & Greven (2018, sec. 2) define the weighted inner product
    # <<f, g>> = sum_c v_c <f_c, g_c> and the covariance operator
    # (Gamma f)_c = sum_d v_d <C_cd(s, .), f_d>. For X = (X1, X1) on one
    # grid, C_cd = C for all c, d and v_1 = v_2 = v = 1 / V with
    # V = int Var X1 = sum_k lambda_k. Derivation: for f = (phi, phi) with
    # C phi = lambda phi, (Gamma f)_c = v C (phi + phi) = 2 v lambda phi, so
    # the eigenvalues are nu_k = 2 v lambda_k (the directions (phi, -phi)
    # have eigenvalue 0); the eigenfunction of weighted norm one is
    # psi_k = (phi_k, phi_k) / sqrt(2 v); the scores are
    # <<X - mu, psi_k>> = v * 2 <X1 - mu1, phi_k> / sqrt(2 v) = sqrt(2 v) xi_k;
    # the total variance is 2 v V = 2, so the explained variance ratios are
    # those of X1 alone.
    X, _ = _curves()
    single = FunctionalPCA(4, grid=T).fit(X)
    V = single.explained_variance_.sum() / single.explained_variance_ratio_.sum()
    both = FunctionalPCA(4, grid={"a": T, "b": T}).fit(np.hstack([X, X]))
    v = 1.0 / V
    _close(both.channel_weights_, [v, v])
    _close(both.explained_variance_, 2 * v * single.explained_variance_)
    _close(both.explained_variance_ratio_, single.explained_variance_ratio_)
    psi = single.components_ / np.sqrt(2 * v)
    _close(both.components_, np.hstack([psi, psi]))
    _close(both.transform(np.hstack([X, X])), np.sqrt(2 * v) * single.transform(X))
    # one channel with the default weight v = 1 / V, the same derivation:
    # nu_k = v lambda_k, psi_k = phi_k / sqrt(v), scores sqrt(v) xi_k
    one = FunctionalPCA(4, grid={"a": T}).fit(X)
    _close(one.explained_variance_, v * single.explained_variance_)
    _close(one.components_, single.components_ / np.sqrt(v))
    _close(one.transform(X), np.sqrt(v) * single.transform(X))


def test_fpca_on_different_domains_matches_the_discretised_operator():
    # Happ & Greven (2018): the eigenproblem of Gamma on channels with
    # their own domains. Discretised independently with numpy: Gamma acts on
    # stacked grid values as A = Cov diag(v_d w_t) (quadrature weights w of
    # each channel, trapezoid rule: common practice); its eigenvalues are
    # the variances, its eigenvectors (normalised in the weighted norm
    # sum v_d w_t f^2) the components, up to sign.
    X, _ = _two_channels()
    weights = {"T": 2.0, "O": 0.3}
    fpca = FunctionalPCA(3, grid={"T": T, "O": U}, channel_weights=weights).fit(X)
    w = np.concatenate([np.trapezoid(np.eye(T.size), T, axis=0) * weights["T"],
                        np.trapezoid(np.eye(U.size), U, axis=0) * weights["O"]])
    cov = np.cov(X, rowvar=False)
    values, vectors = np.linalg.eig(cov * w)
    order = np.argsort(values.real)[::-1][:3]
    values, vectors = values.real[order], vectors.real[:, order]
    vectors /= np.sqrt(np.einsum("ik,i,ik->k", vectors, w, vectors))
    signs = np.sign(np.sum(vectors * fpca.components_.T * w[:, None], axis=0))
    _close(fpca.explained_variance_, values, 1e-8)
    _close(fpca.components_, (vectors * signs).T, 1e-6)


# ------------------------------------------------------ layout and input


def _frame(X, names=("T", "O"), grids=(T, U)):
    columns = pd.MultiIndex.from_tuples(
        [(n, t) for n, g in zip(names, grids) for t in g], names=["channel", "time"])
    return pd.DataFrame(X, columns=columns)


def test_layout_from_dataframe_columns_equals_the_grid_mapping():
    X, y = _two_channels()
    frame = _frame(X)
    a = FunctionalRidge().fit(frame, y)
    b = FunctionalRidge(grid={"T": T, "O": U}).fit(X, y)
    assert a.channel_names_ == ["T", "O"] and a.channel_sizes_ == [T.size, U.size]
    _close(a.predict(frame), b.predict(X))
    parts = split_channels(a, a.coef_function_)
    assert list(parts) == ["T", "O"]
    np.testing.assert_array_equal(parts["O"][0], U)
    np.testing.assert_array_equal(parts["O"][1], a.coef_function_[T.size:])


def test_curves_from_table_with_channels_feed_the_estimators():
    # A long table of two channels, built by hand: the padded matrix of each
    # channel is the wide matrix we start from.
    X, y = _two_channels(40)
    rows = []
    for i, row in enumerate(X):
        rows += [(i, "T", t, v) for t, v in zip(T, row[: T.size])]
        rows += [(i, "O", t, v) for t, v in zip(U, row[T.size:])]
    table = pd.DataFrame(rows, columns=["run", "channel", "time", "value"])
    curves = curves_from_table(table, sample="run", channel="channel")
    frame = curves_from_table(table, sample="run", channel="channel", as_frame=True).X
    a = FunctionalRidge(1e-3, grid=curves.grid).fit(curves.X, y)
    b = FunctionalRidge(1e-3).fit(frame, y)
    c = FunctionalRidge(1e-3, grid={"T": T, "O": U}).fit(X, y)
    _close(a.predict(curves.X), c.predict(X))
    _close(b.predict(frame), c.predict(X))


def test_smoother_channels_are_smoothed_each_with_its_own_alpha():
    # Separable problem: each channel equals the smoother fitted on it alone.
    X, _ = _two_channels()
    X = X + np.random.default_rng(5).normal(0, [0.01] * T.size + [0.3] * U.size, X.shape)
    X[1, 50:54] = np.nan
    multi = CurveSmoother(grid={"T": T, "O": U}, eval_points={"O": [1.0, 2.5]}).fit(X)
    alone_t = CurveSmoother(grid=T).fit(X[:, : T.size])
    alone_o = CurveSmoother(grid=U, eval_points=[1.0, 2.5]).fit(X[:, T.size:])
    _close(multi.alpha_, [alone_t.alpha_, alone_o.alpha_])
    assert alone_t.alpha_ != alone_o.alpha_  # the noise levels differ
    out = multi.transform(X)
    assert out.shape == (len(X), T.size + 2)
    _close(out, np.hstack([alone_t.transform(X[:, : T.size]),
                           alone_o.transform(X[:, T.size:])]))
    names = multi.get_feature_names_out()
    assert names[0] == "T__0.0" and names[-1] == "O__2.5"


@pytest.mark.slow
def test_partial_fit_with_channels_equals_fit():
    X, y = _two_channels()
    grid = {"T": T, "O": U}
    for est, target in ((FunctionalPCA(3, grid=grid), None),
                        (FunctionalRidge(grid=grid), y),
                        (CurveSmoother(grid=grid), None)):
        whole = clone(est).fit(X, target)
        parts = clone(est)
        for rows in (slice(0, 30), slice(30, None)):
            parts.partial_fit(X[rows], None if target is None else target[rows])
        method = "predict" if target is not None else "transform"
        _close(getattr(parts, method)(X), getattr(whole, method)(X), 1e-9)


@pytest.mark.parametrize("estimator", [BasisFeatures(), CurveSmoother(per_curve=True)],
                         ids=repr)
def test_partial_fit_batches_with_channels_equal_fit(estimator):
    # Fits are sums over batches (skfunc._fit), channel by channel: the same
    # statistics merged in another order, so equal up to rounding.
    from skfunc.utils import partial_fit_batches

    X, _ = _two_channels(40)
    estimator = clone(estimator).set_params(grid={"T": T, "O": U})
    whole = clone(estimator).fit(X)
    batched = partial_fit_batches(clone(estimator), X, batch_size=15)
    assert batched.n_samples_seen_ == len(X)
    assert [e.n_samples_seen_ for e in batched.channel_estimators_] == [len(X)] * 2
    _close(batched.alpha_, whole.alpha_, 1e-9)
    _close(batched.transform(X), whole.transform(X), 1e-9)


@pytest.mark.slow
def test_pipeline_and_persistence_with_channels(tmp_path):
    X, y = _two_channels()
    grid = {"T": T, "O": U}
    pipe = make_pipeline(CurveSmoother(grid=grid), FunctionalPCA(3, grid=grid))
    scores = pipe.fit_transform(X)
    for suffix in (".skops", ".joblib"):
        path = tmp_path / f"pipe{suffix}"
        save_model(pipe, path)
        _close(load_model(path).transform(X), scores, 0)


def test_refitting_without_channels_forgets_them():
    X, y = _two_channels()
    est = FunctionalRidge(grid={"T": T, "O": U}).fit(X, y)
    est.set_params(grid=None).fit(X[:, : T.size], y)
    assert not hasattr(est, "channel_names_")
    smoother = CurveSmoother(grid={"T": T, "O": U}).fit(X)
    smoother.set_params(grid=None).fit(X)
    assert not hasattr(smoother, "channel_estimators_")
    assert smoother.transform(X).shape == X.shape


# -------------------------------------------------------------- bad inputs


def test_column_count_not_matching_the_layout():
    X, y = _two_channels()
    with pytest.raises(ValueError, match=r"X has 66 curve column\(s\).*'T': 41, 'O': 26"):
        FunctionalRidge(grid={"T": T, "O": U}).fit(X[:, :-1], y)
    with pytest.raises(ValueError, match="besides the 1 covariate"):
        FunctionalRidge(grid={"T": T, "O": U}, n_covariates=1).fit(X, y)
    with pytest.raises(ValueError, match="do not match the channels of grid"):
        FunctionalPCA(grid={"O": U, "T": T}).fit(_frame(X))


def test_unknown_or_reordered_channels_at_predict():
    X, y = _two_channels()
    est = FunctionalRidge().fit(_frame(X), y)
    with pytest.raises(ValueError, match=r"channel\(s\) \['Q'\].*not fitted on"):
        est.predict(_frame(X, names=("T", "Q")))
    swapped = np.hstack([X[:, T.size:], X[:, : T.size]])
    with pytest.raises(ValueError, match="differ from those FunctionalRidge was fitted"):
        est.predict(_frame(swapped, names=("O", "T"), grids=(U, T)))
    with pytest.raises(ValueError, match="time labels of channel 'O'"):
        est.predict(_frame(X, grids=(T, U + 1)))
    with pytest.raises(ValueError, match="expecting 67 features"):
        est.predict(X[:, :-1])


def test_mismatched_layout_at_predict():
    X, y = _two_channels()
    single = FunctionalRidge().fit(pd.DataFrame(X[:, : T.size], columns=T), y)
    with pytest.raises(ValueError, match="fitted on one curve per row"):
        single.predict(_frame(X)[["T"]])
    multi = FunctionalPCA(2, grid={"T": T, "O": U}).fit(X)
    plain = pd.DataFrame(X, columns=np.arange(X.shape[1], dtype=float))
    with pytest.raises(ValueError, match="plain time labels.*fitted on channels"):
        multi.transform(plain)
    smoother = CurveSmoother().fit(_frame(X))
    with pytest.raises(ValueError, match=r"channel\(s\) \['Q'\]"):
        smoother.transform(_frame(X, names=("Q", "O")))


def test_other_bad_layouts():
    X, y = _two_channels()
    with pytest.raises(ValueError, match="takes one curve per row.*FunctionalPCA"):
        ShiftAligner(grid={"T": T, "O": U}).fit(X)
    with pytest.raises(ValueError, match="takes one curve per row"):
        ShiftAligner().fit(_frame(X))
    with pytest.raises(TypeError, match="Channel names.*strings"):
        FunctionalPCA(grid={1: T, 2: U}).fit(X)
    with pytest.raises(ValueError, match="empty mapping"):
        FunctionalPCA(grid={}).fit(X)
    with pytest.raises(ValueError, match=r"grid\['O'\] must be strictly increasing"):
        FunctionalPCA(grid={"T": T, "O": U[::-1]}).fit(X)
    mixed = _frame(X)
    mixed = mixed.iloc[:, list(range(10)) + list(range(T.size, X.shape[1]))
                       + list(range(10, T.size))]
    with pytest.raises(ValueError, match="not side by side"):
        FunctionalRidge().fit(mixed, y)
    with pytest.raises(ValueError, match=r"channel_weights.*missing \['O'\]"):
        FunctionalPCA(grid={"T": T, "O": U}, channel_weights={"T": 1.0}).fit(X)
    with pytest.raises(ValueError, match="positive finite"):
        FunctionalPCA(grid={"T": T, "O": U},
                      channel_weights={"T": 1.0, "O": -1.0}).fit(X)
    flat = X.copy()
    flat[:, T.size:] = 3.0
    with pytest.raises(ValueError, match=r"\['O'\].*zero variance"):
        FunctionalPCA(grid={"T": T, "O": U}).fit(flat)
    est = FunctionalPCA(2).fit(X)
    with pytest.raises(ValueError, match="fitted on one curve per row"):
        split_channels(est, est.mean_)
    est = FunctionalPCA(2, grid={"T": T, "O": U}).fit(X)
    with pytest.raises(ValueError, match="67 entries along the last axis"):
        split_channels(est, est.mean_[:-1])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        est.transform(X)  # no feature-name warning for plain arrays


# ------------------------------------------- resolution, Dask, displays


def _sampled(n_t, n_u, n=60):
    """The same functions of two channels (T on [0, 1], O on [0, 5]) on
    grids of n_t and n_u points; y sums the two channels' responses."""
    t, u = np.linspace(0, 1, n_t), np.linspace(0, 5, n_u)
    a, ya, _ = make_smooth_regression(n, grid=t, noise=0.0, random_state=0)
    b, yb, _ = make_smooth_regression(n, grid=u, noise=0.0, random_state=1)
    noise = np.random.default_rng(2).normal(0, 0.1, n)
    return np.hstack([a, b]), ya + yb + noise, {"T": t, "O": u}


@pytest.mark.parametrize("n_points", [(201, 201), (201, 51)])
def test_channels_are_resolution_invariant(n_points):
    # As tests/test_common.py::test_resolution_invariance, per channel: the
    # trapezoid rule's O(h^2) error on these smooth Fourier curves is about
    # 2e-4 at 201 points (common practice; derivation there), and 51 points
    # (h 4x larger) about 16x that on the second channel alone, diluted in
    # the sum with the first: 1e-3 and 5e-3 leave room. A sum over grid
    # points instead of an integral changes by the ratio of point counts.
    X_ref, y_ref, g_ref = _sampled(1001, 1001)
    X, y, g = _sampled(*n_points)
    rtol = 1e-3 if n_points == (201, 201) else 5e-3
    ref = FunctionalRidge(1e-4, grid=g_ref).fit(X_ref, y_ref)
    est = FunctionalRidge(1e-4, grid=g).fit(X, y)
    _close(est.predict(X), ref.predict(X_ref), rtol)
    ref = FunctionalPCA(3, grid=g_ref).fit(X_ref)
    est = FunctionalPCA(3, grid=g).fit(X)
    _close(est.explained_variance_, ref.explained_variance_, rtol)
    _close(np.abs(est.transform(X)), np.abs(ref.transform(X_ref)), rtol)


@pytest.mark.slow
def test_dask_fits_with_channels_equal_in_memory_fits():
    # Fits are sums over row blocks (skfunc._fit): the same statistics in
    # another order, so equal up to rounding (1e-9 relative).
    import dask.array as da

    X, y = _two_channels()
    grid = {"T": T, "O": U}
    Xd, yd = da.from_array(X, chunks=(25, -1)), da.from_array(y, chunks=25)
    for est, method, target in ((FunctionalRidge(grid=grid), "predict", y),
                                (FunctionalPCA(3, grid=grid), "transform", None),
                                (FunctionalPCA(3, basis="bspline", grid=grid),
                                 "transform", None),
                                (CurveSmoother(grid=grid), "transform", None)):
        local = clone(est).fit(X, target)
        remote = clone(est).fit(Xd, None if target is None else yd)
        _close(np.asarray(getattr(remote, method)(Xd)), getattr(local, method)(X), 1e-9)


def test_displays_draw_one_channel():
    from skfunc.plotting import CoefficientFunctionDisplay, ComponentPerturbationDisplay

    X, y = _two_channels()
    ridge = FunctionalRidge(grid={"T": T, "O": U}).fit(X, y)
    display = CoefficientFunctionDisplay.from_estimator(ridge, channel="O")
    np.testing.assert_array_equal(display.line_.get_xdata(), U)
    np.testing.assert_array_equal(display.line_.get_ydata(), ridge.coef_function_[T.size:])
    with pytest.raises(ValueError, match=r"fitted on channels \['T', 'O'\]; pass"):
        CoefficientFunctionDisplay.from_estimator(ridge)
    fpca = FunctionalPCA(2, grid={"T": T, "O": U}).fit(X)
    display = ComponentPerturbationDisplay.from_estimator(fpca, channel="T")
    np.testing.assert_array_equal(display.grid, T)
    np.testing.assert_array_equal(display.components, fpca.components_[:, : T.size])
    single = FunctionalRidge().fit(X[:, : T.size], y)
    with pytest.raises(ValueError, match="needs channel=None"):
        CoefficientFunctionDisplay.from_estimator(single, channel="T")
    import matplotlib.pyplot as plt

    plt.close("all")
