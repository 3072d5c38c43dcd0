import numpy as np
import pytest

from skfunc._bases import BSplineBasis, FourierBasis, make_basis
from skfunc._penalized import (
    NotIdentifiableError,
    SplitPath,
    centered,
    centered_cross_products,
    cross_products,
    engine_alpha,
    gcv_score,
    merge,
    penalty_for,
    penalty_scale,
    power_of_two_scale,
)


@pytest.fixture
def problem(rng):
    n, K = 40, 10
    Z = rng.normal(size=(n, K))
    y = rng.normal(size=(n, 3))
    P = BSplineBasis((0, 1), K).penalty(2)
    return Z, y, P


def test_gcv_formula():
    # Craven & Wahba (1979): GCV = n RSS / (n - tr S)^2, here divided by n.
    assert np.isclose(gcv_score(2.0, 3.0, 10), (2.0 / 10) / (1 - 0.3) ** 2)
    assert np.isinf(gcv_score(2.0, 10.0, 10))


def test_statistics_are_sums(rng):
    # Reference: numpy weighted means and covariances (numpy.average, numpy.cov).
    Z, y, w = rng.normal(size=(30, 4)), rng.normal(size=(30, 2)), rng.uniform(0.5, 2, 30)
    whole = cross_products(Z, y, w)
    parts = merge(cross_products(Z[:11], y[:11], w[:11]), cross_products(Z[11:], y[11:], w[11:]))
    for key in whole:
        np.testing.assert_allclose(parts[key], whole[key], rtol=1e-12)
    zz, zy, yy, z_mean, y_mean = centered(whole)
    np.testing.assert_allclose(z_mean, np.average(Z, axis=0, weights=w))
    np.testing.assert_allclose(
        zz, np.cov(Z, rowvar=False, aweights=w, ddof=0) * w.sum(), rtol=1e-10
    )
    yc = y - y_mean
    np.testing.assert_allclose(yy, (w[:, None] * yc**2).sum(axis=0), rtol=1e-10)
    np.testing.assert_allclose(zy, (Z - z_mean).T @ (w[:, None] * yc), rtol=1e-10)


@pytest.mark.parametrize("weighted", [False, True])
def test_centered_statistics_are_sums(rng, weighted):
    # Reference: numpy sums Z'WZ, Z'Wy, y'Wy (raw) and the same about the
    # weighted means (numpy.average), on data with a mean 1000 times the
    # spread (where raw sums minus sw m m' lose about 6 digits); merged over
    # chunks exactly as on all rows (Chan, Golub and LeVeque, 1979).
    Z = 1000 + rng.normal(size=(30, 4))
    y = 50 + rng.normal(size=(30, 2))
    w = rng.uniform(0.5, 2, 30) if weighted else None
    v = np.ones(30) if w is None else w
    whole = centered_cross_products(Z, y, w)
    zm, ym = np.average(Z, axis=0, weights=v), np.average(y, axis=0, weights=v)
    Zc, yc = Z - zm, y - ym
    expected = {
        "n": 30, "sw": v.sum(), "z_sum": v @ Z, "y_sum": v @ y,
        "zz": Z.T @ (v[:, None] * Z), "zy": Z.T @ (v[:, None] * y),
        "yy": v @ (y * y), "czz": Zc.T @ (v[:, None] * Zc),
        "czy": Zc.T @ (v[:, None] * yc), "cyy": v @ (yc * yc),
    }
    assert set(whole) == set(expected)
    for key, value in expected.items():
        np.testing.assert_allclose(whole[key], value, rtol=1e-12, err_msg=key)
    parts = merge(centered_cross_products(Z[:11], y[:11], None if w is None else w[:11]),
                  centered_cross_products(Z[11:], y[11:], None if w is None else w[11:]))
    for key, value in expected.items():
        np.testing.assert_allclose(parts[key], value, rtol=1e-10, err_msg=key)


def test_merge_with_per_column_exponents_keeps_the_response_sums(rng):
    # Blocks whose design columns carry different power-of-two exponents
    # (x_exp per column, as the integrated design's) merge to the sums of
    # all rows: numpy's Z'Z, Z'y and y'y of the unscaled data, with y's sums
    # keeping one value per target (a per-column exponent must not
    # broadcast them to one per design column).
    Z = rng.normal(size=(40, 5))
    Z[20:, 3] *= 1e6  # the second block's fourth column in another binade
    y = rng.normal(size=(40, 2))
    blocks = []
    for rows in (slice(0, 20), slice(20, 40)):
        e = np.array([np.frexp(np.abs(Z[rows, j]).max())[1] for j in range(5)])
        stats = centered_cross_products(np.ldexp(Z[rows], -e), y[rows])
        stats.update(x_exp=e, y_exp=0)
        blocks.append(stats)
    assert np.any(blocks[0]["x_exp"] != blocks[1]["x_exp"])
    merged = merge(*blocks)
    e = merged["x_exp"]
    for key in ("y_sum", "yy", "cyy"):
        assert merged[key].shape == (2,), key
    np.testing.assert_allclose(merged["yy"], (y * y).sum(axis=0), rtol=1e-12)
    np.testing.assert_allclose(merged["y_sum"], y.sum(axis=0), rtol=1e-12)
    np.testing.assert_allclose(np.ldexp(merged["zz"], e[:, None] + e[None, :]), Z.T @ Z,
                               rtol=1e-12)
    np.testing.assert_allclose(np.ldexp(merged["zy"], e[:, None]), Z.T @ y, rtol=1e-12)


# -- the split engine -------------------------------------------------------



def _ridge_problem(rng, grid, basis, n=80, scale_x=1.0):
    """Scalar-on-function design Z = X W Phi (trapezoid weights), centred,
    with a straight-line coefficient function plus noise."""
    t01 = (grid - grid[0]) / (grid[-1] - grid[0])
    X = scale_x * rng.normal(size=(n, 6)) @ np.sin(np.outer(np.arange(1, 7), np.pi * t01))
    w = np.gradient(grid)
    Z = (X * w) @ basis.evaluate(grid)
    Z = Z - Z.mean(axis=0)
    # y = int x beta + noise with beta(t) = 1 + 2 u on the unit domain, the
    # same numbers whatever the grid's unit and the data's scale
    y = (X / scale_x * w / (grid[-1] - grid[0])) @ (1 + 2 * t01) + 0.05 * rng.normal(size=n)
    return Z, y - y.mean()


def test_split_path_matches_direct_solves(rng):
    # Reference: numpy.linalg.solve of (G + lam P01) c = b with lam from
    # engine_alpha, the explicit hat matrix (Craven & Wahba 1979: edf = trace),
    # and RSS and penalized RSS computed from the residuals.
    basis = BSplineBasis((0.0, 1.0), 12)
    Z, y = _ridge_problem(rng, np.linspace(0, 1, 101), basis)
    y = np.column_stack([y, rng.normal(size=y.size)])
    pen = penalty_for(basis, 2)
    G, b = Z.T @ Z, (Z.T @ y).T
    path = SplitPath(G, pen)
    r = path.rotate(b)
    alphas = np.array([1e-8, 1e-5, 1e-2, 1.0])
    for j, alpha in enumerate(alphas):
        lam = engine_alpha(alpha, G, pen)
        A = G + lam * pen.matrix
        c = np.linalg.solve(A, b.T).T
        np.testing.assert_allclose(path.coef(r, alpha), c, rtol=1e-7, atol=1e-9 * np.abs(c).max())
        H = Z @ np.linalg.solve(A, Z.T)
        assert np.isclose(path.edf(alphas)[j], np.trace(H), rtol=1e-8)
        res = y - Z @ c.T
        rss = (res**2).sum(axis=0)
        np.testing.assert_allclose((y**2).sum(axis=0) - path.rss_reduction(r, alphas)[:, j], rss,
                                   rtol=1e-7)
        pen_rss = rss + lam * np.einsum("ik,kl,il->i", c, pen.matrix, c)
        np.testing.assert_allclose(
            (y**2).sum(axis=0) - path.penalized_rss_reduction(r, alphas)[:, j], pen_rss, rtol=1e-7)
        np.testing.assert_allclose(path.operator(alpha), np.linalg.inv(A), rtol=1e-6,
                                   atol=1e-8 * np.abs(np.linalg.inv(A)).max())


@pytest.mark.parametrize("domain", [(0.0, 1.0), (0.0, 600.0), (-1e-3, 2e-3)])
@pytest.mark.parametrize("alpha", [1e12, 1e20])
def test_huge_alpha_is_exactly_the_null_space_fit(rng, domain, alpha):
    # Common practice: as alpha -> inf penalized least squares tends to least
    # squares on the penalty's null space (straight lines for q = 2). Reference:
    # numpy.linalg.lstsq on the null-space design Z N, with N the straight
    # lines' B-spline coefficients computed independently here from Marsden's
    # identity (t = sum_k greville_k B_k, 1 = sum_k B_k; de Boor 2001).
    grid = np.linspace(*domain, 101)
    basis = BSplineBasis(domain, 15)
    Z, y = _ridge_problem(rng, grid, basis)
    N = np.column_stack([np.ones(basis.n_basis), basis.greville()])
    ref = N @ np.linalg.lstsq(Z @ N, y, rcond=None)[0]
    path = SplitPath(Z.T @ Z, penalty_for(basis, 2))
    c = path.coef(path.rotate(Z.T @ y), alpha)
    # the coefficient function itself, not only the fit, at 1e-8 relative
    np.testing.assert_allclose(c, ref, rtol=1e-8, atol=1e-8 * np.abs(ref).max())
    assert np.isclose(path.edf(alpha), 2.0, rtol=1e-9)


@pytest.mark.parametrize("name", ["legendre", "fourier"])
def test_huge_alpha_other_bases(rng, name):
    # Same reference: lstsq on the null space (first two Legendre polynomials:
    # coefficient unit vectors; Fourier: the constant, first coefficient).
    grid = np.linspace(0.0, 1.0, 101)
    basis = make_basis(name, (0.0, 1.0), 9)
    Z, y = _ridge_problem(rng, grid, basis) if name == "legendre" else (None, None)
    if name == "fourier":
        Z = rng.normal(size=(50, 9))
        y = Z[:, 0] * 3 + 0.1 * rng.normal(size=50)
    N = np.eye(9)[:, : (2 if name == "legendre" else 1)]
    ref = N @ np.linalg.lstsq(Z @ N, y, rcond=None)[0]
    path = SplitPath(Z.T @ Z, penalty_for(basis, 2))
    np.testing.assert_allclose(path.coef(path.rotate(Z.T @ y), 1e20), ref, rtol=1e-9,
                               atol=1e-9 * np.abs(ref).max())


def test_covariates_are_never_penalized(rng):
    # Reference: numpy.linalg.lstsq on [null-space design, covariates].
    basis = BSplineBasis((0.0, 1.0), 10)
    Z, y = _ridge_problem(rng, np.linspace(0, 1, 51), basis)
    s = rng.normal(size=(Z.shape[0], 2))
    s -= s.mean(axis=0)
    y = y + s @ np.array([5.0, -1.0])
    pen = penalty_for(basis, 2).extend(2)
    D = np.column_stack([Z, s])
    path = SplitPath(D.T @ D, pen)
    N = np.zeros((12, 4))
    N[:10, :2] = basis.null_space(2)
    N[10:, 2:] = np.eye(2)
    ref = N @ np.linalg.lstsq(D @ N, y, rcond=None)[0]
    np.testing.assert_allclose(path.coef(path.rotate(D.T @ y), 1e15), ref, rtol=1e-9,
                               atol=1e-9 * np.abs(ref).max())
    # the scale reads the function block only: covariates in other units change nothing
    D2 = np.column_stack([Z, 1e6 * s])
    assert np.isclose(penalty_scale(D2.T @ D2, pen), penalty_scale(D.T @ D, pen), rtol=1e-12)


def test_fit_is_unchanged_by_grid_unit_origin_and_data_scale(rng):
    # Change of variables t -> a + c t and X -> s X (calculus): at a fixed alpha
    # the predictions Z c are identical when alpha is unit-free. Reference: the
    # same fit on [0, 1] with unscaled data.
    preds = []
    for a, c, s in [(0.0, 1.0, 1.0), (300.0, 600.0, 1.0), (-5.0, 1e-3, 1.0), (0.0, 60.0, 1e-4)]:
        grid = a + c * np.linspace(0, 1, 81)
        basis = BSplineBasis((grid[0], grid[-1]), 14)
        Z, y = _ridge_problem(np.random.default_rng(7), grid, basis, scale_x=s)
        path = SplitPath(Z.T @ Z, penalty_for(basis, 2))
        preds.append(Z @ path.coef(path.rotate(Z.T @ y), 1e-4))
    for p in preds[1:]:
        np.testing.assert_allclose(p, preds[0], rtol=1e-8, atol=1e-10 * np.abs(preds[0]).max())


def test_fourier_unit_invariance(rng):
    # As above, for the orthonormal Fourier basis (coefficients scale with sqrt(L)).
    preds = []
    for c in (1.0, 365.0):
        grid = c * np.linspace(0, 1, 64)
        basis = FourierBasis((0.0, c), 9, period=c * 64 / 63)
        phi = basis.evaluate(grid)
        X = np.sin(2 * np.pi * grid / c) + 0.3 * np.random.default_rng(1).normal(size=(5, 64))
        G = phi.T @ phi / 64
        path = SplitPath(G, penalty_for(basis, 2))
        preds.append(path.coef(path.rotate(X @ phi / 64), 1e-5) @ phi.T)
    np.testing.assert_allclose(preds[1], preds[0], rtol=1e-8, atol=1e-12)


def test_scale_safe_statistics(rng):
    # Values near 1e300 overflow when squared, near 1e-300 underflow: dividing
    # by a power of two first (exact in binary floating point, IEEE 754) gives
    # the very same fit; unscaled cross products that overflow are a clear
    # ValueError, not numpy's LinAlgError.
    basis = BSplineBasis((0.0, 1.0), 10)
    phi = basis.evaluate(np.linspace(0, 1, 40))
    x = np.sin(np.linspace(0, 3, 40)) + 0.1 * rng.normal(size=40)
    pen = penalty_for(basis, 2)
    fits = []
    for s in (1.0, 1e300, 1e-300):
        k = power_of_two_scale(x * s)
        xs = x * s / k
        path = SplitPath(phi.T @ phi, pen)
        fits.append(k * (path.coef(path.rotate(phi.T @ xs), 1e-4) @ phi.T) / s)
    for f in fits[1:]:
        np.testing.assert_allclose(f, fits[0], rtol=1e-12)
    with pytest.raises(ValueError, match="not finite"), np.errstate(over="ignore"):
        Z = 1e300 * phi
        SplitPath(Z.T @ Z, pen)
    assert power_of_two_scale(np.array([np.nan, 3.0])) == 4.0
    assert power_of_two_scale(np.zeros(3)) == 1.0


def test_null_space_not_identified(rng):
    # One observed point cannot fix a straight line (two unknowns): a clear error.
    basis = BSplineBasis((0.0, 1.0), 8)
    phi = basis.evaluate([0.3])
    with pytest.raises(NotIdentifiableError, match="penalty leaves free"):
        SplitPath(phi.T @ phi, penalty_for(basis, 2))
    # Two points do, with more basis functions than points (the penalty fixes the rest)
    phi = basis.evaluate([0.3, 0.8])
    path = SplitPath(phi.T @ phi, penalty_for(basis, 2))
    with pytest.raises(NotIdentifiableError, match="alpha > 0"):
        path.coef(path.rotate(np.ones((1, 8))), 0.0)


def test_directions_the_data_do_not_see_get_no_coefficient(rng):
    # Five observed points and eight cubic B-splines: three penalized
    # directions are invisible to the data (Z u = 0), so in exact arithmetic
    # their right-hand side b'u = y'W Z u is 0 and the fit tends, as alpha
    # -> 0, to the interpolant of least roughness. Reference: that
    # interpolant from the KKT system [[P, Z'], [Z, 0]] [c; l] = [0; y]
    # (numpy.linalg.lstsq, which also resolves the unpenalized straight
    # line). Rounding noise along an invisible direction (1e-9 here, far
    # above the 1e-16 of a real computation, to make it visible) must not
    # come back as noise / alpha: it once made FunctionOnFunctionRidge's GCV
    # drop to 0 at the smallest alpha and choose a fit with 7000x the error.
    basis = BSplineBasis((0.0, 1.0), 8)
    pen = penalty_for(basis, 2)
    Z = basis.evaluate(np.linspace(0.1, 0.9, 5))
    y = rng.normal(size=5)
    path = SplitPath(Z.T @ Z, pen)
    invisible = np.linalg.svd(Z)[2][5:]  # rows spanning the null space of Z
    b = Z.T @ y
    noisy = b + 1e-9 * invisible.sum(axis=0)
    assert np.count_nonzero(path.g == 0) == 3
    np.testing.assert_array_equal(path.rotate(noisy)[path.g == 0], 0.0)
    P = pen.matrix
    kkt = np.block([[P, Z.T], [Z, np.zeros((5, 5))]])
    expected = np.linalg.lstsq(kkt, np.r_[np.zeros(8), y], rcond=None)[0][:8]
    for rhs in (b, noisy):
        coef = path.coef(path.rotate(rhs), 1e-12)
        np.testing.assert_allclose(Z @ coef, y, atol=1e-6)
        np.testing.assert_allclose(coef, expected, rtol=1e-5, atol=1e-5)


def test_stacked_paths_match_scipy_generalized_eigensolver_fold_by_fold(rng):
    # The folds of a cross-validation over curves: the data without each of
    # 10 groups of rows, one path per fold from one stacked decomposition.
    # Reference, fold by fold: scipy.linalg.eigh(P, G), the generalized
    # symmetric eigensolver (P v = w G v, V'GV = I, V'PV = diag(w)); the
    # path's U'GU = diag(g), U'PU = diag(p) give the same problem's
    # eigenvalues p / g (0 on the penalty's null space, 1 / s elsewhere),
    # and (G + lam P)^{-1} = V diag(1 / (1 + lam w)) V' (common practice).
    import scipy.linalg

    basis = BSplineBasis((0.0, 1.0), 12)
    pen = penalty_for(basis, 2)
    # a smoother's design: the B-splines at 300 random times, weighted
    Z = basis.evaluate(rng.uniform(0, 1, 300)) * rng.uniform(0.5, 2.0, size=(300, 1))
    folds = np.arange(Z.shape[0]) % 10
    total = Z.T @ Z
    grams = np.array([total - Z[folds == f].T @ Z[folds == f] for f in range(10)])
    scale = penalty_scale(total, pen)
    paths = SplitPath.stack(grams, pen, scale)
    assert len(paths) == 10
    for gram, path in zip(grams, paths, strict=True):
        w, V = scipy.linalg.eigh(pen.matrix, gram)
        ratio = np.sort(path.p / path.g)
        np.testing.assert_allclose(ratio[pen.n_null:], np.sort(w)[pen.n_null:], rtol=1e-8)
        np.testing.assert_allclose(np.sort(w)[:pen.n_null], 0.0, atol=1e-10 * w.max())
        assert path.scale == scale
        # (the generalized solver whitens by G's Cholesky factor and loses
        # digits with the condition number of G + lam P, about 1e7 at
        # alpha = 10 here: 6e-9 of the largest entry from the direct inverse)
        for alpha in (1e-6, 1e-2, 10.0):
            lam = alpha * scale
            inverse = (V / (1.0 + lam * w)) @ V.T
            np.testing.assert_allclose(path.operator(alpha), inverse, rtol=1e-6,
                                       atol=1e-7 * np.abs(inverse).max())


def test_stacked_paths_mark_folds_that_leave_the_null_space_free(rng):
    # A fold whose other rows see one point only cannot fix a straight line
    # (two unknowns): SplitPath raises NotIdentifiableError for it, the stack
    # gives None there and the ordinary path elsewhere.
    basis = BSplineBasis((0.0, 1.0), 8)
    pen = penalty_for(basis, 2)
    one = basis.evaluate([0.3])
    two = basis.evaluate([0.3, 0.8])
    grams = np.array([one.T @ one, two.T @ two])
    with pytest.raises(NotIdentifiableError):
        SplitPath(grams[0], pen, scale=1.0)
    first, second = SplitPath.stack(grams, pen, 1.0)
    assert first is None
    alone = SplitPath(grams[1], pen, scale=1.0)
    # reference: the inverse of the 8 x 8 system, numpy.linalg.inv
    direct = np.linalg.inv(grams[1] + 0.1 * pen.matrix)
    np.testing.assert_allclose(second.operator(0.1), direct, rtol=1e-7,
                               atol=1e-9 * np.abs(direct).max())
    np.testing.assert_allclose(alone.operator(0.1), direct, rtol=1e-7,
                               atol=1e-9 * np.abs(direct).max())


def test_penalty_for_keeps_one_decomposition_per_basis():
    # penalty_for keeps its decompositions by basis key: an equal basis gets
    # the same (read-only) object, a basis that differs in any number that
    # defines it (knots, degree, domain, period, size) gets its own, equal to
    # the decomposition made afresh with Penalty (the class's definition)
    from skfunc._penalized import Penalty

    bases = [BSplineBasis((0, 1), 8), BSplineBasis((0, 1), 8, degree=2),
             BSplineBasis((0, 1), knots=[0.1, 0.2, 0.5, 0.9]), BSplineBasis((0, 2), 8),
             FourierBasis((0, 1), 7), FourierBasis((0, 1), 7, period=1.5),
             make_basis("legendre", (0, 1), 6)]
    for basis in bases:
        shared = penalty_for(basis, 2)
        fresh = Penalty(basis.unit_roughness(2), basis.null_space(2), basis.unit_gram())
        np.testing.assert_array_equal(shared.matrix, fresh.matrix)
        np.testing.assert_array_equal(shared.transform, fresh.transform)
        np.testing.assert_array_equal(shared.metric, fresh.metric)
        assert not shared.transform.flags.writeable
        assert penalty_for(basis, 1) is not shared
    keys = {basis.cache_key() for basis in bases}
    assert len(keys) == len(bases)
    assert penalty_for(BSplineBasis((0, 1), 8), 2) is penalty_for(bases[0], 2)
