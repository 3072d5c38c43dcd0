"""Data generators with a known truth, re-exported (and described) by
:mod:`skfunc.datasets`."""

from numbers import Integral, Real

import numpy as np
from sklearn.utils import Bunch, check_random_state
from sklearn.utils._param_validation import Interval, validate_params

from ._docstrings import fill_doc
from ._grid import check_grid, quadrature_weights

#: length of a firing cycle in minutes; the default grid is minutes 0..599
KILN_MINUTES = 600
#: kiln temperature before a firing starts (degrees Celsius)
AMBIENT_C = 25.0
#: fine grid on which the invented responses are integrated (half minutes)
_FINE = np.linspace(0.0, KILN_MINUTES - 1.0, 2 * (KILN_MINUTES - 1) + 1)
#: standard deviation (deg C) of each harmonic of the controller wander (periods
#: of 600 down to 50 minutes)
_WANDER = 8.0 / (1.0 + np.arange(12) / 3.0)
#: column names of the programmed settings
SETTINGS_NAMES = ("peak_setpoint_c", "ramp_rate_c_per_min", "soak_min", "load_mass_kg")


def _bump(t, centre, width):
    return np.exp(-(((t - centre) / width) ** 2))


def kiln_strength_coef(minutes):
    """The invented true coefficient function of tile strength, in MPa/(°C·min).

    Strength rises with heat held during the soak (around minute 340) and
    falls with heat held late in the cycle (around minute 510). Invented.
    """
    t = np.asarray(minutes, dtype=np.float64)
    return 2.0e-4 * _bump(t, 340.0, 70.0) - 1.5e-4 * _bump(t, 510.0, 45.0)


def kiln_crack_coef(minutes):
    """The invented true coefficient function of the crack log-odds, 1/(°C·min).

    Heat held in the late cool-down (around minute 500, where a slowly cooled
    load is still hot) lowers the odds of a crack. Invented.
    """
    t = np.asarray(minutes, dtype=np.float64)
    return -2.5e-4 * _bump(t, 500.0, 40.0)


#: oxygen in air (percent by volume), where the kiln atmosphere starts and ends
AIR_OXYGEN = 20.9
#: minutes between two readings of the oxygen analyser (default oxygen grid)
OXYGEN_STEP = 5


def kiln_colour_coefs(minutes, oxygen_minutes):
    """The invented true coefficient functions of glaze lightness (L*).

    Returns ``(temperature, oxygen)``: lightness per (°C·min) on ``minutes``
    and per (percent O2·min) on ``oxygen_minutes``. A leaner atmosphere
    (less oxygen) in the soak (around minute 330) darkens the glaze, and so,
    less, does more heat around minute 360. Invented.
    """
    t = np.asarray(minutes, dtype=np.float64)
    u = np.asarray(oxygen_minutes, dtype=np.float64)
    return -6.0e-5 * _bump(t, 360.0, 60.0), 4.0e-3 * _bump(u, 330.0, 55.0)


def _oxygen_profiles(t, start, end_ramp, end_soak, base, reduction, wander):
    """Oxygen (percent) at times ``t``: air, burners on (``base``), a
    reduction window (``reduction = (start, length, depth)``), air again
    after the soak. Run parameters are column vectors."""
    t = t[None, :]

    def on(u, h):
        return 0.5 * (1.0 + np.tanh(u / h))

    burning = on(t - start, 5.0) * on(end_soak - t, 10.0)
    r_start, r_length, r_depth = reduction
    reducing = on(t - r_start, 6.0) * on(r_start + r_length - t, 6.0)
    harmonics = np.arange(1, wander.shape[1] + 1)[:, None]
    angle = 2 * np.pi * harmonics * t / KILN_MINUTES
    drift = (wander[:, :, 0] * np.cos(wander[:, :, 1])) @ np.sin(angle)
    level = AIR_OXYGEN - (AIR_OXYGEN - base) * burning - (base - r_depth) * reducing
    return level + drift * burning


def _softplus(u, h):
    """Smooth ``max(u, 0)``, rounded over a few ``h``."""
    return h * np.logaddexp(0.0, u / h)


def _kiln_profiles(t, start, ramp, peak, soak, tau, wander):
    """Firing curves (rows) at times ``t``: smooth ramp, soak and cool-down.

    All run parameters are column vectors; ``wander`` holds amplitude and
    phase of slow controller wander, shape (n, n_harmonics, 2).
    """
    t = t[None, :]
    rise_time = (peak - AMBIENT_C) / ramp
    end_ramp = start + rise_time
    end_soak = end_ramp + soak
    rise = ramp * (_softplus(t - start, 4.0) - _softplus(t - end_ramp, 6.0))
    cooling = np.exp(-_softplus(t - end_soak, 8.0) / tau)
    harmonics = np.arange(1, wander.shape[1] + 1)[:, None]
    angle = 2 * np.pi * harmonics * t / KILN_MINUTES
    amplitude, phase = wander[:, :, 0], wander[:, :, 1]
    # sum_j a_j sin(angle_j + phase_j), expanded into two matrix products
    drift = (amplitude * np.cos(phase)) @ np.sin(angle) + (
        amplitude * np.sin(phase)
    ) @ np.cos(angle)
    hot = rise / (peak - AMBIENT_C)
    return AMBIENT_C + rise * cooling + drift * hot * cooling


def _dropout_mask(minutes, n_runs, dropout_fraction, rng):
    """True where a thermocouple dropout hides the value (runs of minutes)."""
    mask = np.zeros((n_runs, minutes.size), dtype=bool)
    affected = np.flatnonzero(rng.random(n_runs) < dropout_fraction)
    n_gaps = rng.randint(1, 4, size=affected.size)
    for run, gaps in zip(affected, n_gaps, strict=True):
        starts = rng.uniform(minutes[0], minutes[-1] - 20.0, size=gaps)
        lengths = rng.uniform(3.0, 15.0, size=gaps)
        for s, length in zip(starts, lengths, strict=True):
            mask[run] |= (minutes >= s) & (minutes <= s + length)
    return mask


@validate_params(
    {
        "n_samples": [Interval(Integral, 1, None, closed="left")],
        "grid": ["array-like", None],
        "late_start_fraction": [Interval(Real, 0, 1, closed="both")],
        "dropout_fraction": [Interval(Real, 0, 1, closed="both")],
        "faulty_fraction": [Interval(Real, 0, 1, closed="both")],
        "thermocouple_noise": [Interval(Real, 0, None, closed="left")],
        "strength_noise": [Interval(Real, 0, None, closed="left")],
        "oxygen_grid": ["array-like", None],
        "oxygen_noise": [Interval(Real, 0, None, closed="left")],
        "as_frame": ["boolean"],
        "random_state": ["random_state"],
    },
    prefer_skip_nested_validation=True,
)
def make_kiln_firing(n_samples=200, *, grid=None, late_start_fraction=0.1,
                     dropout_fraction=0.1, faulty_fraction=0.03,
                     thermocouple_noise=1.5, strength_noise=1.0, oxygen_grid=None,
                     oxygen_noise=0.2, as_frame=False, random_state=None):
    """Invented kiln-firing runs: temperature curves, tile strength and cracks.

    A made-up ceramics plant fires stoneware tiles. Each run logs the kiln
    temperature (°C) once a minute over a 10-hour cycle: a ramp from ambient
    at the programmed rate (slowed by heavy loads), a soak near the peak
    set-point (1150-1250 °C), and a cool-down whose rate depends on the load.
    Slow controller wander makes every curve a little different. Some runs
    start late (the whole curve is shifted in time), some thermocouples drop
    out for a few minutes (runs of NaN), and a few runs are faulty (a heating
    element fails and the kiln never reaches its set-point).

    **All numbers are invented**: the generator is for examples, tests and the
    demo, not a model of any real kiln or material.

    The tiles' flexural strength is, by construction, a functional linear
    model of the true (noise-free, gap-free) temperature curve,

        strength = intercept + int_0^599 beta(t) T(t) dt + noise,

    with the smooth coefficient function ``beta`` returned as
    ``coef_function``. The crack flag is drawn from a functional logistic
    model with coefficient function ``crack_coef_function``. Integrals are
    computed on a fixed half-minute grid, so the responses do not depend on
    ``grid``.

    Parameters
    ----------
    n_samples : int, default=200
        Number of firing runs (rows).
    grid : array-like of shape (n_points,), default=None
        Time points (minutes since the cycle started) at which the curves are
        logged, strictly increasing within [0, 599]. None means every minute,
        ``0, 1, ..., 599``.
    late_start_fraction : float in [0, 1], default=0.1
        Expected fraction of runs that start 20-60 minutes late.
    dropout_fraction : float in [0, 1], default=0.1
        Expected fraction of runs with one to three thermocouple dropouts of
        3-15 minutes each, logged as NaN.
    faulty_fraction : float in [0, 1], default=0.03
        Expected fraction of faulty runs, whose kiln stalls 150-300 °C below
        the set-point.
    thermocouple_noise : float, default=1.5
        Standard deviation (°C) of independent measurement noise.
    strength_noise : float, default=1.0
        Standard deviation (MPa) of the strength measurement noise.
    oxygen_grid : array-like of shape (n_oxygen_points,), default=None
        Minutes at which the oxygen is logged, strictly increasing within
        [0, 599]. None means every five minutes, ``0, 5, ..., 595``.
    oxygen_noise : float, default=0.2
        Standard deviation (percentage points) of the analyser's noise.
    as_frame : bool, default=False
        If True, ``data`` is a pandas DataFrame whose column labels are the
        minutes (so skfunc infers the grid), ``target``, ``cracked`` and
        ``faulty`` are Series and ``settings`` is a DataFrame. Needs pandas.
    random_state : int, RandomState instance or None, default=None
        Seed; the same seed gives the same runs at any ``grid``.

    Returns
    -------
    data : :class:`~sklearn.utils.Bunch`
        With the fields

        data : ndarray or DataFrame of shape (n_samples, n_points)
            Logged temperature curves (°C), NaN where a thermocouple dropped
            out.
        target : ndarray or Series of shape (n_samples,)
            Tile flexural strength (MPa), the same as ``strength``.
        strength : ndarray or Series of shape (n_samples,)
        cracked : ndarray or Series of shape (n_samples,)
            1 when the crack inspection failed, else 0.
        settings : ndarray or DataFrame of shape (n_samples, 4)
            Programmed settings, columns ``settings_names``.
        settings_names : list of str
            ``peak_setpoint_c``, ``ramp_rate_c_per_min``, ``soak_min``,
            ``load_mass_kg``.
        grid : ndarray of shape (n_points,)
            The grid.
        true_curves : ndarray of shape (n_samples, n_points)
            Noise-free, gap-free curves on ``grid``.
        coef_function : ndarray of shape (n_points,)
            True strength coefficient function on ``grid``, MPa/(°C·min).
        intercept : float
            True strength intercept (MPa).
        crack_coef_function : ndarray of shape (n_points,)
            True crack log-odds coefficient function on ``grid``.
        crack_intercept : float
        crack_probability : ndarray of shape (n_samples,)
        start_delay : ndarray of shape (n_samples,)
            Minutes from the start of the log to the start of heating.
        late_start, faulty, has_dropout : ndarray of bool, shape (n_samples,)
        oxygen : ndarray or DataFrame of shape (n_samples, n_oxygen_points)
            Logged oxygen (percent by volume) on ``oxygen_grid``.
        oxygen_grid : ndarray of shape (n_oxygen_points,)
        true_oxygen : ndarray of shape (n_samples, n_oxygen_points)
            Noise-free oxygen curves.
        channels : ndarray or DataFrame of shape (n_samples, n_points + n_oxygen_points)
            Temperature and oxygen side by side (a DataFrame with (channel,
            minute) column labels), for the estimators that take several
            channels.
        channel_grid : dict
            ``{"temperature": grid, "oxygen": oxygen_grid}``: pass it as
            ``grid=`` with ``channels``.
        colour : ndarray or Series of shape (n_samples,)
            Glaze lightness (L*, invented) from both channels.
        colour_coef_function : dict
            True coefficient functions of ``colour``: ``"temperature"`` on
            ``grid`` (L* per °C·min) and ``"oxygen"`` on ``oxygen_grid`` (L*
            per percent·min).
        colour_intercept : float
        DESCR : str

    See Also
    --------
    make_smooth_regression : Random smooth curves with a known coefficient
        function, for tests.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.datasets import make_kiln_firing
    >>> kiln = make_kiln_firing(n_samples=50, random_state=0)
    >>> kiln.data.shape, kiln.settings_names[0]
    ((50, 600), 'peak_setpoint_c')
    >>> peak = kiln.settings[0, 0]  # the first run's peak setpoint, about 1200 C
    >>> bool(abs(np.nanmax(kiln.data[0]) - peak) < 25)  # it soaks near the peak
    True
    """
    rng = check_random_state(random_state)
    if grid is None:
        grid = np.arange(KILN_MINUTES, dtype=np.float64)
    minutes = check_grid(grid, name="grid")
    if minutes[0] < 0 or minutes[-1] > KILN_MINUTES - 1:
        raise ValueError(
            f"grid must lie within [0, {KILN_MINUTES - 1}] (the cycle); got "
            f"values in [{minutes[0]}, {minutes[-1]}]."
        )
    n = n_samples

    def column(low, high):
        return rng.uniform(low, high, size=(n, 1))

    peak_set = column(1150.0, 1250.0)
    ramp_set = column(4.5, 6.5)
    soak = column(45.0, 105.0)
    load = column(200.0, 600.0)
    late = rng.random(n) < late_start_fraction
    faulty = rng.random(n) < faulty_fraction
    start = column(5.0, 15.0) + late[:, None] * column(20.0, 60.0)
    ramp = ramp_set * (1.0 - 0.15 * (load - 400.0) / 200.0)
    peak = peak_set - faulty[:, None] * column(150.0, 300.0)
    tau = 90.0 + 0.1 * (load - 400.0) + column(-15.0, 15.0)
    wander = np.stack(
        [
            rng.normal(0.0, 1.0, size=(n, _WANDER.size)) * _WANDER,
            rng.uniform(0, 2 * np.pi, size=(n, _WANDER.size)),
        ],
        axis=-1,
    )
    params = (start, ramp, peak, soak, tau, wander)
    fine = _kiln_profiles(_FINE, *params)
    true_curves = _kiln_profiles(minutes, *params)

    w = quadrature_weights(_FINE, "simpson")
    beta_fine, gamma_fine = kiln_strength_coef(_FINE), kiln_crack_coef(_FINE)
    nominal = _nominal_profile()
    intercept = 45.0 - float(nominal @ (w * beta_fine))
    crack_intercept = -0.8 - float(nominal @ (w * gamma_fine))
    strength = intercept + fine @ (w * beta_fine) + rng.normal(0, strength_noise, n)
    log_odds = crack_intercept + fine @ (w * gamma_fine)
    crack_probability = 1.0 / (1.0 + np.exp(-log_odds))
    cracked = (rng.random(n) < crack_probability).astype(np.int64)

    observed = true_curves + rng.normal(0.0, thermocouple_noise, true_curves.shape)
    gaps = _dropout_mask(minutes, n, dropout_fraction, rng)
    observed[gaps] = np.nan
    settings = np.hstack([peak_set, ramp_set, soak, load])
    oxygen = _kiln_oxygen(rng, oxygen_grid, oxygen_noise, minutes, params, fine, w)

    bunch = Bunch(
        data=observed,
        target=strength,
        strength=strength,
        cracked=cracked,
        settings=settings,
        settings_names=list(SETTINGS_NAMES),
        grid=minutes,
        true_curves=true_curves,
        coef_function=kiln_strength_coef(minutes),
        intercept=intercept,
        crack_coef_function=kiln_crack_coef(minutes),
        crack_intercept=crack_intercept,
        crack_probability=crack_probability,
        start_delay=start.ravel(),
        late_start=late,
        faulty=faulty,
        has_dropout=gaps.any(axis=1),
        **oxygen,
        channels=np.hstack([observed, oxygen["oxygen"]]),
        channel_grid={"temperature": minutes, "oxygen": oxygen["oxygen_grid"]},
        DESCR=_KILN_DESCR,
    )
    if as_frame:
        _to_frames(bunch)
    return bunch


def _kiln_oxygen(rng, oxygen_grid, oxygen_noise, minutes, params, fine, w):
    """The oxygen channel and the lightness it drives, from one extra draw of
    ``rng`` (made after all the others, which therefore do not change)."""
    if oxygen_grid is None:
        oxygen_grid = np.arange(0.0, KILN_MINUTES, OXYGEN_STEP)
    oxygen_minutes = check_grid(oxygen_grid, name="oxygen_grid")
    if oxygen_minutes[0] < 0 or oxygen_minutes[-1] > KILN_MINUTES - 1:
        raise ValueError(
            f"oxygen_grid must lie within [0, {KILN_MINUTES - 1}] (the cycle); got "
            f"values in [{oxygen_minutes[0]}, {oxygen_minutes[-1]}]."
        )
    own = np.random.RandomState(rng.randint(2**31 - 1))
    start, ramp, peak, soak, _, _ = params
    n = start.shape[0]
    end_ramp = start + (peak - AMBIENT_C) / ramp
    end_soak = end_ramp + soak

    def column(low, high):
        return own.uniform(low, high, size=(n, 1))

    base = column(7.0, 11.0)
    reduction = (end_ramp - column(0.0, 40.0), column(30.0, 90.0), column(1.0, 4.0))
    wander = np.stack([own.normal(0.0, 0.3, size=(n, 3)),
                       own.uniform(0, 2 * np.pi, size=(n, 3))], axis=-1)
    args = (start, end_ramp, end_soak, base, reduction, wander)
    true_oxygen = _oxygen_profiles(oxygen_minutes, *args)
    beta_t, beta_o = kiln_colour_coefs(_FINE, _FINE)
    nominal_t = _nominal_profile()
    one = np.ones((1, 1))
    nominal_o = _oxygen_profiles(
        _FINE, 10 * one, 10 + 1175 / 5.5 * one, 10 + 1175 / 5.5 + 75 * one, 9 * one,
        (10 + 1175 / 5.5 - 20 * one, 60 * one, 2.5 * one), np.zeros((1, 3, 2)),
    )[0]
    intercept = 62.0 - float(nominal_t @ (w * beta_t) + nominal_o @ (w * beta_o))
    colour = (intercept + fine @ (w * beta_t) + _oxygen_profiles(_FINE, *args) @ (w * beta_o)
              + own.normal(0.0, 0.5, n))
    observed = true_oxygen + own.normal(0.0, oxygen_noise, true_oxygen.shape)
    coef_t, coef_o = kiln_colour_coefs(minutes, oxygen_minutes)
    return {
        "oxygen": observed,
        "oxygen_grid": oxygen_minutes,
        "true_oxygen": true_oxygen,
        "colour": colour,
        "colour_coef_function": {"temperature": coef_t, "oxygen": coef_o},
        "colour_intercept": intercept,
    }


def _nominal_profile():
    """A typical run on the fine grid, used to centre the invented responses."""
    one = np.ones((1, 1))
    return _kiln_profiles(
        _FINE, 10 * one, 5.5 * one, 1200 * one, 75 * one, 90 * one,
        np.zeros((1, _WANDER.size, 2)),
    )[0]


def _to_frames(bunch):
    try:
        import pandas as pd
    except ImportError as exc:  # pragma: no cover - pandas is installed in tests
        raise ImportError(
            "as_frame=True needs pandas; install it (pip install pandas) or use "
            "as_frame=False for numpy arrays."
        ) from exc
    labels = [int(m) if float(m).is_integer() else float(m) for m in bunch.grid]
    bunch.data = pd.DataFrame(bunch.data, columns=labels)
    bunch.data.columns.name = "minute"
    oxygen_labels = [int(m) if float(m).is_integer() else float(m)
                     for m in bunch.oxygen_grid]
    bunch.oxygen = pd.DataFrame(bunch.oxygen, columns=pd.Index(oxygen_labels,
                                                               name="minute"))
    bunch.channels = pd.concat({"temperature": bunch.data, "oxygen": bunch.oxygen},
                               axis=1, names=["channel", "minute"])
    bunch.colour = pd.Series(bunch.colour, name="colour")
    for name in ("strength", "cracked"):
        bunch[name] = pd.Series(bunch[name], name=name)
    bunch.target = bunch.strength
    bunch.settings = pd.DataFrame(bunch.settings, columns=bunch.settings_names)


_KILN_DESCR = """\
Invented kiln-firing data
-------------------------
Every number is invented, for examples and tests only. Each row is one firing
run of a made-up ceramics kiln: the temperature (deg C) logged on a minute grid
over a 10-hour cycle (ramp, soak near 1150-1250 deg C, cool-down). Some runs
start late, some have thermocouple dropouts (NaN), a few are faulty. Targets:
tile flexural strength (MPa) from a known smooth coefficient function of the
curve, and a crack flag from a known functional logistic model. Settings: peak
set-point, ramp rate, soak length and load mass. A second channel, the oxygen
in the kiln atmosphere (percent) every five minutes, and a glaze lightness
(L*) from known coefficient functions of both channels.
"""


def _fourier_design(t, domain, n_terms):
    """L2-orthonormal Fourier functions on ``domain`` at ``t``: (len(t), n_terms)."""
    a, b = domain
    length = b - a
    k = np.arange(n_terms)
    freq = (k + 1) // 2
    angle = 2 * np.pi * freq[None, :] * (np.asarray(t)[:, None] - a) / length
    values = np.where(k % 2 == 1, np.sin(angle), np.cos(angle)) * np.sqrt(2 / length)
    values[:, 0] = 1.0 / np.sqrt(length)
    return values


def _evaluation_grid(grid, name="grid"):
    if grid is None:
        return np.linspace(0.0, 1.0, 101)
    if isinstance(grid, Integral):  # validated >= 2 by the caller
        return np.linspace(0.0, 1.0, int(grid))
    return check_grid(grid, name=name)


#: constraints of ``n_samples`` and of a ``grid`` given as points or a count
_SAMPLES_ON_A_GRID = {
    "n_samples": [Interval(Integral, 1, None, closed="left")],
    "grid": ["array-like", Interval(Integral, 2, None, closed="left"), None],
}


@validate_params(
    {
        **_SAMPLES_ON_A_GRID,
        "n_terms": [Interval(Integral, 1, None, closed="left")],
        "noise": [Interval(Real, 0, None, closed="left")],
        "curve_noise": [Interval(Real, 0, None, closed="left")],
        "intercept": [Real],
        "random_state": ["random_state"],
    },
    prefer_skip_nested_validation=True,
)
@fill_doc
def make_smooth_regression(
    n_samples=100,
    *,
    grid=None,
    n_terms=11,
    noise=0.1,
    curve_noise=0.0,
    intercept=0.0,
    random_state=None,
):
    """Random smooth curves and a scalar response with a known coefficient function.

    The curves are random Fourier series on the grid's domain ``[a, b]``,
    ``X_i(t) = sum_k xi_ik phi_k(t)`` with L2-orthonormal ``phi_k`` and
    independent ``xi_ik ~ N(0, 1 / (1 + k)^2)`` (smooth, decaying variance).
    The response is ``y_i = intercept + int X_i beta + noise`` with the smooth
    coefficient function ``beta = sum_k b_k phi_k``, ``b_k = 2 (-1)^k /
    (1 + k)^2`` for ``k >= 1`` (``b_0 = 0``). Because the basis is orthonormal,
    the integral is exactly ``sum_k xi_ik b_k``: it does not depend on the
    grid, and the same ``random_state`` gives the same curves and responses
    on any grid of the same domain. The data are invented for tests.

    Parameters
    ----------
    %(dataset_samples_grid)s
    n_terms : int, default=11
        Number of Fourier functions in the curves and in ``beta``.
    noise : float, default=0.1
        Standard deviation of the Gaussian noise added to ``y``.
    curve_noise : float, default=0.0
        Standard deviation of independent noise added to every curve value.
    intercept : float, default=0.0
        Intercept of the model.
    %(dataset_random_state)s

    Returns
    -------
    X : ndarray of shape (n_samples, n_points)
        Curves as rows.
    y : ndarray of shape (n_samples,)
        Responses.
    coef : ndarray of shape (n_points,)
        The true coefficient function ``beta`` on the grid.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.datasets import make_smooth_regression
    >>> X, y, beta = make_smooth_regression(50, grid=201, noise=0.0, random_state=0)
    >>> t = np.linspace(0, 1, 201)
    >>> bool(np.allclose(np.trapezoid(X * beta, t, axis=1), y, atol=1e-3))
    True
    """
    rng = check_random_state(random_state)
    t = _evaluation_grid(grid)
    k = np.arange(n_terms)
    scores = rng.normal(size=(n_samples, n_terms)) / (1.0 + k)
    b = 2.0 * (-1.0) ** k / (1.0 + k) ** 2
    b[0] = 0.0
    y = intercept + scores @ b + rng.normal(0.0, noise, n_samples)
    phi = _fourier_design(t, (t[0], t[-1]), n_terms)
    X = scores @ phi.T
    if curve_noise > 0:
        X = X + rng.normal(0.0, curve_noise, X.shape)
    return X, y, phi @ b


@validate_params(
    {
        **_SAMPLES_ON_A_GRID,
        "sigma": [Interval(Real, 0, None, closed="neither")],
        "random_state": ["random_state"],
    },
    prefer_skip_nested_validation=True,
)
@fill_doc
def make_brownian_paths(n_samples=100, *, grid=None, sigma=1.0, random_state=None):
    """Brownian motion paths started at 0 at the first grid point.

    ``W(t_0) = 0`` and the increments are independent
    ``N(0, sigma^2 (t_{j+1} - t_j))``, so ``Cov(W(s), W(t)) = sigma^2 min(s,
    t) - sigma^2 t_0`` for ``s, t >= t_0``. On [0, 1] the covariance is
    ``sigma^2 min(s, t)``, whose eigenvalues are ``sigma^2 / ((k - 1/2) pi)^2``
    (the Karhunen-Loeve expansion of Brownian motion). Invented data for
    tests.

    Parameters
    ----------
    %(dataset_samples_grid)s
    sigma : float, default=1.0
        Diffusion coefficient.
    %(dataset_random_state)s

    Returns
    -------
    X : ndarray of shape (n_samples, n_points)

    Examples
    --------
    >>> from skfunc.datasets import make_brownian_paths
    >>> make_brownian_paths(3, grid=11, random_state=0).shape
    (3, 11)
    """
    rng = check_random_state(random_state)
    t = _evaluation_grid(grid)
    steps = rng.normal(size=(n_samples, t.size - 1)) * sigma * np.sqrt(np.diff(t))
    return np.hstack([np.zeros((n_samples, 1)), np.cumsum(steps, axis=1)])
