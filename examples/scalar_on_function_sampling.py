"""
Kiln runs logged at three rates: FunctionalRidgeCV against RidgeCV on raw values
================================================================================

The table in the user guide's scalar-on-function page comes from this script.

Every number here is invented: runs ramp from 20 degC to a peak of
1150-1250 degC, soak, and cool; flexural strength (MPa) grows with the
heat-work during the soak and drops with a slow cool-down. Predictions are
statistical estimates: validate them on your own process data before they
drive a quality or safety decision.

Run it with skfunc installed: ``python examples/scalar_on_function_sampling.py``.
"""

import numpy as np
from scipy.interpolate import interp1d
from sklearn.linear_model import RidgeCV
from sklearn.model_selection import cross_val_score

from skfunc import FunctionalRidgeCV


def kiln_runs(n, t, rng):
    """Invented firing runs (temperature in degC at times t in hours)."""
    peak = rng.uniform(1150, 1250, n)[:, None]
    ramp_end = rng.uniform(4.0, 5.0, n)[:, None]
    soak_end = ramp_end + rng.uniform(1.0, 2.0, n)[:, None]
    cool = rng.uniform(0.3, 0.6, n)[:, None]
    rise = 20 + (peak - 20) * np.clip(t / ramp_end, 0, 1) ** 1.3
    fall = peak * np.exp(-cool * np.clip(t - soak_end, 0, None))
    return np.where(t <= soak_end, rise, fall)


def true_beta(t):
    """MPa per degC hour: the soak helps, a slow cool-down hurts (invented)."""
    soak = 0.004 * np.exp(-(((t - 5.5) / 0.8) ** 2))
    cooling = 0.002 * np.exp(-(((t - 8) / 1.0) ** 2))
    return soak - cooling


def main():
    rng = np.random.default_rng(7)
    fine = np.linspace(0, 10, 601)
    runs = kiln_runs(120, fine, rng)
    strength = 20 + runs @ (true_beta(fine) * np.gradient(fine))
    strength += rng.normal(0, 0.1, len(strength))
    grids = {
        "601 points, every minute": fine,
        "121 points, every 5 minutes": np.linspace(0, 10, 121),
        "121 points, uneven": 10 * np.linspace(0, 1, 121) ** 1.5,
    }
    alphas = np.logspace(-4, 8, 49)
    betas = {}
    for name, t in grids.items():
        X = interp1d(fine, runs, axis=1, kind="cubic")(t)
        functional = FunctionalRidgeCV(grid=t)
        raw = RidgeCV(alphas=alphas)
        r2_functional = cross_val_score(functional, X, strength, cv=5).mean()
        r2_raw = cross_val_score(raw, X, strength, cv=5).mean()
        functional.fit(X, strength)
        raw.fit(X, strength)
        betas[name] = np.interp(fine, t, functional.coef_function_)
        print(
            f"{name:28s} functional: alpha {functional.alpha_:8.4g}, CV R2 "
            f"{r2_functional:.3f} | raw: alpha {raw.alpha_:8.3g}, CV R2 {r2_raw:.3f},"
            f" largest weight {np.abs(raw.coef_).max():.2e}"
        )
    reference = betas["601 points, every minute"]
    for name, beta in betas.items():
        change = np.abs(beta - reference).max() / np.abs(reference).max()
        print(f"{name:28s} beta differs from the every-minute fit by {change:.2%}")


if __name__ == "__main__":
    main()
