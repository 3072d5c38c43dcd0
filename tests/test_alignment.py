"""Checks of skfunc.alignment against outside references.

Sources are named beside each check: published properties of the Fisher-Rao
metric (Srivastava, Wu, Kurtek, Klassen & Marron 2011, arXiv:1103.3817),
scipy (``scipy.signal.correlate``, ``np.interp``), and curves built from known
shifts and warps (the truth is the construction).
"""

import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator
from scipy.signal import correlate
from sklearn.linear_model import Ridge
from sklearn.model_selection import GridSearchCV
from sklearn.pipeline import FeatureUnion, make_pipeline

from skfunc.alignment import (
    ElasticAligner,
    LandmarkAligner,
    ShiftAligner,
    amplitude_distance,
    fisher_rao_distance,
)
from skfunc.decomposition import FunctionalPCA


def bump(t, centre=0.5, width=0.1):
    return np.exp(-(((t - centre) / width) ** 2))


def two_bumps(t):
    return bump(t, 0.35, 0.08) + 0.6 * bump(t, 0.7, 0.06)


def l2(t, values):
    """L2 norm by numpy's trapezoid rule (outside reference)."""
    return np.sqrt(np.trapezoid(values ** 2, t, axis=-1))


def uneven_grid(m, seed=0):
    rng = np.random.default_rng(seed)
    inner = np.sort(rng.uniform(0, 1, m - 2))
    return np.concatenate([[0.0], inner, [1.0]])


def warp_family(t, a):
    """Warps gamma(t) = t + a t (1 - t), strictly increasing for |a| < 1."""
    return t + np.asarray(a)[:, None] * t * (1 - t)


# -- shift ---------------------------------------------------------------------


@pytest.mark.parametrize("ends", ["constant", "overlap"])
@pytest.mark.parametrize("given_template", [False, True])
def test_shift_recovers_known_delays(ends, given_template):
    # curves template(t - d_i) with known d_i; the aligned curve x(t + d)
    # equals the template for d = d_i (construction). Target: 1% of the domain.
    t = np.linspace(0, 1, 201)
    delays = np.array([-0.12, -0.05, 0.0, 0.04, 0.13])
    delays -= delays.mean()  # without a template, shifts are centred
    X = bump(t[None, :] - delays[:, None])
    template = bump(t) if given_template else None
    aligner = ShiftAligner(ends=ends, template=template).fit(X)
    np.testing.assert_allclose(aligner.shifts_, delays, atol=0.01)
    # a sign error would give -delays: make sure the test can tell
    assert np.max(np.abs(-aligner.shifts_ - delays)) > 0.1
    aligned = aligner.transform(X)
    assert np.max(l2(t, aligned - bump(t))) < 0.05


def test_shift_agrees_with_cross_correlation_peak():
    # On evenly sampled curves that vanish near the ends, the L2-minimising
    # shift maximises the cross-correlation (the shifted curve's norm does
    # not change); scipy.signal.correlate gives it at whole grid steps.
    rng = np.random.default_rng(1)
    m = 301
    t = np.linspace(0, 1, m)
    h = t[1] - t[0]
    template = bump(t, 0.5, 0.07) + 0.5 * bump(t, 0.42, 0.04)
    centres = rng.uniform(0.4, 0.6, 8)
    X = bump(t, centres[:, None], rng.uniform(0.06, 0.09, (8, 1)))
    X += 0.4 * bump(t, centres[:, None] - 0.06, 0.04)
    aligner = ShiftAligner(template=template, max_shift=0.2).fit(X)
    for x, shift in zip(X, aligner.shifts_):
        lags = np.arange(-(m - 1), m)
        lag = lags[np.argmax(correlate(x, template, mode="full"))]
        # scipy's lag is whole steps; ours is refined between them
        assert abs(shift - lag * h) <= h


def test_shifted_curves_are_each_rows_own_interpolation():
    # 3,000 curves go in several row blocks: every aligned curve must be
    # numpy's np.interp of its own row at t + d_i (constant beyond the ends),
    # and one Procrustes step's template the mean of the rows shifted by the
    # centred shifts against X's mean. Rows laid end to end in one np.interp
    # cost precision through their offsets: 1.8e-11 here with cache-sized
    # blocks, 7.9e-11 with one block of all 3,000 rows
    rng = np.random.default_rng(40)
    t = np.linspace(0, 1, 200)
    X = (np.sin(2 * np.pi * (t - rng.uniform(-0.1, 0.1, (3000, 1))))
         + 0.1 * rng.standard_normal((3000, 200)))
    aligner = ShiftAligner(max_iter=1).fit(X)
    expected = np.array([np.interp(t + d, t, x) for d, x in zip(aligner.shifts_, X)])
    np.testing.assert_allclose(aligner.transform(X), expected, rtol=0, atol=4e-11)
    d = ShiftAligner(template=X.mean(axis=0)).fit(X).shifts_
    first = np.array([np.interp(t + s, t, x) for s, x in zip(d - d.mean(), X)])
    np.testing.assert_allclose(aligner.template_, first.mean(axis=0), rtol=0, atol=1e-12)


def test_shift_bounded_by_max_shift():
    t = np.linspace(0, 1, 101)
    X = bump(t[None, :] - np.array([[-0.3], [0.0], [0.3]]))
    aligner = ShiftAligner(max_shift=0.1, template=bump(t)).fit(X)
    assert np.all(np.abs(aligner.shifts_) <= 0.1 + 1e-12)
    np.testing.assert_allclose(np.abs(aligner.shifts_[[0, 2]]), 0.1)


def test_shift_warps_and_inverse_transform():
    t = np.linspace(0, 1, 201)
    delays = np.array([-0.05, 0.05])
    X = bump(t[None, :] - delays[:, None])
    aligner = ShiftAligner(template=bump(t)).fit(X)
    warps = aligner.transform_warps(X)
    # warps are the curves' clocks t - d_i (construction)
    np.testing.assert_allclose(warps, t - delays[:, None], atol=0.01)
    back = aligner.inverse_transform(aligner.transform(X), warps)
    np.testing.assert_allclose(back, X, atol=1e-2)


# -- landmarks -----------------------------------------------------------------


def test_landmarks_map_exactly():
    t = np.linspace(0, 1, 101)
    rng = np.random.default_rng(2)
    X = np.sin(2 * np.pi * t * rng.uniform(1, 2, (6, 1))) + t
    landmarks = np.sort(rng.uniform(0.1, 0.9, (6, 2)), axis=1)
    targets = np.array([0.3, 0.7])  # grid points t[30], t[70]
    aligner = LandmarkAligner(target_landmarks=targets).fit(X, landmarks=landmarks)
    aligned = aligner.transform(X, landmarks=landmarks)
    # aligned(tau_k) = x(l_k), with x read by linear interpolation (np.interp)
    for k, j in enumerate([30, 70]):
        expected = [np.interp(lk, t, x) for lk, x in zip(landmarks[:, k], X)]
        np.testing.assert_allclose(aligned[:, j], expected, rtol=0, atol=1e-12)


def test_landmark_warps_are_strictly_increasing_and_fix_the_ends():
    t = uneven_grid(120)
    rng = np.random.default_rng(3)
    landmarks = np.sort(rng.uniform(0.05, 0.95, (10, 3)), axis=1)
    X = np.cos(3 * t) + rng.normal(size=(10, 1))
    aligner = LandmarkAligner(grid=t).fit(X, landmarks=landmarks)
    warps = aligner.transform_warps(X, landmarks=landmarks)
    assert np.all(np.diff(warps, axis=1) > 0)
    np.testing.assert_array_equal(warps[:, 0], 0.0)
    np.testing.assert_array_equal(warps[:, -1], 1.0)
    # the clock is scipy's PCHIP through (landmarks -> targets), so it
    # carries each landmark exactly to its target
    knots = np.column_stack([np.zeros(10), landmarks, np.ones(10)])
    targets = np.concatenate([[0.0], aligner.target_landmarks_, [1.0]])
    for row, warp in zip(knots, warps):
        np.testing.assert_allclose(warp, PchipInterpolator(row, targets)(t), atol=1e-12)


def test_peak_landmarks_found_between_grid_points():
    t = np.linspace(0, 1, 41)
    centres = np.array([0.33, 0.5, 0.61])
    X = bump(t, centres[:, None], 0.15)
    aligner = LandmarkAligner().fit(X)
    # construction: the peaks are at the centres; the parabola through three
    # points of a Gaussian is within ~1e-3 of its top at this spacing
    np.testing.assert_allclose(aligner.landmarks_[:, 0], centres, atol=2e-3)
    aligned = aligner.transform(X)
    assert np.ptp(t[np.argmax(aligned, axis=1)]) <= t[1] - t[0]


def test_callable_landmarks_and_trough():
    t = np.linspace(0, 1, 81)
    X = -bump(t, np.array([[0.4], [0.6]]), 0.1)

    def first_crossing(X, grid):
        # time where the curve first falls below -0.5 (threshold crossing)
        j = np.argmax(X < -0.5, axis=1)
        return grid[j][:, None]

    by_trough = LandmarkAligner("trough").fit(X)
    by_crossing = LandmarkAligner(first_crossing).fit(X)
    np.testing.assert_allclose(by_trough.landmarks_[:, 0], [0.4, 0.6], atol=2e-3)
    assert np.all(np.diff(by_crossing.landmarks_[:, 0]) > 0.15)


# -- elastic -------------------------------------------------------------------


def test_fisher_rao_distance_invariant_to_a_common_warp():
    # d(f o g, h o g) = d(f, h): Srivastava et al. (2011), section 3.2 (the
    # action of warps on square-root slope functions is an L2 isometry)
    t = np.linspace(0, 1, 1001)
    f = two_bumps(t)
    h = np.sin(3 * t) + 0.5 * bump(t, 0.6)
    gamma = warp_family(t, [0.9])[0]
    f_warped, h_warped = np.interp(gamma, t, f), np.interp(gamma, t, h)
    before = fisher_rao_distance([f], [h], grid=t)[0]
    after = fisher_rao_distance([f_warped], [h_warped], grid=t)[0]
    assert abs(after - before) < 1e-2 * before
    # the plain L2 distance is not invariant: the test could tell
    assert abs(l2(t, f_warped - h_warped) - l2(t, f - h)) > 0.05 * l2(t, f - h)


def test_amplitude_distance_ignores_warping():
    # the amplitude distance is a distance between orbits: zero within one
    # orbit up to the dynamic program's grid error (Srivastava et al. 2011)
    t = np.linspace(0, 1, 201)
    f = two_bumps(t)
    g = np.interp(warp_family(t, [0.5])[0], t, f)
    within = amplitude_distance([f], [g], grid=t)[0]
    rigid = fisher_rao_distance([f], [g], grid=t)[0]
    assert within < 0.1 * rigid


def test_elastic_recovers_a_known_warp():
    # g = f o gamma aligned to f recovers gamma: L2 error below 1e-2 on 200
    # points (target of the task; the dynamic program's own resolution is
    # one grid step, 1/199)
    t = np.linspace(0, 1, 200)
    f = two_bumps(t)
    gamma = t + 0.1 * np.sin(np.pi * t) * t
    g = np.interp(gamma, t, f)
    aligner = ElasticAligner(template=f).fit(g[None, :])
    warp = aligner.transform_warps(g[None, :])[0]
    assert l2(t, warp - gamma) < 1e-2
    # the identity is far from it: the test can fail
    assert l2(t, t - gamma) > 3e-2


@pytest.mark.slow
def test_karcher_mean_recovers_the_bump():
    # warped copies of one bump (warps averaging to the identity): the
    # Karcher mean is the bump again; the cross-sectional mean is flattened
    t = np.linspace(0, 1, 151)
    f = bump(t, 0.5, 0.08)
    X = np.interp(warp_family(t, np.linspace(-0.6, 0.6, 9)), t, f)
    aligner = ElasticAligner().fit(X)
    assert abs(aligner.template_.max() - 1.0) < 0.02
    assert l2(t, aligner.template_ - f) < 0.05
    plain = X.mean(axis=0)
    assert plain.max() < 0.9 and l2(t, plain - f) > 0.1


def test_elastic_distances_and_penalty():
    t = np.linspace(0, 1, 101)
    f = bump(t, 0.5, 0.1)
    X = np.interp(warp_family(t, [0.0, 0.5]), t, f)
    aligner = ElasticAligner(template=f).fit(X)
    amplitude, phase = aligner.distances(X)
    assert phase[0] < 1e-8 and phase[1] > 0.05
    assert np.all(amplitude < 0.1 * fisher_rao_distance([f], [X[1]], grid=t)[0])
    # a large penalty keeps the warp near the identity
    stiff = ElasticAligner(template=f, penalty=1e3).fit(X)
    assert stiff.distances(X)[1][1] < 0.2 * phase[1]


def test_inverse_transform_puts_curves_back():
    t = np.linspace(0, 1, 201)
    f = two_bumps(t)
    X = np.interp(warp_family(t, [-0.4, 0.3]), t, f)
    aligner = ElasticAligner(template=f).fit(X)
    warps = aligner.transform_warps(X)
    back = aligner.inverse_transform(aligner.transform(X), warps)
    assert np.max(l2(t, back - X)) < 0.02


# -- resolution invariance -------------------------------------------------------


GRIDS = [np.linspace(0, 1, 51), np.linspace(0, 1, 201), uneven_grid(201, 4)]


def _on_common(t, values, common):
    return np.array([np.interp(common, t, v) for v in np.atleast_2d(values)])


def test_shift_resolution_invariance():
    common = np.linspace(0, 1, 101)
    delays = np.array([-0.08, -0.02, 0.03, 0.07])
    fits = []
    for t in GRIDS:
        X = two_bumps(t[None, :] - delays[:, None])
        aligner = ShiftAligner(grid=t).fit(X)
        fits.append((aligner.shifts_, _on_common(t, aligner.template_, common)))
    for shifts, template in fits[1:]:
        # 1% of the domain (target), and the templates to the interpolation
        # error of the 51-point grid
        np.testing.assert_allclose(shifts, fits[0][0], atol=0.01)
        assert l2(common, template - fits[0][1])[0] < 0.05


def test_landmark_resolution_invariance():
    common = np.linspace(0, 1, 101)
    centres = np.array([0.4, 0.45, 0.55, 0.6])
    warps = []
    for t in GRIDS:
        X = bump(t, centres[:, None], 0.12)
        aligner = LandmarkAligner(grid=t).fit(X)
        warps.append(_on_common(t, aligner.transform_warps(X), common))
    for w in warps[1:]:
        assert np.max(l2(common, w - warps[0])) < 5e-3


@pytest.mark.slow
def test_elastic_resolution_invariance():
    common = np.linspace(0, 1, 101)
    a = np.array([-0.5, -0.1, 0.2, 0.4])
    fits = []
    for t in GRIDS:
        X = np.interp(warp_family(t, a), t, two_bumps(t))  # rows: f o gamma_i
        aligner = ElasticAligner(grid=t, max_iter=3).fit(X)
        fits.append((_on_common(t, aligner.transform_warps(X), common),
                     _on_common(t, aligner.template_, common)))
    for warps, template in fits[1:]:
        # the 51-point dynamic program moves in steps of 1/50: allow that
        assert np.max(l2(common, warps - fits[0][0])) < 0.02
        assert l2(common, template - fits[0][1])[0] < 0.05


# -- scikit-learn integration ---------------------------------------------------


@pytest.mark.slow
def test_pipeline_and_grid_search_over_penalty():
    rng = np.random.default_rng(5)
    t = np.linspace(0, 1, 40)
    a = rng.uniform(-0.5, 0.5, 40)
    height = rng.uniform(0.5, 1.5, 40)
    X = height[:, None] * np.interp(warp_family(t, a), t, bump(t, 0.5, 0.12))
    y = height + 0.01 * rng.normal(size=40)
    pipe = make_pipeline(ElasticAligner(max_iter=2), FunctionalPCA(n_components=2),
                         Ridge(alpha=1e-3))
    search = GridSearchCV(pipe, {"elasticaligner__penalty": [0.0, 1.0]}, cv=3).fit(X, y)
    assert search.best_params_["elasticaligner__penalty"] in (0.0, 1.0)
    # amplitude (the height) is what remains after alignment: well predicted,
    # far better than from the unaligned curves (R^2 about 0.5 here)
    raw = GridSearchCV(make_pipeline(FunctionalPCA(n_components=2), Ridge(alpha=1e-3)),
                       {"ridge__alpha": [1e-3]}, cv=3).fit(X, y)
    assert search.best_score_ > 0.9 > raw.best_score_ + 0.2


def test_phase_as_features_in_a_feature_union():
    t = np.linspace(0, 1, 101)
    delays = np.array([-0.1, -0.03, 0.02, 0.08, 0.11])
    X = bump(t[None, :] - delays[:, None])
    union = FeatureUnion([
        ("amplitude", make_pipeline(ShiftAligner(), FunctionalPCA(n_components=2))),
        ("phase", ShiftAligner(output="warp_coordinates")),
    ])
    Z = union.fit_transform(X)
    assert Z.shape == (5, 2 + t.size)
    coords = Z[:, 2:]
    warps = ShiftAligner().fit(X).transform_warps(X)
    # Euclidean norms of the coordinates are L2 norms of gamma - identity
    # (numpy's trapezoid rule as the reference)
    np.testing.assert_allclose(np.linalg.norm(coords, axis=1), l2(t, warps - t),
                               rtol=1e-10)
    names = union.get_feature_names_out()
    assert names[2].startswith("phase__shiftaligner_warp_coordinate")


def test_pandas_output_and_feature_names():
    pd = pytest.importorskip("pandas")
    t = np.linspace(0, 1, 21)
    X = pd.DataFrame(bump(t[None, :] - np.array([[0.0], [0.05]])), columns=t)
    out = ShiftAligner().set_output(transform="pandas").fit_transform(X)
    np.testing.assert_allclose(out.columns.astype(float), t)


# -- bad inputs ------------------------------------------------------------------


def test_landmarks_outside_the_domain_or_out_of_order():
    t = np.linspace(0, 1, 21)
    X = np.tile(bump(t), (2, 1))
    with pytest.raises(ValueError, match="not strictly inside the domain"):
        LandmarkAligner().fit(X, landmarks=[[0.2, 1.2], [0.3, 0.5]])
    with pytest.raises(ValueError, match="strictly increasing along each row"):
        LandmarkAligner().fit(X, landmarks=[[0.2, 0.5], [0.6, 0.4]])
    with pytest.raises(ValueError, match="target_landmarks"):
        LandmarkAligner(target_landmarks=[0.0]).fit(X, landmarks=[[0.2], [0.3]])
    with pytest.raises(ValueError, match=r"expected \(n_samples, k\)"):
        LandmarkAligner().fit(X, landmarks=[[0.2, 0.5]])


@pytest.mark.parametrize("cls", [ShiftAligner, LandmarkAligner, ElasticAligner])
def test_nan_is_refused(cls):
    X = np.tile(bump(np.linspace(0, 1, 11)), (3, 1))
    X[1, 4] = np.nan
    with pytest.raises(ValueError, match="NaN"):
        cls().fit(X)


# -- curves too short to warp ----------------------------------------------------


def test_elastic_on_two_points_is_the_identity_with_secant_slopes():
    # Derivation: a warp fixes both ends, so on a grid of two points its
    # values there are the ends themselves: the identity. The slope of the
    # linear interpolant is the secant s = (x1 - x0) / (t1 - t0), so q is the
    # constant sign(s) sqrt(|s|) (Srivastava et al. 2011, eq. (1)) and the L2
    # norm of a constant c on [t0, t1] is |c| sqrt(t1 - t0).
    t = np.array([2.0, 6.0])
    X = np.array([[0.0, 1.0], [0.0, 8.0], [3.0, -1.0]])
    aligner = ElasticAligner(grid=t).fit(X)
    np.testing.assert_array_equal(aligner.transform(X), X)
    np.testing.assert_array_equal(aligner.transform_warps(X), np.tile(t, (3, 1)))
    slope = (X[:, 1] - X[:, 0]) / (t[1] - t[0])
    q = np.sign(slope) * np.sqrt(np.abs(slope))
    # the Karcher mean with identity warps is the plain mean of the q's
    np.testing.assert_allclose(aligner.template_srsf_, [q.mean(), q.mean()])
    amplitude, phase = aligner.distances(X)
    np.testing.assert_allclose(amplitude, np.abs(q - q.mean()) * np.sqrt(4.0))
    np.testing.assert_array_equal(phase, 0.0)
    # with no warp to choose, the elastic distance is the Fisher-Rao one
    np.testing.assert_allclose(amplitude_distance(X, X[::-1], grid=t),
                               np.abs(q - q[::-1]) * 2.0)
    np.testing.assert_allclose(fisher_rao_distance(X, X[::-1], grid=t),
                               np.abs(q - q[::-1]) * 2.0)


def test_elastic_on_three_points_is_the_identity():
    # Derivation: from (0, 0) to (2, 2) with steps (di, dj) in {1..4}^2, the
    # only path is two (1, 1) steps ((1, 2) or (2, 1) leave a step with a zero
    # component), so even curves that a warp would align stay as they are.
    t = np.linspace(0, 1, 3)
    X = np.array([[0.0, 0.9, 1.0], [0.0, 0.1, 1.0]])
    aligner = ElasticAligner().fit(X)
    np.testing.assert_array_equal(aligner.transform(X), X)
    np.testing.assert_array_equal(aligner.transform_warps(X), np.tile(t, (2, 1)))
    # on 4 points the program can move: a step (1, 2) then (2, 1) bends the
    # warp (check that the identity above is the grid's doing, not a no-op)
    t4 = np.linspace(0, 1, 4)
    X4 = np.array([[0.0, 0.8, 0.9, 1.0], [0.0, 0.1, 0.2, 1.0]])
    warps4 = ElasticAligner().fit(X4).transform_warps(X4)
    assert np.abs(warps4 - t4).max() > 0.1


def test_landmark_finders_on_two_points_give_identity_warps():
    # Derivation: no grid point lies inside the domain, so a peak or trough
    # finder finds no landmark, and the only warp fixing the ends is the
    # identity on the two grid points.
    X = np.array([[0.0, 1.0], [0.0, 2.0], [5.0, 3.0]])
    for finder in ("peak", "trough"):
        aligner = LandmarkAligner(finder).fit(X)
        assert aligner.landmarks_.shape == (3, 0)
        assert aligner.target_landmarks_.shape == (0,)
        np.testing.assert_array_equal(aligner.transform(X), X)
        np.testing.assert_array_equal(aligner.transform_warps(X), [[0.0, 1.0]] * 3)
        np.testing.assert_array_equal(aligner.template_, X.mean(axis=0))
        coords = aligner.set_params(output="warp_coordinates").transform(X)
        np.testing.assert_array_equal(coords, 0.0)


def test_explicit_landmarks_on_two_points_are_an_error():
    # landmark times must lie strictly inside the domain, where a grid of two
    # points has no point to carry them
    X = np.array([[0.0, 1.0], [0.0, 2.0]])
    match = "only 2 grid points"
    with pytest.raises(ValueError, match=match):
        LandmarkAligner().fit(X, landmarks=[[0.5], [0.4]])
    with pytest.raises(ValueError, match=match):
        LandmarkAligner(target_landmarks=[0.5]).fit(X)
    with pytest.raises(ValueError, match=match):
        LandmarkAligner(lambda X, grid: np.full((len(X), 1), 0.5)).fit(X)
    fitted = LandmarkAligner().fit(X)
    with pytest.raises(ValueError, match=match):
        fitted.transform(X, landmarks=[[0.5], [0.4]])


@pytest.mark.parametrize("cls", [ShiftAligner, ElasticAligner])
def test_template_on_another_grid(cls):
    X = np.tile(bump(np.linspace(0, 1, 11)), (3, 1))
    with pytest.raises(ValueError, match="template has shape"):
        cls(template=bump(np.linspace(0, 1, 21))).fit(X)


def test_other_bad_inputs():
    X = np.tile(bump(np.linspace(0, 1, 11)), (3, 1))
    with pytest.raises(ValueError, match="max_shift"):
        ShiftAligner(max_shift=2.0).fit(X)
    aligner = ShiftAligner().fit(X)
    with pytest.raises(ValueError, match="needs warps="):
        aligner.inverse_transform(X)
    with pytest.raises(ValueError, match="output='curves'"):
        ShiftAligner(output="warps").fit(X).inverse_transform(X, np.zeros_like(X))
    with pytest.raises(ValueError, match="same shape"):
        fisher_rao_distance(X, X[:, :5])


def test_dynamic_program_reaches_the_textbook_minimum():
    # the recursion of Srivastava et al. (2011, section 3.3) written cell by
    # cell for one curve: E(i, j) = min over steps of E(k, l) + segment cost,
    # with the segment cost by Simpson's rule. The vectorised table must reach
    # the same minimum for every curve of a block, and its path must be a warp.
    from skfunc._warping import DP_STEPS, _DynamicProgram, srsf

    t = np.linspace(0, 1, 25)
    f = two_bumps(t)
    X = np.interp(warp_family(t, [-0.5, 0.0, 0.6]), t, f)
    q1, Q = srsf(t, f[None, :])[0], srsf(t, X)
    program = _DynamicProgram(t, q1, Q, 0.0)
    phi = program.warps()

    def segment(q2, k, ll, i, j):
        h, u = t[i] - t[k], t[j] - t[ll]
        r = np.sqrt(u / h)
        mid1 = np.interp((t[i] + t[k]) / 2, t, q1)
        mid2 = np.interp((t[j] + t[ll]) / 2, t, q2)
        return h / 6 * ((q1[k] - r * q2[ll]) ** 2 + 4 * (mid1 - r * mid2) ** 2
                        + (q1[i] - r * q2[j]) ** 2)

    for row, q2 in enumerate(Q):
        E = {(0, 0): 0.0}
        for i in range(1, t.size):
            for j in range(1, t.size):
                options = [E[i - di, j - dj] + segment(q2, i - di, j - dj, i, j)
                           for di, dj in DP_STEPS if (i - di, j - dj) in E]
                if options:
                    E[i, j] = min(options)
        best = E[t.size - 1, t.size - 1]
        assert program.energy[-1, row, -1] == pytest.approx(best, rel=1e-9, abs=1e-12)
        # the path walked back costs that minimum: its vertices are where phi
        # meets a grid point (coprime steps pass between grid points)
        steps = (t.size - 1) * phi[row]
        vertices = np.flatnonzero(np.abs(steps - np.round(steps)) < 1e-9)
        cells = [(i, int(round(steps[i]))) for i in vertices]
        path_cost = sum(segment(q2, k, ll, i, j)
                        for (k, ll), (i, j) in zip(cells[:-1], cells[1:]))
        assert path_cost == pytest.approx(best, rel=1e-9, abs=1e-12)
    assert np.all(np.diff(phi, axis=1) > 0)
    np.testing.assert_array_equal(phi[:, [0, -1]], [[0.0, 1.0]] * 3)
