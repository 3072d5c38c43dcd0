"""
Which past runs look like this one? Functional nearest neighbours
=================================================================

Invented kiln data. :class:`~skfunc.preprocessing.BasisFeatures` returns each
curve's coordinates in an L2-orthonormal basis, so the Euclidean distance
between two rows of its output *is* the L2 distance between the two fitted
curves, ``sqrt(int (x_i(t) - x_j(t))^2 dt)``. Any scikit-learn model that
works with Euclidean distances therefore works with distances between
curves: ``BasisFeatures`` followed by
:class:`~sklearn.neighbors.KNeighborsClassifier` is functional k-nearest
neighbours, tuned with ``GridSearchCV`` like any pipeline.

Here the neighbours of a run predict whether its heating element failed
(the faulty runs never reach their set-point). Predictions are statistical
estimates: validate them on your own process data before they drive a
quality or safety decision.
"""

import matplotlib.pyplot as plt
import numpy as np
from sklearn.model_selection import GridSearchCV, StratifiedKFold, train_test_split
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import make_pipeline

from skfunc.datasets import make_kiln_firing
from skfunc.hilbert import l2_distance
from skfunc.preprocessing import BasisFeatures, CurveSmoother

kiln = make_kiln_firing(300, grid=np.arange(0, 600, 2), faulty_fraction=0.15,
                        random_state=4)
minutes = kiln.grid
print(f"{kiln.faulty.sum()} of {len(kiln.faulty)} invented runs are faulty")

# %%
# The identity behind the recipe
# ------------------------------
# Distances between BasisFeatures rows against the L2 distances of the
# fitted curves, integrated on the grid with the trapezoid rule.
smooth = CurveSmoother(grid=minutes, n_basis=40).fit_transform(kiln.data)
features = BasisFeatures(grid=minutes, n_basis=40).fit(smooth)
coords = features.transform(smooth[:5])
euclidean = np.linalg.norm(coords[:, None, :] - coords[None, :, :], axis=-1)
fitted = features.inverse_transform(coords)  # the fitted curves on the grid
integrated = l2_distance(fitted, grid=minutes)
print("largest relative difference, Euclidean vs integrated L2 distance: "
      f"{np.max(np.abs(euclidean - integrated)) / integrated.max():.1e}")

# %%
# Functional k-NN, tuned like any pipeline
# ----------------------------------------
X_train, X_test, y_train, y_test = train_test_split(
    kiln.data, kiln.faulty, test_size=0.3, stratify=kiln.faulty, random_state=0
)
knn = make_pipeline(
    CurveSmoother(grid=minutes, n_basis=40),    # fills thermocouple gaps
    BasisFeatures(grid=minutes, n_basis=40),    # L2-orthonormal coordinates
    KNeighborsClassifier(),
)
search = GridSearchCV(
    knn, {"kneighborsclassifier__n_neighbors": [1, 5, 15]},
    cv=StratifiedKFold(4, shuffle=True, random_state=0), scoring="balanced_accuracy",
).fit(X_train, y_train)
print(f"chosen number of neighbours: "
      f"{search.best_params_['kneighborsclassifier__n_neighbors']}")
print(f"balanced accuracy on held-out runs: {search.score(X_test, y_test):.3f}")

# %%
# A run and its nearest neighbours
# --------------------------------
model = search.best_estimator_
query = int(np.flatnonzero(y_test)[0])  # a held-out faulty run
coords_test = model[:-1].transform(X_test[query : query + 1])
distance, index = model[-1].kneighbors(coords_test, n_neighbors=5)
fig, ax = plt.subplots(figsize=(8, 4), layout="constrained")
for d, i in zip(distance[0], index[0], strict=True):
    status = "faulty" if y_train[i] else "normal"
    ax.plot(minutes, X_train[i], linewidth=1,
            label=f"neighbour: L2 distance {d:,.0f} °C·min^(1/2), {status}")
ax.plot(minutes, X_test[query], color="k", linewidth=2.5, label="held-out run")
ax.set(title="A held-out faulty run and its five nearest training runs",
       xlabel="minute", ylabel="temperature (°C)")
ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize="small")
print(f"its neighbours: {int(y_train[index[0]].sum())} of 5 faulty")
