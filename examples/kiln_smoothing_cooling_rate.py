"""
Smoothing firing curves with dropouts, and their cooling rates
==============================================================

Invented kiln data: each run logs the kiln temperature once a minute, and
some thermocouples drop out for a few minutes (NaN). CurveSmoother fits every
curve with a roughness penalty chosen by generalized cross-validation (GCV),
fills the gaps from the neighbouring minutes, and returns the first
derivative -- the heating or cooling rate in °C per minute -- which raw
differences of noisy readings estimate badly.

Cooling rates through the quartz inversion (around 573 °C) matter for cracks
in real ceramics; here the data and the threshold of interest are only for
illustration. Validate any such analysis on your own process data.
"""

import matplotlib.pyplot as plt
import numpy as np

from skfunc.datasets import make_kiln_firing
from skfunc.plotting import AlphaCriterionDisplay
from skfunc.preprocessing import CurveSmoother

kiln = make_kiln_firing(120, dropout_fraction=0.3, random_state=0)
minutes = kiln.grid

# smooth once (GCV picks the penalty) ...
smoother = CurveSmoother(grid=minutes, n_basis=40).fit(kiln.data)
smooth = smoother.transform(kiln.data)
# ... and the same fitted curves' first derivative: °C per minute
rate = CurveSmoother(grid=minutes, n_basis=40, alpha=smoother.alpha_, derivative=1)
rate = rate.fit(kiln.data).transform(kiln.data)

# the fastest cooling while the load passes 573 °C, per run
passing = (kiln.true_curves < 650) & (kiln.true_curves > 500)
passing &= minutes > minutes[np.argmax(kiln.true_curves, axis=1)][:, None]
fastest = np.array([r[p].min() for r, p in zip(rate, passing, strict=True)])
print(f"GCV-chosen smoothing alpha: {smoother.alpha_:.3g}")
print(f"fastest cooling through 500-650 °C: median {np.median(fastest):.1f} °C/min, "
      f"range {fastest.min():.1f} to {fastest.max():.1f} °C/min")
print(f"crack rate, slowest half of runs {kiln.cracked[fastest > np.median(fastest)].mean():.2f}"
      f" vs fastest half {kiln.cracked[fastest <= np.median(fastest)].mean():.2f}")

run = int(np.flatnonzero(kiln.has_dropout)[0])
gap = minutes[np.isnan(kiln.data[run])]
zoom = (minutes >= gap[0] - 30) & (minutes <= gap[0] + 30)
raw_rate = np.gradient(kiln.data[run], minutes)
fig, axes = plt.subplots(1, 3, figsize=(15, 4), layout="constrained")
axes[0].plot(minutes[zoom], kiln.data[run, zoom], "o", markersize=3, color="0.4",
             label="logged (gap = dropout)")
axes[0].plot(minutes[zoom], smooth[run, zoom], color="C0", label="smoothed, gap filled")
axes[0].set(title=f"Run {run} around its first dropout", xlabel="minute",
            ylabel="temperature (°C)")
axes[0].legend(loc="upper center", bbox_to_anchor=(0.5, -0.18), fontsize="small",
               ncols=2, frameon=False)
axes[1].plot(minutes, raw_rate, color="0.7", linewidth=0.7, label="raw differences")
axes[1].plot(minutes, rate[run], color="C3", label="derivative of the smooth")
axes[1].set(title=f"Run {run}: heating / cooling rate", xlabel="minute",
            ylabel="°C per minute", ylim=(-15, 12))
axes[1].legend(loc="upper center", bbox_to_anchor=(0.5, -0.18), fontsize="small",
               ncols=2, frameon=False)
AlphaCriterionDisplay.from_estimator(smoother, ax=axes[2])
axes[2].set_title("Choice of the smoothing penalty")
