"""
Aligning late starts (and the other phases of a firing) before FPCA
===================================================================

Invented kiln data: some firing runs start 20-60 minutes late, and runs also
differ in ramp rate, soak length and cooling, so the phases of a firing fall
at different minutes. On the raw curves the first functional principal
component is mostly that timing. LandmarkAligner warps every run so that four
landmarks -- heating starts (100 °C), the ramp passes 600 °C, the soak ends
(30 °C below the run's peak), cooling passes 600 °C -- fall at their average
times, with smooth strictly increasing warps. FunctionalPCA on the aligned
curves then describes the firing itself, and the warps remain available as
features of their own.

A shift alone (ShiftAligner) matches whole curves, so there the ramp and
cooling differences drag the estimated shift away from the late start; the
landmarks separate the phases.

The data are invented for illustration; validate any such analysis on your
own process data before it drives a quality decision.
"""

import matplotlib.pyplot as plt
import numpy as np

from skfunc.alignment import LandmarkAligner, ShiftAligner
from skfunc.datasets import make_kiln_firing
from skfunc.decomposition import FunctionalPCA
from skfunc.preprocessing import CurveSmoother


def crossing(X, grid, level, after=None):
    """First time each curve passes ``level`` (upwards, or downwards after the
    times ``after``), by linear interpolation between the minutes."""
    rows = np.arange(len(X))
    if after is None:
        past = X > level
    else:
        past = (grid > after[:, None]) & (X < np.broadcast_to(level, len(X))[:, None])
    j = np.argmax(past, axis=1)
    x0, x1 = X[rows, j - 1], X[rows, j]
    level = np.broadcast_to(level, len(X))
    return grid[j - 1] + (level - x0) / (x1 - x0) * (grid[j] - grid[j - 1])


def firing_landmarks(X, grid):
    peak_time = grid[np.argmax(X, axis=1)]
    return np.column_stack([
        crossing(X, grid, 100.0),                                # heating starts
        crossing(X, grid, 600.0),                                # ramp at 600 °C
        crossing(X, grid, X.max(axis=1) - 30.0, after=peak_time),  # soak ends
        crossing(X, grid, 600.0, after=peak_time),               # cooling at 600 °C
    ])


kiln = make_kiln_firing(n_samples=150, late_start_fraction=0.25, random_state=0)
grid = kiln.grid  # minutes since the cycle started

# fill the thermocouple dropouts and remove measurement noise first
curves = CurveSmoother(grid=grid, n_basis=60).fit_transform(kiln.data)

aligner = LandmarkAligner(firing_landmarks, grid=grid).fit(curves)
aligned = aligner.transform(curves)
warps = aligner.transform_warps(curves)  # run minute -> template minute
delay = kiln.start_delay
print(f"runs: {len(curves)}, late starts: {kiln.late_start.sum()}")
print("target landmark minutes: " + ", ".join(f"{v:.0f}" for v in aligner.target_landmarks_))
print("heating-start landmark vs true start delay: correlation "
      f"{np.corrcoef(aligner.landmarks_[:, 0], delay)[0, 1]:.3f}")
shift = ShiftAligner(max_shift=90.0, grid=grid).fit(curves)
print("ShiftAligner's shift vs true start delay: correlation "
      f"{np.corrcoef(shift.shifts_, delay)[0, 1]:.3f}")

raw_fpca = FunctionalPCA(n_components=3, grid=grid).fit(curves)
aligned_fpca = FunctionalPCA(n_components=3, grid=grid).fit(aligned)
for name, fpca, X in (("raw", raw_fpca, curves), ("aligned", aligned_fpca, aligned)):
    first = fpca.transform(X)[:, 0]
    print(f"{name:8s} first component: {fpca.explained_variance_ratio_[0]:.0%} of "
          f"variance, |correlation| with start delay {abs(np.corrcoef(first, delay)[0, 1]):.2f}, "
          f"with load mass {abs(np.corrcoef(first, kiln.settings[:, 3])[0, 1]):.2f}")

fig, axes = plt.subplots(2, 2, figsize=(11, 7), layout="constrained")
late = kiln.late_start
for ax, values, title in ((axes[0, 0], curves, "raw (smoothed) curves"),
                          (axes[0, 1], aligned, "aligned curves")):
    ax.plot(grid, values[~late].T, color="0.6", lw=0.5)
    ax.plot(grid, values[late].T, color="tab:red", lw=0.6)
    ax.plot(grid, aligner.template_, color="black", lw=2, label="template")
    ax.set(title=f"{title} (late starts in red)", xlabel="minute",
           ylabel="temperature (°C)")
    ax.legend(loc="lower center")
axes[1, 0].plot(grid, (warps[~late] - grid).T, color="0.6", lw=0.6)
axes[1, 0].plot(grid, (warps[late] - grid).T, color="tab:red", lw=0.8)
axes[1, 0].set(title="warps gamma(t) - t: below 0, the run is behind the template",
               xlabel="the run's own minute t",
               ylabel="template minute - run minute")
for fpca, style, name in ((raw_fpca, "--", "raw"), (aligned_fpca, "-", "aligned")):
    axes[1, 1].plot(grid, fpca.components_[0], style,
                    label=f"{name}: {fpca.explained_variance_ratio_[0]:.0%} of variance")
axes[1, 1].set(title="first functional principal component", xlabel="minute",
               ylabel="1 / sqrt(minute)")
axes[1, 1].legend()
