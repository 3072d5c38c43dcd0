"""Dask input: fits as tree-reduced statistics, lazy block-wise transforms.

The distributed tests share one ``LocalCluster`` (two worker processes, one
thread each, on loopback) started and closed by the module fixture; the rest
run on Dask's synchronous scheduler. Results are compared with in-memory
fits (equal within 1e-10 relative) and, where
a value is known independently, with scipy or numpy.
"""

import subprocess
import sys
import time
import warnings

import numpy as np
import pytest
from scipy import integrate

da = pytest.importorskip("dask.array")
dask = pytest.importorskip("dask")

from sklearn.linear_model import Ridge  # noqa: E402
from sklearn.model_selection import GridSearchCV  # noqa: E402
from sklearn.pipeline import Pipeline  # noqa: E402

from skfunc import BasisFeatures  # noqa: E402
from skfunc._blocks import compute_statistics, is_dask_array  # noqa: E402
from skfunc._dask import validate_dask  # noqa: E402
from skfunc._penalized import (  # noqa: E402
    centered,
    centered_cross_products,
    cross_products,
)
from skfunc.datasets import make_kiln_firing  # noqa: E402
from skfunc.decomposition import FunctionalPCA  # noqa: E402
from skfunc.linear_model import (  # noqa: E402
    FunctionalRidge,
    FunctionalRidgeCV,
    FunctionOnFunctionRidge,
    FunctionOnScalarRidge,
)
from skfunc.preprocessing import CurveSmoother  # noqa: E402

# a LocalCluster per module (about 15 s): in the full run (CI), not the fast default
pytestmark = pytest.mark.slow

RTOL = 1e-10


def assert_rel_close(actual, expected, rtol=RTOL):
    """Equal within ``rtol`` relative to the largest magnitude of ``expected``."""
    actual, expected = np.asarray(actual), np.asarray(expected)
    assert actual.shape == expected.shape
    scale = max(np.abs(expected).max(), np.finfo(float).tiny)
    assert np.abs(actual - expected).max() <= rtol * scale


def assert_same_gcv_fit(model, reference, X_lazy, X):
    """A Dask fit chose alpha by GCV from pooled statistics as the in-memory
    fit did, and predicts the same, lazily."""
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=RTOL)
    assert_rel_close(model.criterion_path_, reference.criterion_path_)
    assert_rel_close(model.coef_function_, reference.coef_function_)
    prediction = model.predict(X_lazy)
    assert is_dask_array(prediction)
    assert_rel_close(prediction.compute(), reference.predict(X))


def kiln_runs(n_runs, n_minutes=121, seed=0):
    """Invented kiln-firing runs (:func:`skfunc.datasets.make_kiln_firing`,
    no thermocouple dropouts) logged at ``n_minutes`` evenly spaced minutes
    of the 10-hour cycle: the grid, the temperature curves (deg C) and the
    tiles' strength (MPa)."""
    kiln = make_kiln_firing(n_runs, grid=np.linspace(0, 599, n_minutes),
                            dropout_fraction=0.0, random_state=seed)
    return kiln.grid, kiln.data, kiln.strength


# ---------------------------------------------------------------------------
# a two-process cluster on loopback
# ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def client():
    distributed = pytest.importorskip("distributed")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # port and dashboard notices
        cluster = distributed.LocalCluster(
            n_workers=2,
            processes=True,
            threads_per_worker=1,
            host="127.0.0.1",
            dashboard_address=None,
        )
        client = distributed.Client(cluster)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


@pytest.mark.slow  # starts a local cluster and integrates with scipy's quad
def test_basis_features_on_cluster_equals_in_memory_and_quad(client):
    t = np.linspace(0, 1, 65)
    rng = np.random.default_rng(1)
    a, b, c = rng.normal(size=(3, 400, 1))
    X = a * np.sin(2 * np.pi * t) + b * np.cos(2 * np.pi * t) + c
    Xd = da.from_array(X, chunks=(57, 65))

    # unpenalized projection, the basis of period 1 orthonormal on [0, 1]
    params = {"basis": "fourier", "n_basis": 3, "period": 1.0, "alpha": 0,
              "data_term": "integral"}
    features = BasisFeatures(**params).fit(Xd)
    Zd = features.transform(Xd)
    assert is_dask_array(Zd) and Zd.chunks[0] == Xd.chunks[0]
    Z = Zd.compute()
    reference = BasisFeatures(**params).fit(X)
    assert features.n_samples_seen_ == 400
    assert_rel_close(features.projection_, reference.projection_)
    assert_rel_close(Z, reference.transform(X))
    # Orthonormal coordinates carry the L2 norm of each curve; the integral
    # of its square by adaptive quadrature (scipy.integrate.quad) is outside
    # the project.
    for i in range(3):
        f = lambda s, i=i: (a[i, 0] * np.sin(2 * np.pi * s)  # noqa: E731
                            + b[i, 0] * np.cos(2 * np.pi * s) + c[i, 0]) ** 2
        assert np.linalg.norm(Z[i]) ** 2 == pytest.approx(
            integrate.quad(f, 0, 1)[0], rel=1e-10
        )


def settings_and_profiles(n_runs=400, n_points=15, seed=3):
    """Invented kiln settings (peak set-point, ramp rate, load) and the
    temperature profiles they produce, on a 10-hour grid."""
    rng = np.random.default_rng(seed)
    hours = np.linspace(0, 10, n_points)
    settings = np.column_stack([rng.uniform(1150, 1250, n_runs),
                                rng.uniform(100, 200, n_runs),
                                rng.uniform(2, 4, n_runs)])
    shape = np.sin(np.pi * hours / 10)
    profiles = (20 + np.outer(settings[:, 0] - 20, shape)
                + np.outer(settings[:, 1], shape * (1 - hours / 10))
                + rng.normal(0, 5, (n_runs, n_points)))
    return hours, settings, profiles


def test_function_on_scalar_on_cluster_equals_in_memory_and_lstsq(client):
    hours, S, Y = settings_and_profiles()
    Sd, Yd = da.from_array(S, chunks=(48, 3)), da.from_array(Y, chunks=(48, 15))
    # alpha=0 with as many B-splines as grid points interpolates, so the fit
    # is ordinary least squares at every grid point: numpy.linalg.lstsq
    exact = FunctionOnScalarRidge(n_basis=15, alpha=0.0, response_grid=hours)
    exact.fit(Sd, Yd)
    ols = np.linalg.lstsq(np.column_stack([np.ones(len(S)), S]), Y, rcond=None)[0]
    assert_rel_close(exact.coef_function_, ols[1:], rtol=1e-8)
    # GCV from pooled statistics: the same choice and fit as in memory
    model = FunctionOnScalarRidge(response_grid=hours).fit(Sd, Yd)
    reference = FunctionOnScalarRidge(response_grid=hours).fit(S, Y)
    assert_same_gcv_fit(model, reference, Sd, S)


def test_functional_pca_on_cluster_equals_in_memory_and_sklearn(client):
    t, X, _ = kiln_runs(1500, n_minutes=41)
    Xd = da.from_array(X, chunks=(200, 41))
    model = FunctionalPCA(4, grid=t).fit(Xd)
    reference = FunctionalPCA(4, grid=t).fit(X)
    assert model.n_samples_seen_ == 1500
    assert_rel_close(model.mean_, reference.mean_)
    assert_rel_close(model.components_, reference.components_)
    assert_rel_close(model.explained_variance_, reference.explained_variance_)
    scores = model.transform(Xd)
    assert is_dask_array(scores)
    assert_rel_close(scores.compute(), reference.transform(X))
    # Without a basis, functional PCA is PCA of the curves scaled by the
    # square roots of the quadrature weights (common practice), here
    # sklearn.decomposition.PCA.
    from sklearn.decomposition import PCA

    w = np.diff(t, prepend=t[0]) / 2 + np.diff(t, append=t[-1]) / 2  # trapezoid
    pca = PCA(4, svd_solver="full").fit(X * np.sqrt(w))
    assert_rel_close(model.explained_variance_, pca.explained_variance_, rtol=1e-8)
    # smoothed components in a basis, from the same merged statistics
    smooth = FunctionalPCA(3, grid=t, basis="bspline", n_basis=12, alpha=1e-3).fit(Xd)
    expected = FunctionalPCA(3, grid=t, basis="bspline", n_basis=12, alpha=1e-3).fit(X)
    assert_rel_close(smooth.components_, expected.components_)


def test_curve_smoother_on_cluster_equals_in_memory(client):
    t, X, _ = kiln_runs(600, n_minutes=61)
    X[10, 5:9] = np.nan  # a thermocouple drop-out
    lines = 300 + 80 * t  # straight ramps, in the penalty's null space
    X[20:23] = lines
    Xd = da.from_array(X, chunks=(90, 61))
    model = CurveSmoother(grid=t).fit(Xd)
    reference = CurveSmoother(grid=t).fit(X)
    # the shared alpha by GCV from statistics pooled on the workers
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=RTOL)
    assert_rel_close(model.criterion_path_, reference.criterion_path_)
    smooth = model.transform(Xd)
    assert is_dask_array(smooth)
    smooth = smooth.compute()
    assert_rel_close(smooth, reference.transform(X))
    # A second-derivative roughness penalty leaves straight lines unchanged
    # (common practice: lines are its null space), whatever alpha GCV chose.
    np.testing.assert_allclose(smooth[20:23], np.broadcast_to(lines, (3, 61)), rtol=1e-9)


def test_functional_ridge_on_cluster_equals_in_memory_and_trapezoid(client):
    t, X, strength = kiln_runs(500, n_minutes=61)
    Xd = da.from_array(X, chunks=(70, 61))
    model = FunctionalRidgeCV().fit(Xd, da.from_array(strength, chunks=70))
    reference = FunctionalRidgeCV().fit(X, strength)
    assert_same_gcv_fit(model, reference, Xd, X)
    # y = 3 + int x(t) dt exactly (scipy.integrate.trapezoid): beta = 1 fits
    # without error and without roughness, so any alpha recovers it
    exact = 3 + integrate.trapezoid(X, t, axis=1)
    ridge = FunctionalRidge(alpha=1.0, grid=t).fit(Xd, exact)
    np.testing.assert_allclose(ridge.coef_function_, 1.0, rtol=1e-7)
    assert ridge.intercept_ == pytest.approx(3.0, rel=1e-7)


def test_function_on_function_on_cluster_equals_in_memory(client):
    # responses: the running integral of each run (scipy's
    # cumulative_trapezoid), a function-on-function relation; the GCV fit from
    # statistics summed on two workers equals the in-memory one
    t, X, _ = kiln_runs(300, n_minutes=61)
    Y = integrate.cumulative_trapezoid(X, t, axis=1, initial=0)
    Xd, Yd = da.from_array(X, chunks=(70, 61)), da.from_array(Y, chunks=(70, 61))
    model = FunctionOnFunctionRidge(grid=t, response_grid=t).fit(Xd, Yd)
    reference = FunctionOnFunctionRidge(grid=t, response_grid=t).fit(X, Y)
    # 1e-8, not RTOL: this model merges raw sums, not centered ones, so on
    # temperatures near 1200 another summation order moves the coefficient
    # surface by about 3e-9 of its size (measured); a fit that dropped or
    # double-counted a block would differ by percents
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=1e-8)
    assert_rel_close(model.coef_function_, reference.coef_function_, rtol=1e-8)
    prediction = model.predict(Xd)
    assert is_dask_array(prediction)
    assert_rel_close(prediction.compute(), reference.predict(X), rtol=1e-8)


def assert_same_logistic_fit(model, reference, rtol=1e-8):
    """A Dask fit chose the same alpha from the same UBRE path as the
    in-memory fit and predicts the same probabilities."""
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=rtol)
    assert_rel_close(model.criterion_path_, reference.criterion_path_, rtol)
    assert_rel_close(model.coef_function_, reference.coef_function_, rtol)
    assert_rel_close(model.intercept_, reference.intercept_, rtol)


def kiln_classes(n_runs, n_classes, seed=0):
    """Kiln runs labelled by strength tercile (3 classes) or by strength
    above the median (2), with noise so the classes overlap."""
    t, X, strength = kiln_runs(n_runs, n_minutes=61, seed=seed)
    noisy = strength + np.random.default_rng(seed + 1).normal(0, strength.std(), n_runs)
    cuts = np.quantile(noisy, np.linspace(0, 1, n_classes + 1)[1:-1])
    return t, X, np.array(["cracked", "sound", "warped"])[np.digitize(noisy, cuts)]


def test_functional_logistic_on_cluster_equals_in_memory(client):
    # Each Newton step is one pass of summed gradients and Hessians over the
    # blocks, on the workers: the same fit as in memory (sums in another
    # order, 1e-8 relative), the automatic alpha included, with weights.
    from skfunc.linear_model import FunctionalLogisticRegression

    t, X, labels = kiln_classes(400, 3)
    weights = np.random.default_rng(3).integers(1, 4, len(X)).astype(float)
    Xd = da.from_array(X, chunks=(70, 61))
    model = FunctionalLogisticRegression(grid=t).fit(
        Xd, da.from_array(labels, chunks=70), sample_weight=weights)
    reference = FunctionalLogisticRegression(grid=t).fit(X, labels, sample_weight=weights)
    assert_same_logistic_fit(model, reference)
    assert_rel_close(model.predict_proba(X), reference.predict_proba(X), 1e-8)


@pytest.mark.parametrize("factor", [1e150, 1e-170])
def test_functional_logistic_on_cluster_at_extreme_scales(client, factor):
    # Curves near 1e153 or 1e-167 (squares beyond float64's range) with a
    # covariate near 1: the statistics are of the design divided by powers
    # of two, merged exactly across blocks, so the Dask fit equals the
    # in-memory one (1e-8, as above) and both equal the fit at scale 1 with
    # the curves' coefficients divided by the factor (a linear predictor's
    # coefficients scale inversely with their input, common practice; alpha
    # is unit-free). Unscaled cross products overflow to inf at 1e150 (an
    # error) and underflow to 0 at 1e-170 (a zero coefficient function).
    from skfunc.linear_model import FunctionalLogisticRegression

    t, X, labels = kiln_classes(300, 2)
    load = np.random.default_rng(5).uniform(2, 4, (len(X), 1))
    params = {"grid": t, "n_covariates": 1}
    reference = FunctionalLogisticRegression(**params).fit(np.hstack([X, load]), labels)
    scaled = np.hstack([X * factor, load])
    with warnings.catch_warnings():
        # coef_covariance_ (squares of coefficients near 1e-150 or 1e170)
        # leaves float64 in the data's units: warned, as for the ridge models
        warnings.simplefilter("ignore", RuntimeWarning)
        model = FunctionalLogisticRegression(**params).fit(
            da.from_array(scaled, chunks=(70, 62)), da.from_array(labels, chunks=70))
        memory = FunctionalLogisticRegression(**params).fit(scaled, labels)
    assert_same_logistic_fit(model, memory)
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=1e-8)
    assert_rel_close(model.criterion_path_, reference.criterion_path_, 1e-8)
    assert_rel_close(model.coef_function_ * factor, reference.coef_function_, 1e-8)
    assert_rel_close(model.covariate_coef_, reference.covariate_coef_, 1e-8)
    assert_rel_close(model.intercept_, reference.intercept_, 1e-8)


def test_functional_logistic_gathers_no_rows(sync, monkeypatch):
    # Neither the curves nor the labels are converted to numpy as a whole.
    from skfunc.linear_model import FunctionalLogisticRegression

    t, X, labels = kiln_classes(300, 2)
    Xd = da.from_array(X, chunks=(64, 61))
    yd = da.from_array(labels, chunks=64)

    def refuse(*args, **kwargs):
        raise AssertionError("a dask array was converted to numpy as a whole")

    params = {"grid": t, "class_weight": "balanced"}
    monkeypatch.setattr(type(Xd), "__array__", refuse)
    model = FunctionalLogisticRegression(**params).fit(Xd, yd)
    monkeypatch.undo()
    reference = FunctionalLogisticRegression(**params).fit(X, labels)
    assert_same_logistic_fit(model, reference)


def test_statistics_are_reduced_on_workers_in_a_tree(client):
    rng = np.random.default_rng(2)
    Z = rng.normal(size=(2000, 6))
    y = rng.normal(size=(2000, 2))
    # 40 blocks: two levels of merges (SPLIT_EVERY = 8)
    Zd = da.from_array(Z, chunks=(50, 6))
    yd = da.from_array(y, chunks=(50, 2))
    stats = compute_statistics(cross_products, Zd, yd, None)
    # the cross products themselves by plain numpy
    assert stats["n"] == 2000
    assert_rel_close(stats["zz"], Z.T @ Z)
    assert_rel_close(stats["zy"], Z.T @ y)
    assert_rel_close(stats["yy"], (y**2).sum(axis=0))


def _kept_rows_case(monkeypatch):
    from skfunc import _blocks
    from skfunc._blocks import KeptRows

    monkeypatch.setattr(_blocks, "KEPT_MIN_VALUES", 1)  # keep the 8 small blocks
    rng = np.random.default_rng(5)
    Z = rng.normal(size=(4000, 30))
    y = rng.normal(size=(4000, 2))
    kept = KeptRows(da.from_array(Z, chunks=(500, 30)), da.from_array(y, chunks=(500, 2)), None)
    return kept, Z, y


def _computed_tasks(stream):
    return [t for t in stream.data if any(s["action"] == "compute" for s in t["startstops"])]


def test_kept_rows_pass_is_one_call_per_worker(client, monkeypatch):
    # a pass over kept rows on a cluster: one call of the actor that holds
    # a worker's blocks per worker, no task through the scheduler, and the
    # sums of numpy's products over all rows (however the blocks are grouped)
    import gc

    import distributed

    kept, Z, y = _kept_rows_case(monkeypatch)
    workers = set(client.scheduler_info()["workers"])
    kept(cross_products)  # the first pass groups the blocks by worker
    groups = kept._worker_groups[1]
    assert 1 <= len(groups) <= len(workers)
    assert sum(len(blocks) for _, blocks in groups) == 8
    assert len(kept._holders) == len(groups)
    with distributed.get_task_stream(client) as stream:
        stats = kept(cross_products)
    assert _computed_tasks(stream) == []
    assert stats["n"] == 4000
    assert_rel_close(stats["zz"], Z.T @ Z)
    assert_rel_close(stats["zy"], Z.T @ y)
    # the actors (and their references to the blocks) go with the kept rows
    keys = {holder.key for holder in kept._holders}
    assert keys <= set(client.who_has())
    del kept, groups
    gc.collect()
    for _ in range(100):
        if not keys & set(client.who_has()):
            break
        time.sleep(0.05)
    assert not keys & set(client.who_has())


def test_kept_rows_pass_falls_back_to_tasks(client, monkeypatch):
    # a failed actor call (a lost worker) sends the pass, and the later
    # ones, through one submitted task per worker, with the same sums
    import distributed

    class Lost:
        def run(self, statistics, merge):
            raise OSError("worker lost")

    kept, Z, y = _kept_rows_case(monkeypatch)
    kept(cross_products)
    kept._holders = [Lost()]
    with distributed.get_task_stream(client) as stream:
        stats = kept(cross_products)
    assert kept._holders == []
    assert len(_computed_tasks(stream)) == len(kept._worker_groups[1])
    assert stats["n"] == 4000
    assert_rel_close(stats["zz"], Z.T @ Z)
    assert_rel_close(stats["zy"], Z.T @ y)


def test_centered_statistics_merge_exactly_on_workers(client):
    # kiln-like design: means near 1200, spread of a few units
    rng = np.random.default_rng(4)
    Z = 1200 + rng.normal(size=(3000, 5)) * [1, 2, 3, 4, 5]
    y = 900 + Z @ rng.normal(size=(5, 2)) * 0.01 + rng.normal(size=(3000, 2))
    w = rng.uniform(0.5, 2.0, 3000)
    stats = compute_statistics(
        centered_cross_products,
        da.from_array(Z, chunks=(125, 5)),
        da.from_array(y, chunks=(125, 2)),
        w,
    )
    zz, zy, yy, z_mean, _ = centered(stats)
    # weighted scatter matrices by numpy.cov with frequency weights (fweights
    # semantics: aweights with ddof=0 gives sum w (z - m)(z - m)' / sum w)
    joint = np.cov(np.column_stack([Z, y]).T, aweights=w, ddof=0) * w.sum()
    assert_rel_close(zz, joint[:5, :5])
    assert_rel_close(zy, joint[:5, 5:])
    assert_rel_close(yy, np.diag(joint[5:, 5:]))
    assert_rel_close(z_mean, np.average(Z, axis=0, weights=w))


def test_grid_search_of_pipeline_under_dask_joblib_backend(client):
    import joblib
    from distributed import get_task_stream

    t, X, strength = kiln_runs(90)
    pipe = Pipeline([("features", BasisFeatures(grid=t)), ("ridge", Ridge())])
    grid = {"features__n_basis": [5, 9], "ridge__alpha": [1e-3, 1.0]}
    local = GridSearchCV(pipe, grid, cv=3).fit(X, strength)
    with get_task_stream(client) as stream, joblib.parallel_backend("dask"):
        remote = GridSearchCV(pipe, grid, cv=3).fit(X, strength)
    assert len(stream.data) > 0  # the fits ran on the cluster
    assert remote.best_params_ == local.best_params_
    assert_rel_close(
        remote.cv_results_["mean_test_score"], local.cv_results_["mean_test_score"]
    )


# ---------------------------------------------------------------------------
# synchronous scheduler: laziness, layout rules, bad input
# ---------------------------------------------------------------------------


@pytest.fixture
def sync():
    with dask.config.set(scheduler="sync"):
        yield


def test_nothing_is_gathered(sync, monkeypatch):
    _, X, _ = kiln_runs(300)
    Xd = da.from_array(X, chunks=(64, 121))

    def refuse(*args, **kwargs):
        raise AssertionError("a dask array was converted to numpy as a whole")

    monkeypatch.setattr(type(Xd), "__array__", refuse)
    features = BasisFeatures(n_basis=8).fit(Xd)
    Zd = features.transform(Xd)
    monkeypatch.undo()
    assert_rel_close(Zd.compute(), BasisFeatures(n_basis=8).fit(X).transform(X))


def test_transform_is_lazy(sync):
    _, X, _ = kiln_runs(50)
    features = BasisFeatures(n_basis=8).fit(X)
    computed = []

    def spy(block):
        computed.append(block.shape[0])
        return block

    Xd = da.from_array(X, chunks=(20, 121)).map_blocks(spy, meta=np.empty((0, 0)))
    Zd = features.transform(Xd)
    assert computed == [] and Zd.shape == (50, 8)
    Zd.compute()
    assert sorted(computed) == [10, 20, 20]


def test_inverse_transforms_are_lazy(sync):
    t, X, _ = kiln_runs(90, n_minutes=41)
    for est in (BasisFeatures(n_basis=8, grid=t), FunctionalPCA(3, grid=t)):
        Z = est.fit(X).transform(X)
        curves = est.inverse_transform(da.from_array(Z, chunks=(25, 2)))
        assert is_dask_array(curves) and curves.chunks[0] == (25, 25, 25, 15)
        assert_rel_close(curves.compute(), est.inverse_transform(Z))


def test_grid_axis_chunks_are_rechunked_to_whole_rows(sync):
    _, X, _ = kiln_runs(60)
    Xd = da.from_array(X, chunks=(25, 40))
    features = BasisFeatures(n_basis=8).fit(Xd)
    Zd = features.transform(Xd)
    assert Zd.chunks == ((25, 25, 10), (8,))
    assert_rel_close(Zd.compute(), BasisFeatures(n_basis=8).fit(X).transform(X))


def test_misaligned_row_chunks_are_an_error(sync):
    _, X, y = kiln_runs(60)
    features = BasisFeatures()
    Xd = da.from_array(X, chunks=(20, 121))
    with pytest.raises(ValueError, match=r"row chunks of X and y \(or sample_weight\)"):
        validate_dask(features, Xd, da.from_array(y, chunks=15), reset=True)
    # a numpy y is split along X's row chunks
    _, yd = validate_dask(features, Xd, y, reset=True)
    assert yd.chunks == Xd.chunks[:1]
    with pytest.raises(ValueError, match="inconsistent numbers of samples"):
        validate_dask(features, Xd, da.from_array(y[:50], chunks=10), reset=True)


def test_non_finite_values_are_found_per_block(sync):
    _, X, _ = kiln_runs(60)
    X[47, 3] = np.inf
    with pytest.raises(ValueError, match="row 47"):
        BasisFeatures().fit(da.from_array(X, chunks=(20, 121)))
    features = BasisFeatures().fit(X[:40])
    Zd = features.transform(da.from_array(X, chunks=(20, 121)))  # lazy: no error yet
    with pytest.raises(ValueError, match="contains NaN or infinity"):
        Zd.compute()


@pytest.mark.parametrize(
    "make, error, match",
    [
        (lambda X: da.from_array(X[:, 0], chunks=10), ValueError, "2-D"),
        (lambda X: da.from_array(X[:, :1], chunks=10), ValueError, "at least 2 grid"),
        (lambda X: da.from_array(X.astype(complex), chunks=10), ValueError, "Complex"),
        (lambda X: da.from_array(X.astype(str), chunks=10), TypeError, "numbers"),
        (lambda X: da.from_array(X, chunks=10)[da.from_array(X)[:, 0] > 0],
         ValueError, "unknown chunk sizes"),
    ],
)
def test_bad_dask_input(sync, make, error, match):
    _, X, _ = kiln_runs(30)
    with pytest.raises(error, match=match):
        BasisFeatures().fit(make(X))


def test_other_dask_collections_are_refused_with_advice(sync):
    _, X, _ = kiln_runs(30)
    with pytest.raises(TypeError, match="to_dask_array"):
        BasisFeatures().fit(dask.delayed(X))


def test_estimators_without_dask_support_refuse_dask_input(sync):
    from skfunc.outliers import CurveOutlierDetector

    _, X, _ = kiln_runs(30)
    with pytest.raises(TypeError, match="does not accept dask arrays yet"):
        CurveOutlierDetector().fit(da.from_array(X, chunks=10))


def test_integer_and_float32_dtypes_follow_sklearn(sync):
    _, X, _ = kiln_runs(30)
    Xi = np.round(X).astype(np.int64)
    features = BasisFeatures(n_basis=6).fit(da.from_array(Xi, chunks=10))
    # sklearn's check_array converts integers to float64 (documented behaviour)
    assert_rel_close(
        features.transform(da.from_array(Xi, chunks=10)).compute(),
        BasisFeatures(n_basis=6).fit(Xi).transform(Xi),
    )
    Xf = da.from_array(X.astype(np.float32), chunks=10)
    assert validate_dask(BasisFeatures(), Xf, reset=True).dtype == np.float32


def test_partial_fit_over_dask_batches(sync):
    t, X, _ = kiln_runs(90)
    batches = BasisFeatures(grid=t, n_basis=10)
    for start in (0, 30, 60):
        batches.partial_fit(da.from_array(X[start : start + 30], chunks=(16, 121)))
    whole = BasisFeatures(grid=t, n_basis=10).fit(X)
    assert batches.n_samples_seen_ == 90
    assert_rel_close(batches.projection_, whole.projection_)
    with pytest.raises(ValueError, match="121 features"):
        batches.partial_fit(da.from_array(X[:, :60], chunks=10))


def test_function_on_scalar_partial_fit_and_mixed_input(sync):
    hours, S, Y = settings_and_profiles(n_runs=300)
    reference = FunctionOnScalarRidge(response_grid=hours).fit(S, Y)
    batches = FunctionOnScalarRidge(response_grid=hours)
    for start in range(0, 300, 75):
        batches.partial_fit(S[start : start + 75], Y[start : start + 75])
    assert batches.n_samples_seen_ == 300
    assert batches.alpha_ == pytest.approx(reference.alpha_, rel=RTOL)
    assert_rel_close(batches.coef_function_, reference.coef_function_)
    # in-memory covariates beside dask curves are split like the curves
    mixed = FunctionOnScalarRidge(response_grid=hours).fit(
        S, da.from_array(Y, chunks=(64, 15))
    )
    assert_rel_close(mixed.coef_function_, reference.coef_function_)
    with pytest.raises(ValueError, match="response grid of 15 points"):
        batches.partial_fit(S[:10], Y[:10, :12])
    batches.set_params(response_grid=hours * 60)
    with pytest.raises(ValueError, match="differs from the one of its earlier"):
        batches.partial_fit(S[:10], Y[:10])


def test_functional_pca_partial_fit_over_dask_batches(sync):
    t, X, _ = kiln_runs(800, n_minutes=41)
    reference = FunctionalPCA(3, grid=t, basis="bspline", n_basis=15).fit(X)
    batches = FunctionalPCA(3, grid=t, basis="bspline", n_basis=15)
    for start in range(0, 800, 200):
        batches.partial_fit(da.from_array(X[start : start + 200], chunks=(64, 41)))
    assert batches.n_samples_seen_ == 800
    # alpha="auto": folds by row position across batches, as in fit
    assert batches.alpha_ == reference.alpha_
    assert_rel_close(batches.criterion_path_, reference.criterion_path_)
    assert_rel_close(batches.components_, reference.components_)
    with pytest.raises(ValueError, match="svd_solver='randomized' needs all curves"):
        FunctionalPCA(3, svd_solver="randomized").fit(da.from_array(X, chunks=100))
    X[5, 7] = np.nan
    with pytest.raises(ValueError, match="row 5"):
        FunctionalPCA(3).fit(da.from_array(X, chunks=100))


def test_curve_smoother_partial_fit_pools_gcv_statistics(sync):
    t, X, _ = kiln_runs(400, n_minutes=61)
    reference = CurveSmoother(grid=t).fit(X)
    batches = CurveSmoother(grid=t)
    for start in range(0, 400, 100):
        batches.partial_fit(da.from_array(X[start : start + 100], chunks=(30, 61)))
    assert batches.n_samples_seen_ == 400
    assert batches.alpha_ == pytest.approx(reference.alpha_, rel=RTOL)
    assert_rel_close(batches.criterion_path_, reference.criterion_path_)
    assert_rel_close(batches.projection_, reference.projection_)
    with pytest.raises(ValueError, match="61 features"):
        batches.partial_fit(X[:5, :30])
    batches.set_params(grid=t * 60)
    with pytest.raises(ValueError, match="grid that differs from the one of its earlier"):
        batches.partial_fit(X[:5])


def test_curve_smoother_merges_blocks_of_very_different_magnitudes(sync):
    # Half the curves near 1e-147, half near 1e153: each block's criterion
    # statistics are of its curves divided by its own power of two and merged
    # to the largest exactly, so Dask blocks and partial_fit batches (the
    # small ones first) give the in-memory fit. The GCV and REML scores of
    # curves multiplied by c are c^2 times those of the curves (GCV is a mean
    # square; REML shifts by a constant: common practice), so the choice is
    # that of the curves divided by 1e150, where the small ones are 0.
    t, X, _ = kiln_runs(600, n_minutes=61)
    X[10, 5:9] = np.nan  # a thermocouple drop-out
    mixed = np.vstack([X[:300] * 1e-150, X[300:] * 1e150])
    for criterion in ("gcv", "reml"):
        reference = CurveSmoother(grid=t, criterion=criterion).fit(mixed)
        blocks = CurveSmoother(grid=t, criterion=criterion).fit(
            da.from_array(mixed, chunks=(100, 61)))
        batches = CurveSmoother(grid=t, criterion=criterion)
        batches.partial_fit(mixed[:300]).partial_fit(mixed[300:])
        unit = CurveSmoother(grid=t, criterion=criterion).fit(
            np.vstack([X[:300] * 0.0, X[300:]]))  # (the drop-out kept)
        for model in (blocks, batches):
            assert model.alpha_ == pytest.approx(reference.alpha_, rel=RTOL)
            assert_rel_close(model.criterion_path_, reference.criterion_path_, 1e-8)
            assert_rel_close(model.projection_, reference.projection_)
        assert reference.alpha_ == pytest.approx(unit.alpha_, rel=RTOL)
        if criterion == "gcv":
            assert_rel_close(reference.criterion_path_, unit.criterion_path_ * 1e300, 1e-8)


def test_functional_ridge_partial_fit_and_memory_only_criteria(sync):
    t, X, strength = kiln_runs(300, n_minutes=61)
    targets = np.column_stack([strength, np.sqrt(strength)])
    for cls, kwargs, y in [
        (FunctionalRidge, {"alpha": 1e-3}, strength),
        (FunctionalRidgeCV, {}, strength),
        (FunctionalRidgeCV, {"alpha_per_target": True}, targets),
    ]:
        reference = cls(**kwargs).fit(X, y)
        batches = cls(**kwargs)
        for start in range(0, 300, 100):
            batch = slice(start, start + 100)
            batches.partial_fit(da.from_array(X[batch], chunks=(40, 61)), y[batch])
        assert batches.n_samples_seen_ == 300
        assert_rel_close(batches.coef_function_, reference.coef_function_)
    with pytest.raises(ValueError, match="every batch needs the same targets"):
        batches.partial_fit(X[:10], strength[:10])
    for kwargs in ({"criterion": "loo"}, {"cv": 3}):
        with pytest.raises(ValueError, match="criterion='gcv' or 'reml' with cv=None only"):
            FunctionalRidgeCV(**kwargs).partial_fit(X, strength)
        with pytest.raises(ValueError, match="criterion='gcv' or 'reml' with cv=None only"):
            FunctionalRidgeCV(**kwargs).fit(da.from_array(X, chunks=100), strength)


@pytest.mark.slow  # a fresh Python process
def test_dask_is_not_imported_for_numpy_input():
    code = (
        "import sys, numpy as np; from skfunc import BasisFeatures;"
        "X = np.random.default_rng(0).normal(size=(5, 9));"
        "BasisFeatures().fit(X).transform(X); BasisFeatures().partial_fit(X);"
        "assert not any(m.split('.')[0] == 'dask' for m in sys.modules), 'dask'"
    )
    subprocess.run([sys.executable, "-c", code], check=True, cwd=_root())


def _root():
    import pathlib

    return str(pathlib.Path(__file__).resolve().parents[1])


def sparse_kiln_runs(n_runs, n_minutes=61, per_run=5, seed=0):
    """Invented kiln-firing runs read by hand at ``per_run`` random minutes
    each (NaN elsewhere): the sparse curves of SparseFunctionalPCA."""
    grid, X, _ = kiln_runs(n_runs, n_minutes, seed)
    rng = np.random.default_rng(seed)
    keep = rng.random(X.shape).argsort(axis=1) < per_run
    return grid, np.where(keep, X, np.nan)


def test_sparse_fpca_on_cluster_equals_in_memory(client, monkeypatch):
    # The moment pass and every EM step are tree-reduced sums on the
    # workers; the curves are never converted to numpy in this process.
    # Equal to the in-memory fit within 1e-8 (the order of the sums
    # differs, and the EM iterates on them). Ten EM steps (neither fit
    # converges in 100 on these curves; each step is one more round of the
    # same sums on the workers).
    from skfunc.decomposition import SparseFunctionalPCA

    t, X = sparse_kiln_runs(600)
    Xd = da.from_array(X, chunks=(100, X.shape[1]))

    def refuse(*args, **kwargs):
        raise AssertionError("a dask array was converted to numpy as a whole")

    monkeypatch.setattr(type(Xd), "__array__", refuse)
    model = SparseFunctionalPCA(2, grid=t, max_iter=10).fit(Xd)
    scores = model.transform(Xd)
    monkeypatch.undo()
    reference = SparseFunctionalPCA(2, grid=t, max_iter=10).fit(X)
    assert model.n_samples_seen_ == 600 and model.n_iter_ == reference.n_iter_ == 10
    assert model.alpha_ == pytest.approx(reference.alpha_, rel=1e-8)
    assert model.covariance_alpha_ == pytest.approx(reference.covariance_alpha_, rel=1e-8)
    for name in ("mean_", "components_", "explained_variance_", "noise_variance_",
                 "log_likelihood_"):
        assert_rel_close(getattr(model, name), getattr(reference, name), rtol=1e-8)
    assert is_dask_array(scores)
    assert_rel_close(scores.compute(), reference.transform(X), rtol=1e-8)


def refuse_conversion(*args, **kwargs):
    raise AssertionError("a dask array was converted to numpy as a whole")


def assert_aligner_on_cluster_equals_in_memory(monkeypatch, make, X, rows, attributes,
                                               **fit_params):
    """Fit ``make()`` on a dask copy of X in blocks of ``rows`` (never
    converted to numpy in this process) and on X itself: the fitted
    ``attributes``, ``transform`` and ``transform_warps`` (and ``distances``
    where there is one) equal within 1e-8 (the sums run in another order),
    the dask outputs lazy."""
    Xd = da.from_array(X, chunks=(rows, X.shape[1]))
    monkeypatch.setattr(type(Xd), "__array__", refuse_conversion)
    model = make().fit(Xd, **fit_params)
    outputs = {"transform": model.transform(Xd), "transform_warps": model.transform_warps(Xd)}
    distances = model.distances(Xd) if hasattr(model, "distances") else None
    monkeypatch.undo()
    reference = make().fit(X, **fit_params)
    assert getattr(model, "n_iter_", None) == getattr(reference, "n_iter_", None)
    for name in attributes:
        assert_rel_close(getattr(model, name), getattr(reference, name), rtol=1e-8)
    for method, lazy in outputs.items():
        assert is_dask_array(lazy)
        assert_rel_close(lazy.compute(), getattr(reference, method)(X), rtol=1e-8)
    if distances is not None:
        for got, expected in zip(distances, reference.distances(X), strict=True):
            assert_rel_close(got, expected, rtol=1e-8)


@pytest.mark.parametrize("ends", ["constant", "overlap"])
def test_shift_aligner_on_cluster_equals_in_memory(client, monkeypatch, ends):
    # Each Procrustes iteration is a pass over the rows persisted on the
    # workers: per-block shifts (one number per curve comes back) and
    # per-block sums of the shifted curves.
    from skfunc.alignment import ShiftAligner

    t, X, _ = kiln_runs(400)
    delays = np.random.default_rng(4).uniform(-40, 40, 400)  # minutes
    X = np.array([np.interp(t - d, t, x) for d, x in zip(delays, X, strict=True)])
    assert_aligner_on_cluster_equals_in_memory(
        monkeypatch, lambda: ShiftAligner(ends=ends, grid=t), X, 90, ("template_", "shifts_"))


@pytest.mark.parametrize("given", [False, True])
def test_landmark_aligner_on_cluster_equals_in_memory(client, monkeypatch, given):
    # Landmarks found block by block on the workers (or given, one row per
    # curve), the template from per-block sums; landmarks given with a dask
    # X at transform time are refused with advice.
    from skfunc.alignment import LandmarkAligner

    t = np.linspace(0, 1, 121)
    rng = np.random.default_rng(5)
    peaks = rng.uniform(0.35, 0.65, 500)
    X = np.exp(-((t - peaks[:, None]) / 0.08) ** 2) + 0.01 * rng.standard_normal((500, 121))
    assert_aligner_on_cluster_equals_in_memory(
        monkeypatch, lambda: LandmarkAligner(grid=t), X, 110,
        ("landmarks_", "target_landmarks_", "template_"),
        landmarks=peaks[:, None] if given else None)
    model = LandmarkAligner(grid=t).fit(X)
    with pytest.raises(ValueError, match="landmarks= cannot be given with a dask X"):
        model.transform(da.from_array(X, chunks=(110, 121)), landmarks=peaks[:, None])


def test_elastic_aligner_on_cluster_equals_in_memory(client, monkeypatch):
    # Each Karcher iteration: one dynamic program per curve on the workers,
    # the block's warps kept there between the two sums (the mean warp, then
    # the mean warped square-root slope function).
    from skfunc.alignment import ElasticAligner

    t = np.linspace(0, 1, 41)
    rng = np.random.default_rng(6)
    powers = rng.uniform(0.7, 1.4, 150)
    X = np.sin(np.pi * t[None, :] ** powers[:, None]) + 0.01 * rng.standard_normal((150, 41))
    assert_aligner_on_cluster_equals_in_memory(
        monkeypatch, lambda: ElasticAligner(grid=t, max_iter=3), X, 40,
        ("template_srsf_", "template_"))
