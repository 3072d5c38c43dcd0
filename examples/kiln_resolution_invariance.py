"""
The same firing runs logged at three rates: PCA changes, FunctionalPCA does not
===============================================================================

Invented kiln data. The same 80 runs are logged every minute, every 5
minutes, and on an uneven schedule (dense during the ramp, sparse later).
PCA of the raw grid values (scikit-learn's PCA) returns eigenvalues that
grow with the number of points and components that are vectors, not
functions; FunctionalPCA integrates with quadrature weights, so its
eigenvalues and component functions stay the same.

Run with ``--output FILE`` to save the figure (the docs use it).
"""

import argparse

import matplotlib.pyplot as plt
import numpy as np
from sklearn.decomposition import PCA

from skfunc.datasets import make_kiln_firing
from skfunc.decomposition import FunctionalPCA

parser = argparse.ArgumentParser(
    description="The same runs at three logging rates: PCA against FunctionalPCA.")
parser.add_argument("--output", help="save the figure to this file")
args = parser.parse_args()

samplings = {
    "every minute (600 points)": np.arange(600.0),
    "every 5 minutes (120 points)": np.arange(0.0, 600.0, 5.0),
    "uneven (100 points)": np.unique(np.r_[np.linspace(0, 300, 70),
                                           np.linspace(300, 599, 31)]),
}
fig, axes = plt.subplots(1, 2, figsize=(12, 4), layout="constrained")
print(f"{'sampling':30s} {'FunctionalPCA eigenvalue 1':>27s} {'PCA eigenvalue 1':>17s}")
for (name, minutes), style in zip(samplings.items(), ("-", "--", ":"), strict=True):
    kiln = make_kiln_firing(80, grid=minutes, dropout_fraction=0.0,
                            random_state=0)
    X = kiln.true_curves + np.random.default_rng(1).normal(0, 1.5, kiln.true_curves.shape)
    fpca = FunctionalPCA(n_components=2, grid=minutes).fit(X)
    pca = PCA(n_components=2).fit(X)
    print(f"{name:30s} {fpca.explained_variance_[0]:27.4g} "
          f"{pca.explained_variance_[0]:17.4g}")
    axes[0].plot(minutes, fpca.components_[0], style, label=name)
    sign = np.sign(pca.components_[0][np.argmax(np.abs(pca.components_[0]))])
    axes[1].plot(minutes, sign * pca.components_[0], style, label=name)
axes[0].set(title="FunctionalPCA: first component (a function)",
            xlabel="minute", ylabel="1 / sqrt(minute)")
axes[1].set(title="PCA of grid values: first component (a vector)",
            xlabel="minute", ylabel="loading per grid point")
for ax in axes:
    ax.legend(fontsize="small")
if args.output:
    fig.savefig(args.output, dpi=80)
    print(f"saved {args.output}")
