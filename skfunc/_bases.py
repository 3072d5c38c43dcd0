"""Basis systems: values, derivatives, and exact Gram and roughness matrices.

A basis is a small object holding only numbers (its domain and sizes), so it
can be rebuilt on demand from an estimator's parameters and fitted grid. Every
basis offers

* ``evaluate(t, derivative=0)``: the matrix ``Phi[j, k] = D^d phi_k(t_j)``;
* ``gram()``: the exact matrix ``int phi_i phi_j``;
* ``penalty(order)``: the exact roughness matrix ``int D^q phi_i D^q phi_j``;
* ``roughness(order)``: the same, with the single-piece rule (a polynomial
  of degree below ``order`` has zero roughness);
* ``null_space(order)``: exact coefficients of the functions the roughness
  penalty leaves free (polynomials of degree below ``order``, or constants
  for the periodic Fourier basis);
* ``unit_roughness(order)`` and ``unit_gram()``: roughness and Gram matrices
  of the same functions on the domain mapped to [0, 1] (what makes a
  penalty weight independent of the unit and origin of the grid);
* ``feature_names()``: one readable name per basis function.

Nothing here is computed from the data's grid: Gram and penalty matrices are
exact (Gauss-Legendre per knot span for splines, closed forms otherwise). To
add a basis, subclass :class:`Basis` and register it in :data:`BASES`.
"""

import warnings
from abc import ABC, abstractmethod
from functools import lru_cache

import numpy as np
from numpy.polynomial import legendre as npleg
from scipy.interpolate import BSpline
from scipy.linalg import solve


@lru_cache(maxsize=64)
def gauss_legendre(n):
    """Gauss-Legendre nodes and weights of ``n`` points on [-1, 1]
    (:func:`numpy.polynomial.legendre.leggauss`, computed once per ``n``:
    an eigenvalue problem that costs more than the matrices built from it;
    read-only, being shared)."""
    nodes, weights = npleg.leggauss(n)
    nodes.flags.writeable = weights.flags.writeable = False
    return nodes, weights


class Basis(ABC):
    """Common interface of basis systems on a domain ``[a, b]``."""

    #: name used by the ``basis=`` parameter of the estimators
    name = None
    #: number of basis functions used when ``n_basis=None`` (capped by the grid)
    default_n_basis = 20
    #: highest derivative order that exists (and is square integrable)
    max_derivative = np.inf

    def __init__(self, domain, n_basis):
        a, b = (float(v) for v in domain)
        if not (np.isfinite(a) and np.isfinite(b) and a < b):
            raise ValueError(f"A basis needs a finite domain a < b; got {domain!r}.")
        self.domain = (a, b)
        self.n_basis = int(n_basis)
        if self.n_basis < 1:
            raise ValueError(f"n_basis must be at least 1; got {n_basis!r}.")

    @property
    def length(self):
        return self.domain[1] - self.domain[0]

    def check_points(self, t):
        t = np.asarray(t, dtype=np.float64)
        a, b = self.domain
        tol = 1e-12 * max(1.0, abs(a), abs(b))
        if t.ndim != 1:
            raise ValueError(f"Points must be 1-D; got shape {t.shape}.")
        if t.size and (t.min() < a - tol or t.max() > b + tol):
            raise ValueError(
                f"Points must lie in the basis domain [{a}, {b}]; got values in "
                f"[{t.min()}, {t.max()}]. Extrapolation is not supported."
            )
        return np.clip(t, a, b)

    def check_derivative(self, derivative, name="derivative"):
        if int(derivative) != derivative or derivative < 0:
            raise ValueError(f"{name} must be a non-negative integer; got {derivative!r}.")
        if derivative > self.max_derivative:
            raise ValueError(
                f"{name}={derivative} exceeds the smoothness of the {self.name} "
                f"basis, which has derivatives up to order {self.max_derivative}."
            )
        return int(derivative)

    @abstractmethod
    def evaluate(self, t, derivative=0):
        """Values of ``D^derivative phi_k`` at points ``t``: shape (len(t), K)."""

    def gram(self):
        """Exact Gram matrix ``int phi_i phi_j`` over the domain, shape (K, K)."""
        return self.penalty(0)

    @abstractmethod
    def penalty(self, order):
        """Exact roughness matrix ``int D^q phi_i D^q phi_j``, shape (K, K)."""

    def feature_names(self):
        return [f"{self.name}{k}" for k in range(self.n_basis)]

    def cache_key(self):
        """A hashable key of what defines the functions (the class and its
        numbers; not the matrices a basis keeps once computed, under names
        starting with an underscore): bases with equal keys have equal
        matrices."""
        return (type(self).__qualname__, *(
            (name, value.tobytes() if isinstance(value, np.ndarray) else value)
            for name, value in sorted(vars(self).items()) if not name.startswith("_")))

    # -- the roughness penalty split into its null space and complement -----

    def null_dimension(self, order):
        """Dimension of the functions of the basis that ``D^order`` annihilates."""
        if order == 0:
            return 0
        return min(order, self.n_basis)

    def roughness(self, order):
        """Exact roughness matrix ``int D^q phi_i D^q phi_j``, shape (K, K).

        Unlike :meth:`penalty`, an order above the basis' smoothness is
        accepted when every function of the basis is a polynomial of degree
        below ``order`` (a single B-spline piece): its roughness is zero.
        """
        if self.null_dimension(order) == self.n_basis:
            return np.zeros((self.n_basis, self.n_basis))
        return self.penalty(order)

    def null_space(self, order):
        """Exact basis coefficients of the penalty's null space, shape (K, r).

        Column ``i`` holds the coefficients of the shifted Legendre
        polynomial ``P_i(2 (t - a) / L - 1)`` for ``i < r = null_dimension``
        (the constant alone for the periodic Fourier basis), so that
        ``roughness(order) @ null_space(order)`` is zero up to rounding in
        the roughness matrix only: the null space itself is not found from
        small eigenvalues.
        """
        order = int(order)
        r = self.null_dimension(order)
        if r == self.n_basis:
            return np.eye(self.n_basis)
        if r == 0:
            return np.zeros((self.n_basis, 0))
        self.check_derivative(order, name="penalty_order")
        return self._null_space(r)

    @abstractmethod
    def _null_space(self, r):
        """Basis coefficients (K, r) of the shifted Legendre polynomials
        ``P_i(2 (t - a) / L - 1)``, ``i < r``, for ``0 < r < K``
        (:meth:`null_space` handles ``r = 0`` and ``r = K``), exact up to
        rounding: each basis writes them from its own structure (B-splines
        by interpolation at the Greville abscissae, Fourier the constant,
        Legendre the first ``r`` unit vectors)."""

    def unit_roughness(self, order):
        """Roughness of the same functions on the domain mapped to [0, 1].

        With ``u = (t - a) / L``, ``int_a^b (D_t^q f)^2 dt = L^(1 - 2q)
        int_0^1 (D_u^q f)^2 du``, so this is ``L^(2q - 1) roughness(order)``:
        unchanged when the grid changes unit or origin.
        """
        return self.roughness(order) * self.length ** (2 * int(order) - 1)

    def unit_gram(self):
        """Gram matrix of the same functions on the domain mapped to [0, 1]."""
        return self.gram() / self.length


class BSplineBasis(Basis):
    """B-splines of a given degree with clamped boundary knots.

    Interior knots are evenly spaced, or given by ``knots`` (strictly inside
    the domain, increasing); ``n_basis = len(interior) + degree + 1``.

    References
    ----------
    de Boor, C. (2001). *A Practical Guide to Splines*, revised ed. Springer.
    """

    name = "bspline"
    default_n_basis = 20

    def __init__(self, domain, n_basis=None, degree=3, knots=None):
        if int(degree) != degree or degree < 0:
            raise ValueError(f"degree must be a non-negative integer; got {degree!r}.")
        degree = int(degree)
        a, b = (float(v) for v in domain)
        if knots is not None:
            interior = np.asarray(knots, dtype=np.float64)
            if interior.ndim != 1 or not np.all(np.isfinite(interior)):
                raise ValueError("knots must be a 1-D array of finite interior knots.")
            if interior.size and (
                np.any(np.diff(interior) <= 0) or interior[0] <= a or interior[-1] >= b
            ):
                raise ValueError(
                    f"knots must be strictly increasing and strictly inside the "
                    f"domain ({a}, {b}); got {interior.tolist()}."
                )
            expected = interior.size + degree + 1
            if n_basis is not None and n_basis != expected:
                raise ValueError(
                    f"n_basis={n_basis} does not match {interior.size} interior "
                    f"knots of degree {degree}, which give {expected} B-splines."
                )
            n_basis = expected
        else:
            if n_basis is None:
                raise ValueError("BSplineBasis needs n_basis or knots.")
            if n_basis <= degree:
                raise ValueError(
                    f"A B-spline basis of degree {degree} needs n_basis >= "
                    f"{degree + 1} (degree + 1); got n_basis={n_basis}. Lower "
                    "degree or raise n_basis."
                )
            interior = np.linspace(a, b, n_basis - degree + 1)[1:-1]
        super().__init__((a, b), n_basis)
        self.degree = degree
        # D^degree is piecewise constant: still square integrable.
        self.max_derivative = degree
        self.knots = np.concatenate([[a] * (degree + 1), interior, [b] * (degree + 1)])

    def evaluate(self, t, derivative=0):
        t = self.check_points(t)  # inside the domain: extrapolation only
        derivative = self.check_derivative(derivative)  # closes the right end
        return self._spline()(t, nu=derivative)

    def _spline(self):
        return BSpline(self.knots, np.eye(self.n_basis), self.degree, extrapolate=True)

    def null_dimension(self, order):
        if order == 0:
            return 0
        if order > self.degree and self.n_basis == self.degree + 1:
            return self.n_basis  # a single polynomial piece of degree < order
        return min(order, self.n_basis)

    def greville(self):
        """Greville abscissae: knot averages ``(t_{k+1} + ... + t_{k+p}) / p``."""
        p = self.degree
        if p == 0:
            return (self.knots[:-1] + self.knots[1:]) / 2
        windows = np.lib.stride_tricks.sliding_window_view(self.knots[1:-1], p)
        return windows.mean(axis=1)

    def _null_space(self, r):
        # Polynomials of degree < r <= degree lie in the spline space, and
        # interpolation at the Greville abscissae is unisolvent (Schoenberg-
        # Whitney), so the solve reproduces them exactly up to rounding
        # (de Boor 2001, ch. IX, Marsden's identity).
        xi = self.greville()
        u = 2 * (xi - self.domain[0]) / self.length - 1
        return solve(self.evaluate(xi), npleg.legvander(u, r - 1))

    def penalty(self, order):
        order = self.check_derivative(order, name="penalty_order")
        # a fit asks for the Gram matrix several times (coordinates, penalty
        # split, scale): computed once per basis, handed out as copies
        known = vars(self).setdefault("_penalties", {})
        if order not in known:
            breaks = np.unique(self.knots)
            nodes, weights = gauss_legendre(self.degree + 1)
            left, right = breaks[:-1, None], breaks[1:, None]
            half = (right - left) / 2
            points = (left + right) / 2 + half * nodes  # (spans, nodes)
            w = (half * weights).ravel()
            values = self._spline()(points.ravel(), nu=order)
            known[order] = (values * w[:, None]).T @ values
        return known[order].copy()


class FourierBasis(Basis):
    """Fourier basis with a given period.

    The constant ``1/sqrt(T)`` first, then pairs
    ``sqrt(2/T) sin(2 pi k (t - a) / T)``, ``sqrt(2/T) cos(2 pi k (t - a) / T)``
    with ``T = period``. ``period=None`` means the domain length: then the
    functions are orthonormal in L2 of the domain and its two ends are
    forced equal. A longer period (see :func:`default_period`) leaves a gap
    between the last and the first point of a cycle, as for twelve monthly
    values (December is not January); Gram and roughness matrices are then
    computed by Gauss-Legendre quadrature, exact to rounding for these
    band-limited functions.
    """

    name = "fourier"
    default_n_basis = 21

    def __init__(self, domain, n_basis, period=None):
        super().__init__(domain, n_basis)
        if period is None:
            period = self.length
        period = float(period)
        if not (np.isfinite(period) and period >= self.length * (1 - 1e-12)):
            raise ValueError(
                f"period must be a finite number at least the domain length "
                f"{self.length}; got {period!r}."
            )
        self.period = max(period, self.length)

    def null_dimension(self, order):
        return 0 if order == 0 else 1

    def _null_space(self, r):
        out = np.zeros((self.n_basis, 1))
        out[0, 0] = np.sqrt(self.period)  # 1 = sqrt(T) * (1 / sqrt(T))
        return out

    def _frequencies(self):
        k = (np.arange(self.n_basis) + 1) // 2  # 0, 1, 1, 2, 2, ...
        return 2 * np.pi * k / self.period

    def _full_period(self):
        return np.isclose(self.period, self.length, rtol=1e-12, atol=0)

    def evaluate(self, t, derivative=0):
        t = self.check_points(t) - self.domain[0]
        derivative = self.check_derivative(derivative)
        omega = self._frequencies()
        is_sin = np.arange(self.n_basis) % 2 == 1
        # D^d sin(wt) = w^d sin(wt + d pi/2); the same shift for cos.
        phase = omega * t[:, None] + derivative * np.pi / 2
        values = np.where(is_sin, np.sin(phase), np.cos(phase)) * omega**derivative
        scale = np.full(self.n_basis, np.sqrt(2 / self.period))
        scale[0] = np.sqrt(1 / self.period)
        if derivative > 0:
            values[:, 0] = 0.0
        return values * scale

    def penalty(self, order):
        order = self.check_derivative(order, name="penalty_order")
        if not self._full_period():
            # Gauss-Legendre with 40 nodes per panel and a panel per half
            # cycle of the highest frequency integrates these entire
            # functions to rounding.
            cycles = self.length / self.period * (self.n_basis // 2 + 1)
            panels = int(np.ceil(2 * cycles)) + 1
            nodes, weights = gauss_legendre(40)
            edges = np.linspace(*self.domain, panels + 1)
            half = np.diff(edges)[:, None] / 2
            points = ((edges[:-1, None] + edges[1:, None]) / 2 + half * nodes).ravel()
            w = (half * weights).ravel()
            values = self.evaluate(np.clip(points, *self.domain), order)
            return (values * w[:, None]).T @ values
        omega = self._frequencies()
        diag = omega ** (2 * order) if order else np.ones(self.n_basis)
        return np.diag(diag)

    def feature_names(self):
        names = ["const"]
        for j in range(1, self.n_basis):
            names.append(f"{'sin' if j % 2 else 'cos'}{(j + 1) // 2}")
        return names


class LegendreBasis(Basis):
    """Legendre polynomials ``P_0 ... P_{K-1}`` shifted to the domain.

    References
    ----------
    Abramowitz, M. and Stegun, I. A. (1964). *Handbook of Mathematical
    Functions*, ch. 22.
    """

    name = "legendre"
    default_n_basis = 12

    def _to_unit(self, t):
        return 2 * (t - self.domain[0]) / self.length - 1

    def _derivative_coefficients(self, order):
        """Legendre-series coefficients of ``D^order P_k`` (in s), shape (K, K)."""
        coef = np.eye(self.n_basis)
        if order == 0:
            return coef
        out = np.zeros((self.n_basis, self.n_basis))
        der = npleg.legder(coef, m=order, axis=0)
        out[: der.shape[0]] = der
        return out  # column k holds the series of D^order P_k

    def evaluate(self, t, derivative=0):
        s = self._to_unit(self.check_points(t))
        derivative = self.check_derivative(derivative)
        coef = self._derivative_coefficients(derivative)
        return npleg.legval(s, coef).T * (2 / self.length) ** derivative

    def _null_space(self, r):
        return np.eye(self.n_basis)[:, :r]  # D^q P_k = 0 exactly for k < q

    def penalty(self, order):
        # int_{-1}^{1} P_i P_j ds = 2 / (2 i + 1) delta_ij (A&S 22.2.10); the
        # derivative series keeps that orthogonality, and dt = L/2 ds.
        order = self.check_derivative(order, name="penalty_order")
        coef = self._derivative_coefficients(order)
        norms = 2.0 / (2 * np.arange(self.n_basis) + 1)
        scale = (2 / self.length) ** (2 * order) * self.length / 2
        return scale * (coef.T * norms) @ coef


BASES = {cls.name: cls for cls in (BSplineBasis, FourierBasis, LegendreBasis)}


def make_basis(name, domain, n_basis, degree=3, knots=None, period=None):
    """Build a registered basis by name."""
    if name not in BASES:
        raise ValueError(f"basis must be one of {tuple(BASES)}; got {name!r}.")
    if name == "bspline":
        return BSplineBasis(domain, n_basis, degree=degree, knots=knots)
    if knots is not None:
        raise ValueError(f"knots apply to the B-spline basis only, not to {name!r}.")
    if name == "fourier":
        return FourierBasis(domain, n_basis, period=period)
    return BASES[name](domain, n_basis)


def default_period(grid):
    """Default period of a Fourier basis on ``grid``: its range plus one mean step.

    Grid points are read as samples of one cycle whose last point is one
    step before the next cycle's first: twelve monthly values at 1, ..., 12
    get period 12, so January and December are neighbours but not the same
    point. For a grid that closes the cycle (the last point repeats the
    first, such as angles 0 to 2 pi inclusive) pass the period explicitly.
    The mean step keeps the rule defined on uneven grids; note that
    resampling the same cycle with another number of points changes this
    default slightly (``L m / (m - 1)``), so pass ``period`` where exact
    resolution invariance matters.
    """
    grid = np.asarray(grid, dtype=np.float64)
    length = grid[-1] - grid[0]
    return float(length * grid.size / (grid.size - 1))


#: cap on the number of interior knots of the default B-spline basis
#: (Ruppert 2002, from memory: min(n_unique / 4, 35) knots)
MAX_DEFAULT_KNOTS = 35


def default_n_basis(name, n_points, degree=3):
    """Number of basis functions when ``n_basis=None``: generous, never interpolating.

    P-spline practice (Eilers and Marx 1996): many basis functions, with the
    roughness penalty controlling smoothness, so the result hardly depends
    on the number. The rule of Ruppert (2002), about four observations per
    knot and at most 35 interior knots, gives enough functions for curves
    sampled on hundreds of points while keeping an unpenalized fit on a short
    grid well away from interpolation:

    * B-splines: ``degree + 1 + min(n_points // 4, 35)``;
    * Fourier: the same count made odd (a constant and sine/cosine pairs);
    * Legendre: ``min(12, max(1, n_points // 4))`` polynomials (high-order
      polynomials are badly conditioned, so a smaller cap).

    Capped by ``n_points``; on grids of at most ``degree + 1`` points
    B-splines become the single polynomial through the points (the caller
    lowers the degree to ``n_points - 1``).

    References
    ----------
    Eilers, P. H. C. and Marx, B. D. (1996). Flexible smoothing with
    B-splines and penalties. *Statistical Science* 11(2), 89-121.

    Ruppert, D. (2002). Selecting the number of knots for penalized splines.
    *Journal of Computational and Graphical Statistics* 11(4), 735-757.
    """
    if name not in BASES:
        raise ValueError(f"basis must be one of {tuple(BASES)}; got {name!r}.")
    n_points = int(n_points)
    knots = min(n_points // 4, MAX_DEFAULT_KNOTS)
    if name == "legendre":
        return min(12, max(1, n_points // 4), n_points)
    count = degree + 1 + knots
    if name == "fourier":
        count = 2 * (count // 2) + 1
        return min(count, n_points - (1 - n_points % 2))
    return min(count, n_points)


#: share of the basis (edf at the chosen alpha over the number of basis
#: functions: per curve for CurveSmoother, of the pooled fit for
#: SparseFunctionalPCA's mean) above which a default basis is tried larger
#: (:func:`grown_n_basis`): at 0.9 the penalty removes
#: less than a tenth of the basis' dimensions, so the fit is close to the
#: unpenalized one and the number of functions, not alpha, limits it; smooth
#: curves choose far less (sines of one to four cycles plus noise on 601
#: points: edf 19 to 23 of 39), so they never pay for a trial. The invented
#: kiln curves choose 38.7 of 39 (sharp corners where ramp meets soak) and
#: do grow, to 74
GROW_EDF_FRACTION = 0.9


def grown_n_basis(n_basis, n_points, degree=3, limit=None):
    """The next size of a default B-spline basis that the fit found too
    small: twice the interior knots, at most ``n_points // 4`` of them (the
    four points per knot of :func:`default_n_basis`, whose cap of 35 knots is
    the one lifted) and at most ``limit`` functions; None when the basis
    cannot grow.

    This is the step of the "myopic" algorithm of Ruppert (2002, section 4):
    start from the default number of knots and double it while the
    generalized cross-validation score improves (the caller decides when to
    try, and keeps the larger basis only when its score is lower).
    """
    knots = n_basis - degree - 1
    larger = min(2 * max(knots, 1), int(n_points) // 4)
    if limit is not None:
        larger = min(larger, limit - degree - 1)
    return degree + 1 + larger if larger > knots else None


#: condition number of the data's Gram matrix relative to the basis Gram
#: above which an unpenalized fit is called ill-conditioned: 1e8 loses half
#: of float64's 16 digits (common practice for a warning threshold)
CONDITION_WARNING = 1e8


class IllConditionedFitWarning(UserWarning):
    """An unpenalized basis fit is close to interpolation and unstable."""


def check_unpenalized_fit(data_gram, basis_gram, name="n_basis"):
    """Warn when an unpenalized fit with cross products ``data_gram`` is unstable.

    The ratio of the largest to the smallest generalized eigenvalue of the
    data's cross products (``Phi' W Phi``) and the basis Gram matrix is the
    factor by which the fit amplifies noise in the worst direction relative
    to the best; above :data:`CONDITION_WARNING` the coefficients are
    dominated by rounding and noise (near interpolation on a short uneven
    grid). Returns the condition number.
    """
    lam = np.linalg.eigvalsh(_whitened(data_gram, basis_gram))
    top = max(lam[-1], np.finfo(float).tiny)
    cond = np.inf if lam[0] <= top * 1e-300 else top / lam[0]
    if cond > CONDITION_WARNING:
        warnings.warn(
            f"The unpenalized basis fit is ill-conditioned (condition number "
            f"{cond:.2g}): with this {name} the basis nearly interpolates the "
            f"grid points and amplifies noise. Use fewer basis functions "
            f"({name}) or a roughness penalty (alpha > 0 or alpha='auto').",
            IllConditionedFitWarning,
            stacklevel=3,
        )
    return float(cond)


def _whitened(matrix, metric):
    """``L^{-1} matrix L^{-T}`` with ``metric = L L'`` (Cholesky)."""
    lower = np.linalg.cholesky(metric)
    half = np.linalg.solve(lower, matrix)
    return np.linalg.solve(lower, half.T).T


def gram_sqrt(gram):
    """Symmetric square root of a Gram matrix and its inverse.

    With ``R = gram_sqrt(G)[0]``, coefficients ``c`` map to ``R c``: coordinates
    in an L2-orthonormal basis, so Euclidean distances of ``R c`` are L2
    distances of the functions.
    """
    s, v = np.linalg.eigh(gram)
    if s[0] <= 1e-14 * s[-1]:
        raise ValueError(
            "The basis Gram matrix is singular: the basis functions are linearly dependent."
        )
    root = np.sqrt(s)
    return (v * root) @ v.T, (v / root) @ v.T
