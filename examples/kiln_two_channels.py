"""
Temperature and oxygen together: one coefficient function per channel
=======================================================================

Invented kiln data: the gas-fired kiln logs its temperature every minute and
the oxygen in its atmosphere every five minutes. The glaze lightness (L*)
of each run depends on both: a leaner atmosphere in the soak darkens the
glaze, and so, less, does more heat. Each run is one row with the two
channels side by side; ``grid={"temperature": ..., "oxygen": ...}`` tells
every estimator where one channel ends and the next begins, and each
channel keeps its own grid.

The smoother fills the thermocouple gaps channel by channel (each channel
with its own penalty chosen by GCV), and FunctionalRidgeCV fits one
coefficient function per channel, each with its roughness penalty on the
channel's own scale, so the fit does not depend on whether oxygen is logged
in percent or as a fraction. Since the data are invented, the true
coefficient functions are drawn beside the estimates. After the burners
stop every run's atmosphere is air, so the data say nothing about the oxygen
coefficient there; its band widens to show it.

Last, FunctionalPCA finds smoothed principal components of both channels
together, with a basis size per channel and one cross-validated penalty
that smooths both channels alike; a change of oxygen's unit changes no
score.

The bands are pointwise and ignore the smoothing bias. Predictions are
statistical estimates: validate them on your own process data before they
drive a quality or safety decision.
"""

import matplotlib.pyplot as plt
import numpy as np
from sklearn.model_selection import KFold, cross_val_score

from skfunc.channels import split_channels
from skfunc.datasets import make_kiln_firing
from skfunc.decomposition import FunctionalPCA
from skfunc.linear_model import FunctionalRidgeCV
from skfunc.plotting import CoefficientFunctionDisplay, ComponentPerturbationDisplay
from skfunc.preprocessing import CurveSmoother

kiln = make_kiln_firing(300, random_state=3)
grid = kiln.channel_grid  # {"temperature": minutes 0..599, "oxygen": 0, 5, ..., 595}
print("columns per channel:", {name: g.size for name, g in grid.items()})


# fill the thermocouple gaps channel by channel; the smoother does not see
# the lightness, so smoothing once before cross-validating leaks nothing
smoother = CurveSmoother(grid=grid, n_basis=40).fit(kiln.channels)
X = smoother.transform(kiln.channels)
print("smoothing penalty per channel:", np.array2string(smoother.alpha_, precision=3))

# n_basis applies to every channel; 20 B-splines each keep the integrated
# design well conditioned for these very smooth curves
ridge = FunctionalRidgeCV(grid=grid, n_basis=20)
temperature_only = FunctionalRidgeCV(grid=kiln.grid, n_basis=20)
cv = KFold(5, shuffle=True, random_state=0)
both = cross_val_score(ridge, X, kiln.colour, cv=cv)
alone = cross_val_score(temperature_only, X[:, : kiln.grid.size], kiln.colour, cv=cv)
print(f"cross-validated R^2 from both channels:   {both.mean():.3f}")
print(f"cross-validated R^2 from temperature only: {alone.mean():.3f}")

ridge.fit(X, kiln.colour)
lower, upper = ridge.confidence_band(0.95)
lows, highs = split_channels(ridge, lower), split_channels(ridge, upper)
print(f"GCV-chosen penalty: {ridge.alpha_:.3g}")
for name, truth in kiln.colour_coef_function.items():
    inside = np.mean((lows[name][1] <= truth) & (truth <= highs[name][1]))
    print(f"true {name} coefficient inside the 95% pointwise band at {inside:.0%} "
          "of its grid")

# the same fit with oxygen as a fraction instead of percent
fraction = X.copy()
fraction[:, kiln.grid.size:] /= 100
refit = FunctionalRidgeCV(grid=grid, n_basis=20).fit(fraction, kiln.colour)
change = np.abs(refit.predict(fraction) - ridge.predict(X)).max()
print(f"largest change of a prediction with oxygen as a fraction: {change:.1e} L*")

units = {"temperature": "L* per °C·min", "oxygen": "L* per %·min"}
fig, axes = plt.subplots(2, 2, figsize=(13, 7), layout="constrained")
for column, name in enumerate(("temperature", "oxygen")):
    t, raw = split_channels(ridge, kiln.channels[:5])[name]
    axes[0, column].plot(t, raw.T, lw=0.8)
    axes[0, column].set(title=f"Five runs: {name}", xlabel="minute",
                        ylabel="°C" if name == "temperature" else "oxygen, % by volume")
    CoefficientFunctionDisplay.from_estimator(
        ridge, channel=name, reference=kiln.colour_coef_function[name],
        ax=axes[1, column])
    axes[1, column].set(title=f"Coefficient function of {name}", xlabel="minute",
                        ylabel=units[name])

# %%
# Both channels together: smoothed principal components
# -----------------------------------------------------
# FunctionalPCA with the same layout finds the main modes of variation of
# whole runs, temperature and oxygen together. Each channel counts by one
# over its integrated variance (the default ``channel_weights``), so neither
# °C nor percent dominates, and the roughness penalty is measured per
# channel on its own scale: one cross-validated alpha smooths both alike.
# The oxygen log has a fifth of the temperature log's points, so it gets a
# smaller basis (``n_basis`` by channel).
fpca = FunctionalPCA(3, basis="bspline", n_basis={"temperature": 40, "oxygen": 25},
                     grid=grid).fit(X)
print(f"cross-validated smoothing of the components: {fpca.alpha_:.3g}")
print("share of the weighted variance per component:",
      np.array2string(fpca.explained_variance_ratio_, precision=3))
# each channel's part of a component's (unit) weighted norm v_c int psi_c^2
parts = split_channels(fpca, fpca.components_)
weights = split_channels(fpca, fpca.quadrature_weights_)
for k in range(2):
    share = {name: v * values[k] ** 2 @ weights[name][1]
             for v, (name, (t, values)) in zip(fpca.channel_weights_, parts.items())}
    print(f"component {k + 1}: " + ", ".join(
        f"{name} {s:.0%}" for name, s in share.items()) + " of its weighted norm")
refit = FunctionalPCA(3, basis="bspline", n_basis={"temperature": 40, "oxygen": 25},
                      grid=grid).fit(fraction)
change = np.abs(np.abs(refit.transform(fraction)) - np.abs(fpca.transform(X))).max()
print(f"largest change of a score with oxygen as a fraction: {change:.1e}")

fig, axes = plt.subplots(2, 2, figsize=(13, 7), layout="constrained")
for row, name in enumerate(("temperature", "oxygen")):
    ComponentPerturbationDisplay.from_estimator(fpca, n_components=2, channel=name,
                                                ax=axes[row])
    for ax in axes[row]:
        ax.set(xlabel="minute",
               ylabel="°C" if name == "temperature" else "oxygen, % by volume")
        ax.set_title(f"{name}: {ax.get_title()}")
