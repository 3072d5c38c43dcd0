"""
Predicting the whole temperature profile from the programmed settings
=====================================================================

Invented kiln data. Before a run starts, only its programmed settings are
known: peak set-point, ramp rate, soak length and load mass.
FunctionOnScalarRidge predicts the temperature curve the kiln will follow,
as a function of time, and estimates how each setting shifts that curve
(a coefficient function per setting, with a pointwise confidence band).

Predictions are statistical estimates: validate them on your own process
data before they drive a quality or safety decision.
"""

import matplotlib.pyplot as plt
import numpy as np
from sklearn.model_selection import train_test_split

from skfunc.datasets import make_kiln_firing
from skfunc.linear_model import FunctionOnScalarRidge
from skfunc.metrics import integrated_r2_score
from skfunc.plotting import CoefficientFunctionDisplay
from skfunc.preprocessing import CurveSmoother

kiln = make_kiln_firing(200, grid=np.arange(0, 600, 2), random_state=1)
# fill the thermocouple gaps first: the response curves must be complete
curves = CurveSmoother(grid=kiln.grid, n_basis=40).fit_transform(kiln.data)
S_train, S_test, Y_train, Y_test = train_test_split(
    kiln.settings, curves, test_size=0.25, random_state=0
)
model = FunctionOnScalarRidge(response_grid=kiln.grid, n_basis=40)
model.fit(S_train, Y_train)
predicted = model.predict(S_test)
print(f"GCV-chosen penalty: {model.alpha_:.3g}")
print(f"integrated R^2 on held-out runs: "
      f"{integrated_r2_score(Y_test, predicted, grid=kiln.grid):.3f}")
error = np.sqrt(np.mean((Y_test - predicted) ** 2, axis=0))
print(f"RMS error over held-out runs: median {np.median(error):.0f} °C, "
      f"worst minute {error.max():.0f} °C")

fig, axes = plt.subplots(1, 3, figsize=(14, 4), layout="constrained")
for i, colour in zip(range(3), ("C0", "C1", "C2"), strict=True):
    axes[0].plot(kiln.grid, Y_test[i], color=colour, linewidth=1)
    axes[0].plot(kiln.grid, predicted[i], color=colour, linestyle="--")
axes[0].set(title="Held-out runs (solid) and predictions (dashed)",
            xlabel="minute", ylabel="temperature (°C)")
for ax, j in zip(axes[1:], (0, 3), strict=True):
    CoefficientFunctionDisplay.from_estimator(model, target=j, ax=ax)
    ax.set(title=f"Effect of {kiln.settings_names[j]}", xlabel="minute",
           ylabel="°C per unit of the setting")
