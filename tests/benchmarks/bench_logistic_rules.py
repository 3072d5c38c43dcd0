"""Benchmark: alternative rules for FunctionalLogisticRegression's automatic alpha.

Test-split accuracy, on the open sets of ``bench_logistic.py``, of the fit at
the alpha chosen by each rule over the same candidates (``alphas_path_`` of the
default fit):

* ``ubre``: the default, the smallest UBRE (ties to the larger alpha);
* ``ubre-1se``: the one-standard-error rule (Breiman, Friedman, Olshen and
  Stone 1984; Hastie, Tibshirani and Friedman 2009, sec. 7.10; common
  practice): the largest alpha whose UBRE is within one standard error of
  the smallest, the standard error from the per-observation terms of UBRE
  (``2 loss_i + 2 h_i`` with ``h_i`` the observation's share of the
  effective degrees of freedom, ``sum_i w_i h_i = edf``), frequency-weighted;
* ``ubre-1se-paired``: the same with the standard error of the paired
  difference to the best candidate at each candidate;
* ``alo``: approximate leave-one-out deviance from the same fits (one
  Newton step from the full fit, leaving out one unit of weight; Rad and
  Maleki 2020, JRSS-B 82, 965-996, recalled from memory);
* ``cv-dev``, ``cv-dev-1se``, ``cv-mis``: stratified 5-fold cross-validation
  (shuffled, seed 0) of the deviance, of the deviance with the
  one-standard-error rule, and of misclassification with the deviance as
  tie-break; fits at fixed alphas (not warm-started: no cost measured).

Run from the repository root::

    python tests/benchmarks/bench_logistic_rules.py           # nine sets, ~2 min
    python tests/benchmarks/bench_logistic_rules.py --quick   # GunPoint, Coffee
    python tests/benchmarks/bench_logistic_rules.py --pig     # also PigCVP (slow)
"""

import argparse
import os
import sys
import warnings

import numpy as np

here = os.path.dirname(__file__)
sys.path.insert(0, os.path.abspath(os.path.join(here, "..", "..")))
sys.path.insert(0, os.path.abspath(here))

from bench_logistic import open_sets  # noqa: E402
from scipy.linalg import cholesky, solve_triangular  # noqa: E402
from scipy.special import expit  # noqa: E402
from sklearn.model_selection import StratifiedKFold  # noqa: E402

import skfunc._logistic_path as lp  # noqa: E402
from skfunc import FunctionalLogisticRegression  # noqa: E402

UBRE_RULES = ("ubre", "ubre-1se", "ubre-1se-paired", "alo")
CV_RULES = ("cv-dev", "cv-dev-1se", "cv-mis")


def row_terms(problem, alpha, theta, hess, quadratic):
    """Per-row UBRE terms ``2 loss_i + 2 h_i`` and approximate
    leave-one-out deviances at one fit of the path."""
    n_out, p = problem.shape
    lower = cholesky(hess + quadratic, lower=True)
    inv_lower = solve_triangular(lower, np.eye(n_out * p), lower=True)
    D, Y = problem.D, problem.Y
    eta = D @ theta.T
    if n_out == 1:
        prob = expit(eta)
        curv = (prob * (1 - prob))[:, :, None]
        K = np.sum((D @ inv_lower.T) ** 2, axis=1)[:, None, None]
    else:
        prob = np.exp(eta - lp._logsumexp(eta)[:, None])
        curv = lp._curvature(prob)
        B = np.einsum("ij,kaj->iak", D, inv_lower.reshape(-1, n_out, p))
        K = np.einsum("iak,ibk->iab", B, B)
    leverage = np.einsum("iab,iab->i", curv, K)
    # eta_{-i} = eta_i - K_i (I - V_i K_i)^{-1} (y_i - p_i)
    A = np.eye(n_out) - curv @ K
    step = np.linalg.solve(A, (Y - prob)[:, :, None])
    loo_eta = eta - np.einsum("iab,ibc->iac", K, step)[:, :, 0]
    loss = lp._row_loss(eta, Y)
    return 2 * loss + 2 * leverage, 2 * lp._row_loss(loo_eta, Y)


def ubre_choices(X, y):
    """Candidates and the index each UBRE-based rule picks on them."""
    record = {}
    ubre = lp.LogisticProblem.ubre
    newton = lp.LogisticProblem.newton

    def recording_newton(self, alpha, theta, *args, **kwargs):
        out = newton(self, alpha, theta, *args, **kwargs)
        record["fit"] = (alpha, out[0])
        return out

    def recording_ubre(self, stats, quadratic):
        alpha, theta = record.pop("fit")
        record[alpha] = row_terms(self, alpha, theta, stats["hess"], quadratic)
        record["w"] = self.sample_weight
        return ubre(self, stats, quadratic)

    lp.LogisticProblem.ubre, lp.LogisticProblem.newton = recording_ubre, recording_newton
    try:
        est = FunctionalLogisticRegression().fit(X, y)
    finally:
        lp.LogisticProblem.ubre, lp.LogisticProblem.newton = ubre, newton
    alphas, crit, w = est.alphas_path_, est.criterion_path_, record["w"]
    total = w.sum()
    terms = np.array([record[a][0] for a in alphas])
    alo = np.array([w @ record[a][1] / total for a in alphas])

    def se(c):
        mean = c @ w / total
        return np.sqrt(((c - mean) ** 2 @ w) / max(total - 1, 1) / total)

    best = int(np.flatnonzero(crit <= crit.min())[-1])
    within = crit <= crit[best] + se(terms[best])
    paired = np.array([crit[j] <= crit[best] + se(terms[j] - terms[best])
                       for j in range(alphas.size)])
    return est, {
        "ubre": list(alphas).index(est.alpha_),
        "ubre-1se": int(np.flatnonzero(within)[-1]),
        "ubre-1se-paired": int(np.flatnonzero(paired)[-1]),
        "alo": int(np.flatnonzero(alo <= alo.min())[-1]),
    }


def cv_choices(X, y, alphas, n_splits=5):
    """Index each stratified K-fold rule picks among ``alphas``."""
    n = len(y)
    dev, err = np.zeros((n, alphas.size)), np.zeros((n, alphas.size))
    for train, test in StratifiedKFold(n_splits, shuffle=True, random_state=0).split(X, y):
        for j, alpha in enumerate(alphas):
            est = FunctionalLogisticRegression(alpha=alpha).fit(X[train], y[train])
            proba = est.predict_proba(X[test])
            col = np.searchsorted(est.classes_, y[test])
            dev[test, j] = -2 * np.log(np.clip(proba[np.arange(len(test)), col], 1e-300, None))
            err[test, j] = est.classes_[proba.argmax(axis=1)] != y[test]
    mean_dev, mean_err = dev.mean(axis=0), err.mean(axis=0)
    best = int(np.flatnonzero(mean_dev <= mean_dev.min())[-1])
    se = dev[:, best].std(ddof=1) / np.sqrt(n)
    ties = np.flatnonzero(mean_err <= mean_err.min())
    return {
        "cv-dev": best,
        "cv-dev-1se": int(np.flatnonzero(mean_dev <= mean_dev[best] + se)[-1]),
        "cv-mis": int(ties[np.argmin(mean_dev[ties])]),
    }


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="GunPoint and Coffee only")
    parser.add_argument("--pig", action="store_true", help="also PigCVP (UBRE rules only)")
    args = parser.parse_args()
    sets = open_sets(args.quick)  # (quick: without loading PigCVP)
    if args.quick:
        sets = {k: sets[k] for k in ("GunPoint", "Coffee")}
    elif not args.pig:
        sets.pop("PigCVP")
    rules = UBRE_RULES + CV_RULES
    print("test accuracy (chosen alpha) per rule")
    print(f"{'set':18s}" + "".join(f"{r:>18s}" for r in rules))
    warnings.simplefilter("ignore")
    for name, (X_train, X_test, y_train, y_test) in sets.items():
        est, picks = ubre_choices(X_train, y_train)
        if name != "PigCVP":
            picks.update(cv_choices(X_train, y_train, est.alphas_path_))
        cells = []
        for rule in rules:
            if rule not in picks:
                cells.append(f"{'-':>18s}")
                continue
            alpha = est.alphas_path_[picks[rule]]
            fit = FunctionalLogisticRegression(alpha=alpha).fit(X_train, y_train)
            cells.append(f"{fit.score(X_test, y_test):9.3f} ({alpha:6.1g})")
        print(f"{name:18s}" + "".join(cells), flush=True)


if __name__ == "__main__":
    main()
