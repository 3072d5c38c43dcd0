"""Basis systems: values, derivatives, and exact Gram and roughness matrices.

A basis is a small object holding only numbers (its domain and sizes), so it
can be rebuilt on demand from an estimator's parameters and fitted grid. Every
basis offers

* ``evaluate(t, derivative=0)``: the matrix ``Phi[j, k] = D^d phi_k(t_j)``;
* ``gram()``: the exact matrix ``int phi_i phi_j``;
* ``penalty(order)``: the exact roughness matrix ``int D^q phi_i D^q phi_j``;
* ``feature_names()``: one readable name per basis function.

Nothing here is computed from the data's grid: Gram and penalty matrices are
exact (Gauss-Legendre per knot span for splines, closed forms otherwise). To
add a basis, subclass :class:`Basis` and register it in :data:`BASES`.
"""

from abc import ABC, abstractmethod

import numpy as np
from numpy.polynomial import legendre as npleg
from scipy.interpolate import BSpline


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

    def penalty(self, order):
        order = self.check_derivative(order, name="penalty_order")
        breaks = np.unique(self.knots)
        nodes, weights = np.polynomial.legendre.leggauss(self.degree + 1)
        left, right = breaks[:-1, None], breaks[1:, None]
        half = (right - left) / 2
        points = (left + right) / 2 + half * nodes  # (spans, nodes)
        w = (half * weights).ravel()
        values = self._spline()(points.ravel(), nu=order)
        return (values * w[:, None]).T @ values


class FourierBasis(Basis):
    """Fourier basis, periodic on the domain and orthonormal in L2.

    The constant ``1/sqrt(L)`` first, then pairs
    ``sqrt(2/L) sin(2 pi k (t - a) / L)``, ``sqrt(2/L) cos(2 pi k (t - a) / L)``.
    """

    name = "fourier"
    default_n_basis = 21

    def _frequencies(self):
        k = (np.arange(self.n_basis) + 1) // 2  # 0, 1, 1, 2, 2, ...
        return 2 * np.pi * k / self.length

    def evaluate(self, t, derivative=0):
        t = self.check_points(t) - self.domain[0]
        derivative = self.check_derivative(derivative)
        omega = self._frequencies()
        is_sin = np.arange(self.n_basis) % 2 == 1
        # D^d sin(wt) = w^d sin(wt + d pi/2); the same shift for cos.
        phase = omega * t[:, None] + derivative * np.pi / 2
        values = np.where(is_sin, np.sin(phase), np.cos(phase)) * omega**derivative
        scale = np.full(self.n_basis, np.sqrt(2 / self.length))
        scale[0] = np.sqrt(1 / self.length)
        if derivative > 0:
            values[:, 0] = 0.0
        return values * scale

    def penalty(self, order):
        order = self.check_derivative(order, name="penalty_order")
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

    def penalty(self, order):
        # int_{-1}^{1} P_i P_j ds = 2 / (2 i + 1) delta_ij (A&S 22.2.10); the
        # derivative series keeps that orthogonality, and dt = L/2 ds.
        order = self.check_derivative(order, name="penalty_order")
        coef = self._derivative_coefficients(order)
        norms = 2.0 / (2 * np.arange(self.n_basis) + 1)
        scale = (2 / self.length) ** (2 * order) * self.length / 2
        return scale * (coef.T * norms) @ coef


BASES = {cls.name: cls for cls in (BSplineBasis, FourierBasis, LegendreBasis)}


def make_basis(name, domain, n_basis, degree=3, knots=None):
    """Build a registered basis by name."""
    if name not in BASES:
        raise ValueError(f"basis must be one of {tuple(BASES)}; got {name!r}.")
    if name == "bspline":
        return BSplineBasis(domain, n_basis, degree=degree, knots=knots)
    if knots is not None:
        raise ValueError(f"knots apply to the B-spline basis only, not to {name!r}.")
    return BASES[name](domain, n_basis)


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
