"""
Kiln runs read by hand at a few minutes
=======================================

Invented kiln data: an older kiln has no logger, so an operator reads the
pyrometer by hand, six times per 10-hour run, at minutes that differ from
run to run (NaN everywhere else). No run is seen well enough to be smoothed
on its own. SparseFunctionalPCA pools the readings of all runs to estimate
the mean course of a firing and the main ways runs differ from it, then
predicts each run's whole curve, with a pointwise 95% band, from its own
six readings. Its scores feed a model of the tiles' strength like any other
features; scikit-learn's own way with missing values (each gap filled with
its column's mean) is the comparison.

The bands hold the fitted mean and components as known and describe only
the uncertainty of a run's scores: variation the components do not carry
is not in them. Here that is mostly the late starts and the spread of ramp
rates, which move the sharp corner where the ramp meets the soak by up to
an hour; so the bands cover the true curves (known, the data being
invented) at far fewer than 95% of the minutes, as the script prints. A
predicted curve is an estimate from a handful of readings: between them it
shows what similar runs did, not what this kiln did. Do not use it for
acceptance or safety decisions; follow the applicable standards and
qualified practice. Figures are saved to the directory given as the first
argument (by default a new temporary directory).
"""

import sys
import tempfile
from pathlib import Path

import matplotlib.pyplot as plt
import numpy as np
from sklearn.impute import SimpleImputer
from sklearn.linear_model import RidgeCV
from sklearn.model_selection import cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from skfunc.datasets import make_kiln_firing
from skfunc.decomposition import SparseFunctionalPCA

kiln = make_kiln_firing(300, dropout_fraction=0.0, random_state=7)
minutes = kiln.grid
rng = np.random.default_rng(0)

# six readings per run at random minutes, read to the nearest degree
readings = np.full(kiln.data.shape, np.nan)
for run in range(readings.shape[0]):
    read_at = rng.choice(minutes.size, 6, replace=False)
    readings[run, read_at] = np.round(kiln.data[run, read_at])

train, test = readings[:250], readings[250:]
sparse = SparseFunctionalPCA(grid=minutes).fit(train)
print(f"components kept: {sparse.n_components_}, explaining "
      f"{sparse.explained_variance_ratio_[:3].round(3)} of the variance (first three)")
print(f"B-splines: {sparse.n_basis_} for the mean, {sparse.covariance_n_basis_} per "
      f"direction for the covariance; reading noise sd {np.sqrt(sparse.noise_variance_):.1f} °C")

# whole curves of the 50 new runs from their six readings each
band = sparse.predict_curves(test)
truth = kiln.true_curves[250:]
inside = np.mean((truth >= band.lower) & (truth <= band.upper))
error = np.sqrt(np.mean((band.curves - truth) ** 2))
print(f"new runs: predicted curves off the true ones by {error:.0f} °C (root mean "
      f"square); true minutes inside the 95% bands: {inside:.0%}")
shown = slice(0, 3)

out = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(tempfile.mkdtemp())
fig, axes = plt.subplots(1, 3, figsize=(12, 3.8), sharey=True, layout="constrained")
for ax, row, curve, lower, upper, true in zip(axes, test[shown], band.curves[shown],
                                             band.lower[shown], band.upper[shown],
                                             truth[shown], strict=True):
    ax.fill_between(minutes, lower, upper, color="tab:blue", alpha=0.25,
                    label="95% pointwise band")
    ax.plot(minutes, curve, color="tab:blue", label="predicted curve")
    ax.plot(minutes, true, color="black", linestyle="--", linewidth=1,
            label="true curve (invented)")
    read = ~np.isnan(row)
    ax.plot(minutes[read], row[read], "o", color="tab:red", label="hand readings")
    ax.set_xlabel("minutes since the cycle started")
axes[0].set_ylabel("kiln temperature (°C)")
axes[0].legend(loc="lower center", fontsize=8)
fig.suptitle("Three new runs, each predicted from six hand readings")
fig.savefig(out / "kiln_hand_readings_curves.png", dpi=100)

fig, ax = plt.subplots(figsize=(7, 3.8), layout="constrained")
for k in range(3):
    ax.plot(minutes, sparse.components_[k], label=f"component {k + 1}")
ax.axhline(0.0, color="grey", linewidth=0.5)
ax.set_xlabel("minutes since the cycle started")
ax.set_ylabel("component (1 / sqrt(minute))")
ax.set_title("How runs differ from the mean course: the first three components")
ax.legend(fontsize=8)
fig.savefig(out / "kiln_hand_readings_components.png", dpi=100)
print(f"figures saved to {out}")

# tile strength from the readings: component scores against imputed values
# (some minutes are read in no training run: keep_empty_features fills them
# with 0 rather than dropping them; RidgeCV's default alphas, 0.1 to 10, are
# far too small for 600 mostly imputed columns, so both get a wide range)
alphas = np.logspace(-3, 6, 19)
recipe = make_pipeline(SparseFunctionalPCA(grid=minutes), StandardScaler(),
                       RidgeCV(alphas=alphas))
imputed = make_pipeline(SimpleImputer(keep_empty_features=True), RidgeCV(alphas=alphas))
for name, model in (("SparseFunctionalPCA scores", recipe), ("column-mean imputation", imputed)):
    r2 = cross_val_score(model, readings, kiln.strength, cv=5, scoring="r2")
    print(f"strength, 5-fold R^2 from {name}: {r2.mean():.2f} (folds {r2.round(2)})")
