"""
Which firing curves crack tiles? Functional PCA and a classifier, tuned
=======================================================================

Invented kiln data: every run gets a pass/fail crack inspection. A Pipeline
smooths the curves (filling thermocouple gaps), reduces them to functional
principal component scores, and feeds a logistic regression; GridSearchCV
tunes the smoothing penalty, the number of components and the classifier's
regularisation together, by cross-validated ROC AUC. The components are then
shown as perturbations of the mean firing curve. FunctionalLogisticRegression
fits the crack log-odds as an integral of the curve against a coefficient
function instead, which can be drawn with its band beside the invented true
one.

Predictions are statistical estimates: validate them on your own process
data before they drive a quality or safety decision.
"""

import tempfile

import joblib
import numpy as np
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import GridSearchCV, StratifiedKFold, train_test_split
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

from skfunc.datasets import make_kiln_firing
from skfunc.decomposition import FunctionalPCA
from skfunc.linear_model import FunctionalLogisticRegression
from skfunc.plotting import CoefficientFunctionDisplay, ComponentPerturbationDisplay
from skfunc.preprocessing import CurveSmoother

kiln = make_kiln_firing(240, grid=np.arange(0, 600, 3), random_state=2)
print(f"{kiln.cracked.mean():.0%} of the invented runs cracked")
X_train, X_test, y_train, y_test = train_test_split(
    kiln.data, kiln.cracked, test_size=0.25, stratify=kiln.cracked, random_state=0
)

# the smoothing step is cached: candidates that share it do not refit it
cache = tempfile.mkdtemp(prefix="skfunc-example-")
pipe = Pipeline([
    ("smooth", CurveSmoother(grid=kiln.grid, n_basis=40)),
    # the curves are already smoothed: plain components in the basis (alpha=0)
    ("fpca", FunctionalPCA(grid=kiln.grid, basis="bspline", n_basis=25, alpha=0)),
    ("scale", StandardScaler()),
    ("classify", LogisticRegression()),
], memory=joblib.Memory(cache, verbose=0))
search = GridSearchCV(
    pipe,
    {
        "smooth__alpha": [10.0, 1e4],
        "fpca__n_components": [3, 6, 10],
        "classify__C": [0.1, 1.0],
    },
    cv=StratifiedKFold(4, shuffle=True, random_state=0),
    scoring="roc_auc",
).fit(X_train, y_train)
print(f"best settings: {search.best_params_}")
print(f"cross-validated ROC AUC (best of the grid): {search.best_score_:.3f}")
# the best CV score is optimistic (it was selected); held-out runs are not
print(f"ROC AUC on held-out runs: {search.score(X_test, y_test):.3f}")

# the same question with a coefficient function: where on the curve do
# cracks get decided?
logistic = GridSearchCV(
    Pipeline([
        ("smooth", CurveSmoother(grid=kiln.grid, n_basis=40,
                                 alpha=search.best_params_["smooth__alpha"])),
        ("classify", FunctionalLogisticRegression(grid=kiln.grid, n_basis=20)),
    ], memory=joblib.Memory(cache, verbose=0)),
    {"classify__alpha": ["auto", 1e-2, 1.0]},
    cv=StratifiedKFold(4, shuffle=True, random_state=0),
    scoring="roc_auc",
).fit(X_train, y_train)
print(f"FunctionalLogisticRegression: CV ROC AUC {logistic.best_score_:.3f}, "
      f"held-out {logistic.score(X_test, y_test):.3f}")
joblib.Memory(cache, verbose=0).clear(warn=False)

fpca = search.best_estimator_.named_steps["fpca"]
display = ComponentPerturbationDisplay.from_estimator(fpca, n_components=3)
for ax in display.axes_:
    ax.set_xlabel("minute")
display.axes_[0].set_ylabel("temperature (°C)")
display.figure_.suptitle("Main modes of variation of the invented firing curves")

band = CoefficientFunctionDisplay.from_estimator(
    logistic.best_estimator_[-1], reference=kiln.crack_coef_function
)
band.ax_.set(title="Crack log-odds coefficient function", xlabel="minute",
             ylabel="log-odds per °C·min")
