"""``python -m skfunc demo``: the main job, end to end, on invented kiln data.

Stages (one progress line each): generate the invented kiln-firing runs;
score a plain scikit-learn baseline (RidgeCV on the raw minute values); tune
a functional pipeline with GridSearchCV; check both on held-out runs; refit
the chosen pipeline on all runs and save it; draw a figure when matplotlib is
installed. Everything runs in well under a minute on two cores.
"""

import argparse
import sys
import tempfile
import time
from pathlib import Path

import joblib
import numpy as np
from sklearn.base import clone
from sklearn.linear_model import Ridge, RidgeCV
from sklearn.model_selection import GridSearchCV, KFold, cross_val_score
from sklearn.pipeline import Pipeline, make_pipeline
from sklearn.preprocessing import FunctionTransformer
from threadpoolctl import threadpool_limits

from .datasets import make_kiln_firing
from .persistence import _check_target, save_model

#: candidate penalties of the raw-grid baseline: wide enough for values in °C
BASELINE_ALPHAS = np.logspace(-3, 8, 45)
DEFAULT_OUTPUT = "kiln_strength_model.joblib"


def interpolate_gaps(X):
    """Fill NaN runs in each row by linear interpolation between the nearest
    observed minutes (constant beyond the ends).

    The baseline uses it so that it sees the same information as skfunc's
    pipeline; it treats columns as evenly spaced minutes.
    """
    X = np.array(X, dtype=np.float64)
    columns = np.arange(X.shape[1])
    for row in np.flatnonzero(np.isnan(X).any(axis=1)):
        seen = ~np.isnan(X[row])
        X[row, ~seen] = np.interp(columns[~seen], columns[seen], X[row, seen])
    return X


def baseline_model():
    """The plain scikit-learn baseline: RidgeCV on the raw grid values."""
    return make_pipeline(
        FunctionTransformer(interpolate_gaps), RidgeCV(alphas=BASELINE_ALPHAS)
    )


def functional_search(minutes, cv, memory=None, n_jobs=None):
    """GridSearchCV over skfunc's pipeline for curves -> strength.

    The pipeline smooths the curves (filling the thermocouple gaps), reduces
    them to functional principal component scores and fits a ridge
    regression; the search also tries FunctionalRidgeCV (a coefficient
    function with its penalty chosen by GCV) in place of the last two steps.
    ``memory`` caches the smoothing step across candidates (as
    :class:`~sklearn.pipeline.Pipeline` does).
    """
    import skfunc

    pipe = Pipeline(
        [
            ("smooth", skfunc.CurveSmoother(grid=minutes, n_basis=40)),
            ("fpca", skfunc.FunctionalPCA(grid=minutes, basis="bspline", n_basis=25)),
            ("regression", Ridge()),
        ],
        memory=memory,
    )
    smoothing = {"smooth__alpha": [1e2, 1e4, 1e6]}
    grids = [{
        **smoothing,
        "fpca__n_components": [5, 10, 15],
        "regression__alpha": np.logspace(4, 8, 5),
    }]
    grids.append({
        **smoothing,
        "fpca": ["passthrough"],
        "regression": [skfunc.FunctionalRidgeCV(grid=minutes)],
        "regression__n_basis": [20, 30],
    })
    return GridSearchCV(pipe, grids, cv=cv, scoring="r2", n_jobs=n_jobs)


# --------------------------------------------------------------------- options
def _int_in(low, high):
    def parse(text):
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a whole number from {low} to {high}; got {text!r}"
            ) from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(
                f"expected a whole number from {low} to {high}; got {value}"
            )
        return value

    return parse


def build_parser():
    parser = argparse.ArgumentParser(
        prog="python -m skfunc",
        description="skfunc: functional data analysis for scikit-learn.",
    )
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    commands.required = True
    demo = commands.add_parser(
        "demo",
        help="run the main job on invented kiln-firing data",
        description=(
            "Generate invented kiln-firing runs (temperature logged every minute "
            "for 10 hours; tile strength in MPa), compare a functional pipeline "
            "tuned by GridSearchCV with a plain RidgeCV on the raw minute values, "
            "refit the chosen pipeline on all runs, save it, and draw a figure "
            "(needs matplotlib). All data are invented: nothing here describes a "
            "real kiln."
        ),
    )
    demo.add_argument(
        "--output", "-o", type=Path, default=Path(DEFAULT_OUTPUT), metavar="PATH",
        help="where to save the fitted model; '.skops' saves with skops.io, "
             f"anything else with joblib (default: {DEFAULT_OUTPUT})",
    )
    demo.add_argument(
        "--force", action="store_true",
        help="replace the model file and the figure if they exist",
    )
    demo.add_argument(
        "--figure", type=Path, default=None, metavar="PATH",
        help="where to save the figure (default: the model path with '.png')",
    )
    demo.add_argument("--no-figure", action="store_true", help="draw no figure")
    demo.add_argument(
        "--n-runs", type=_int_in(60, 5000), default=240, metavar="N",
        help="number of invented firing runs, 60 to 5000 (default: 240)",
    )
    demo.add_argument(
        "--cv", type=_int_in(2, 20), default=5, metavar="K",
        help="number of cross-validation folds, 2 to 20 (default: 5)",
    )
    demo.add_argument(
        "--random-state", type=_int_in(0, 2**32 - 1), default=0, metavar="SEED",
        help="seed of the invented data and the folds (default: 0)",
    )
    demo.add_argument(
        "--n-jobs", type=_int_in(1, 64), default=1, metavar="J",
        help="parallel jobs for the grid search (default: 1)",
    )
    return parser


def _check_paths(parser, args):
    """Refuse before any work: existing files without --force, bad folders."""
    for option, path in (("--output", args.output), ("--figure", args.figure)):
        if path is not None and not path.name:  # '' arrives as Path('.')
            parser.error(f"{option} needs a file name; got {str(path)!r}")
    targets = [("--output", args.output)]
    if not args.no_figure:
        if args.figure is None:
            args.figure = args.output.with_suffix(".png")
        elif args.figure.suffix.lower() not in (".png", ".pdf", ".svg"):
            parser.error(f"--figure must end in .png, .pdf or .svg; got {args.figure}")
        targets.append(("--figure", args.figure))
    if not args.no_figure and args.figure.resolve() == args.output.resolve():
        parser.error(
            f"the figure would overwrite the model: --output and the figure are both "
            f"{args.output}; choose another --figure or --output"
        )
    for option, path in targets:
        try:  # existing files, missing or unwritable folders, named as given
            _check_target(path, force=args.force)
        except OSError as exc:
            parser.error(f"{option}: {exc}")
    if args.output.suffix.lower() == ".skops":
        try:
            import skops.io  # noqa: F401
        except ImportError:
            parser.error("--output ending in .skops needs skops (pip install skops)")


# ----------------------------------------------------------------------- stages
class _Progress:
    def __init__(self, n_stages, stream):
        self.n_stages, self.stage, self.stream = n_stages, 0, stream
        self.start = time.perf_counter()

    def line(self, text):
        self.stage += 1
        now = time.perf_counter()
        print(f"[{self.stage}/{self.n_stages}] {text} ({now - self.start:.1f} s)",
              file=self.stream, flush=True)
        self.start = now


def run_demo(args, stream=None):
    """Run the demo with parsed options; returns a dict of the results."""
    from sklearn.model_selection import train_test_split

    stream = sys.stdout if stream is None else stream
    n_stages = 6 if args.no_figure else 7
    progress = _Progress(n_stages, stream)
    kiln = make_kiln_firing(args.n_runs, random_state=args.random_state)
    X, y = kiln.data, kiln.strength
    progress.line(
        f"generated {args.n_runs} invented firing runs: {X.shape[1]} minutes "
        f"each, {kiln.has_dropout.sum()} with thermocouple dropouts, "
        f"{kiln.late_start.sum()} late starts, {kiln.faulty.sum()} faulty"
    )
    X_train, X_test, y_train, y_test = train_test_split(
        X, y, test_size=0.25, random_state=args.random_state
    )
    cv = KFold(args.cv, shuffle=True, random_state=args.random_state)

    baseline = baseline_model()
    baseline_cv = cross_val_score(baseline, X_train, y_train, cv=cv, scoring="r2")
    baseline.fit(X_train, y_train)
    baseline_test = baseline.score(X_test, y_test)
    progress.line(
        f"baseline RidgeCV on raw minute values: CV R^2 = {baseline_cv.mean():.3f}"
    )

    with tempfile.TemporaryDirectory(prefix="skfunc-demo-") as cache:
        memory = joblib.Memory(cache, verbose=0)
        search = functional_search(kiln.grid, cv, memory, n_jobs=args.n_jobs)
        search.fit(X_train, y_train)
        best = search.best_estimator_
    n_candidates = len(search.cv_results_["params"])
    progress.line(
        f"GridSearchCV over {n_candidates} settings of the functional pipeline: "
        f"best CV R^2 = {search.best_score_:.3f}"
    )

    model_test = best.score(X_test, y_test)
    rmse = {
        "functional": _rmse(y_test, best.predict(X_test)),
        "baseline": _rmse(y_test, baseline.predict(X_test)),
    }
    progress.line(
        f"held-out runs ({len(y_test)}): R^2 {model_test:.3f} (functional) vs "
        f"{baseline_test:.3f} (baseline)"
    )

    final = clone(best).set_params(memory=None).fit(X, y)
    progress.line(f"refitted the chosen pipeline on all {args.n_runs} runs")

    path = save_model(final, args.output, force=args.force)
    progress.line(f"saved the model to {path}")

    figure = None
    if not args.no_figure:
        figure, message = _draw_figure(kiln, final, args.figure, args.force)
        progress.line(message)

    results = {
        "cv_r2": float(search.best_score_),
        "cv_r2_std": float(search.cv_results_["std_test_score"][search.best_index_]),
        "baseline_cv_r2": float(baseline_cv.mean()),
        "baseline_cv_r2_std": float(baseline_cv.std()),
        "test_r2": float(model_test),
        "baseline_test_r2": float(baseline_test),
        "test_rmse": rmse["functional"],
        "baseline_test_rmse": rmse["baseline"],
        "best_params": _plain(search.best_params_),
        "output": str(path),
        "figure": None if figure is None else str(figure),
        "n_test": int(len(y_test)),
    }
    _summary(results, stream)
    return results


def _rmse(y, pred):
    return float(np.sqrt(np.mean((np.asarray(y) - pred) ** 2)))


def _plain(params):
    return {k: (v.item() if hasattr(v, "item") else v) for k, v in params.items()}


def _draw_figure(kiln, final, path, force):
    """Curves with their band, the coefficient function with its confidence
    band beside the true one, and the leading principal components."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        return None, (
            "no figure: matplotlib is not installed (pip install matplotlib, or "
            "pip install skfunc[plot]) -- everything else is done"
        )
    from . import plotting

    if path.exists() and not force:
        raise FileExistsError(f"{path} already exists; pass --force to replace it.")
    curves = clone(final.named_steps["smooth"]).fit_transform(kiln.data)
    fig = plt.figure(figsize=(13, 7.5), layout="constrained")
    top, bottom = fig.subfigures(2, 1)
    ax_curves, ax_coef = top.subplots(1, 2)
    plotting.CurveBandDisplay.from_data(kiln.data, grid=kiln.grid, ax=ax_curves)
    ax_curves.set(title="Invented firing curves", xlabel="minute",
                  ylabel="temperature (°C)")
    coef_estimator = _coefficient_model(final, kiln.grid, curves, kiln.strength)
    plotting.CoefficientFunctionDisplay.from_estimator(
        coef_estimator, reference=kiln.coef_function, ax=ax_coef
    )
    ax_coef.set_title("Strength coefficient function β(t)")
    ax_coef.set(xlabel="minute", ylabel="MPa per °C·min")
    fpca = _step(final, "fpca")
    if not hasattr(fpca, "components_") or len(fpca.components_) < 3:
        from .decomposition import FunctionalPCA

        fpca = FunctionalPCA(n_components=3, basis="bspline", n_basis=25, grid=kiln.grid)
        fpca.fit(curves)
    axes = bottom.subplots(1, 3, sharey=True)
    plotting.ComponentPerturbationDisplay.from_estimator(fpca, ax=axes)
    for ax in axes:
        ax.set_xlabel("minute")
    axes[0].set_ylabel("temperature (°C)")
    fig.savefig(path, dpi=90)
    plt.close(fig)
    return path, f"wrote the figure {path}"


def _step(pipeline, name):
    return getattr(pipeline, "named_steps", {}).get(name)


def _coefficient_model(final, minutes, curves, strength):
    """The chosen FunctionalRidgeCV, or one fitted for the figure."""
    from .linear_model import FunctionalRidgeCV

    chosen = final.named_steps["regression"]
    if isinstance(chosen, FunctionalRidgeCV):
        return chosen
    return FunctionalRidgeCV(grid=minutes, n_basis=30).fit(curves, strength)


def _summary(results, stream):
    gain = results["cv_r2"] - results["baseline_cv_r2"]
    held_out = results["test_r2"] - results["baseline_test_r2"]
    lines = [
        "",
        "Summary (invented kiln data; tile strength in MPa)",
        f"  cross-validated R^2   functional pipeline {results['cv_r2']:.3f}"
        f" (+/- {results['cv_r2_std']:.3f})   baseline RidgeCV "
        f"{results['baseline_cv_r2']:.3f} (+/- {results['baseline_cv_r2_std']:.3f})",
        f"  held-out R^2 ({results['n_test']} runs) functional "
        f"{results['test_r2']:.3f}   baseline {results['baseline_test_r2']:.3f}",
        f"  held-out RMSE         functional {results['test_rmse']:.2f} MPa   "
        f"baseline {results['baseline_test_rmse']:.2f} MPa",
        f"  chosen settings       {results['best_params']}",
        f"  the functional pipeline {'beats' if gain > 0 else 'does not beat'} "
        f"the baseline: CV R^2 {gain:+.3f}, held-out R^2 {held_out:+.3f} (a grid "
        "search's best CV score is slightly optimistic; held-out runs are not)",
        f"  model saved to        {results['output']} (load it with "
        "skfunc.persistence.load_model; "
        + ("skops files load trusting only skfunc's and scikit-learn's types)"
           if results["output"].lower().endswith(".skops") else
           "joblib files run code when loaded, so load only your own)"),
    ]
    if results["figure"]:
        lines.append(f"  figure                {results['figure']}")
    lines.append(
        "  Predictions are statistical estimates: validate them on your own "
        "process data before they drive a quality or safety decision."
    )
    print("\n".join(lines), file=stream, flush=True)


def main(argv=None):
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command == "demo":
        _check_paths(parser, args)
        # the demo's linear algebra is on small matrices, where BLAS threads
        # only add overhead (many times over on a busy machine); parallelism,
        # if wanted, comes from --n-jobs
        with threadpool_limits(limits=1, user_api="blas"):
            run_demo(args)
    return 0
