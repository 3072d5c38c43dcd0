"""``python -m skfunc demo``: the main job, end to end, on invented kiln data.

Stages (one progress line each): generate the invented kiln-firing runs;
score a plain scikit-learn baseline (RidgeCV on the raw minute values); tune
a functional pipeline with GridSearchCV; check both on held-out runs; refit
the chosen pipeline on all runs (and, to show fitting from a file in
batches with progress, the runs' principal components from a memory-mapped
``.npy``); predict new runs logged by two other kilns
at other rates (every 20 s; every 2 minutes with dropouts) without refitting;
save the model; draw a figure when matplotlib is installed. Everything runs
in well under a minute on two cores.
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

from ._datasets import KILN_MINUTES, make_kiln_firing
from .persistence import _check_target, save_model

#: candidate penalties of the raw-grid baseline: wide enough for values in °C
BASELINE_ALPHAS = np.logspace(-3, 8, 45)
DEFAULT_OUTPUT = "kiln_strength_model.joblib"
#: model file suffixes the demo writes: skops.io, or joblib
MODEL_SUFFIXES = (".joblib", ".skops")
#: new runs of the "other kilns" table (each logged at every rate)
N_NEW_RUNS = 100


def logging_rates():
    """The logging rates of the demo's other-kilns table.

    A list of ``(label, minutes, dropout_fraction)``: the training kiln's
    minute log, a newer kiln logging every 20 seconds, and an older kiln
    logging every 2 minutes (with its end-of-cycle reading at minute 599)
    whose thermocouple drops out on about half of the runs. All invented.
    """
    last = KILN_MINUTES - 1.0
    return [
        ("every minute (training kiln)", np.arange(KILN_MINUTES, dtype=float), 0.1),
        ("every 20 s (newer kiln)", np.arange(3 * KILN_MINUTES - 2) / 3.0, 0.1),
        ("every 2 min, dropouts (older kiln)",
         np.append(np.arange(0.0, last, 2.0), last), 0.5),
    ]


def resample_onto(X, minutes, target):
    """Each row's observed values (NaN skipped) linearly interpolated onto
    ``target`` with :func:`numpy.interp` (constant beyond the ends): what a
    raw-grid model needs before it can read a run logged on ``minutes``."""
    X = np.asarray(X, dtype=np.float64)
    out = np.empty((X.shape[0], np.size(target)))
    for row, values in enumerate(X):
        seen = ~np.isnan(values)
        out[row] = np.interp(target, minutes[seen], values[seen])
    return out


def smoother_for_grid(pipeline, minutes):
    """The pipeline's fitted smoothing step, rebuilt for curves logged on
    ``minutes``: same basis and alpha, evaluated on the fitted grid.

    With a fixed alpha, a smoother's operator depends on the grids alone, so
    fitting it on the new curves learns nothing from their values; the
    remaining steps of ``pipeline`` are used as fitted.
    """
    smooth = pipeline.named_steps["smooth"]
    return clone(smooth).set_params(
        grid=minutes, eval_points=smooth.grid_, alpha=smooth.alpha_
    )


def other_kilns_table(final, baseline, n_runs, random_state):
    """Predict new runs logged at each of :func:`logging_rates` without
    refitting ``final`` (the functional pipeline) or ``baseline`` (RidgeCV
    on raw minute values). The same ``n_runs`` underlying runs are logged at
    every rate (``make_kiln_firing`` gives the same curves and strengths for
    the same seed at any ``grid``).

    Returns a list of dicts, one per rate, with the R^2 and RMSE of the
    functional pipeline, of the baseline on the raw values (or the error it
    raises), and of the baseline after :func:`resample_onto`.
    """
    from sklearn.metrics import r2_score

    train_minutes = final.named_steps["smooth"].grid_
    rows = []
    for label, minutes, dropouts in logging_rates():
        runs = make_kiln_firing(n_runs, grid=minutes, dropout_fraction=dropouts,
                                random_state=random_state)
        X, y = runs.data, runs.strength
        if np.array_equal(minutes, train_minutes):
            functional = final.predict(X)
        else:
            resample = smoother_for_grid(final, minutes).fit(X)
            functional = final[1:].predict(resample.transform(X))
        try:
            raw = baseline.predict(X)
        except ValueError as exc:
            raw = str(exc)
        interpolated = baseline.predict(resample_onto(X, minutes, train_minutes))

        def scores(pred, y=y):
            if isinstance(pred, str):
                return pred
            return (float(r2_score(y, pred)), _rmse(y, pred))

        rows.append({
            "logging": label, "n_points": int(minutes.size),
            "n_dropout_runs": int(runs.has_dropout.sum()),
            "functional": scores(functional), "raw": scores(raw),
            "interpolated": scores(interpolated),
        })
    return rows


def format_other_kilns(rows, n_runs):
    """The other-kilns table as text lines."""
    lines = [
        f"New runs logged by other kilns: {n_runs} new invented runs, the same runs "
        "logged at each rate; models fitted on",
        "the minute logs only and not refitted. R^2 and RMSE (MPa) of the "
        "predicted strength:",
        f"  {'logging (points per run)':<44} {'functional pipeline':<21}"
        f"{'RidgeCV on raw values':<24}RidgeCV after np.interp",
    ]
    errors = []
    for row in rows:
        cells = []
        for key in ("functional", "raw", "interpolated"):
            value = row[key]
            if isinstance(value, str):
                cells.append("fails (ValueError)")
                errors.append((row["logging"], value))
            else:
                cells.append(f"{value[0]:.3f}  {value[1]:.2f} MPa")
        name = f"{row['logging']} ({row['n_points']})"
        lines.append(f"  {name:<44} {cells[0]:<21}{cells[1]:<24}{cells[2]}")
    for label, message in errors:
        lines.append(f"  RidgeCV, {label}: {message}")
    lines.append(
        "  The functional pipeline reads each kiln's log through its smoothing "
        "step rebuilt on that kiln's grid (same basis and alpha);"
    )
    lines.append(
        "  RidgeCV needs every run interpolated onto its training minutes first."
    )
    return lines


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
    The smoothing penalty is chosen by GCV on each training fold (how well
    the smooth follows the logged temperatures), not by the search: a search
    scored on strength alone would pick the heaviest smoothing on offer,
    which bends the curves away from the data. ``memory`` caches the
    smoothing step across candidates (as :class:`~sklearn.pipeline.Pipeline`
    does).
    """
    import skfunc

    pipe = Pipeline(
        [
            ("smooth", skfunc.CurveSmoother(grid=minutes, n_basis=40)),
            # the curves are already smoothed: plain components (alpha=0)
            ("fpca", skfunc.FunctionalPCA(grid=minutes, basis="bspline", n_basis=25,
                                          alpha=0)),
            ("regression", Ridge()),
        ],
        memory=memory,
    )
    grids = [{
        "fpca__n_components": [5, 10, 15],
        "regression__alpha": np.logspace(4, 8, 5),
    }]
    grids.append({
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


def _n_jobs(text):
    """--n-jobs: 1 to 64, or -1 for all cores (scikit-learn's convention)."""
    expected = "expected -1 (all cores) or a whole number from 1 to 64"
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{expected}; got {text!r}") from None
    if value != -1 and not 1 <= value <= 64:
        raise argparse.ArgumentTypeError(f"{expected}; got {value}")
    return value


def _model_path(text):
    """--output: a file name ending in one of MODEL_SUFFIXES (the suffix picks
    the format, so any other suffix would hide what the file is)."""
    path = Path(text)
    if path.suffix.lower() not in MODEL_SUFFIXES:
        raise argparse.ArgumentTypeError(
            f"expected a file name ending in {' or '.join(MODEL_SUFFIXES)} (the "
            f"suffix picks the format); got {text!r}"
        )
    return path


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
            "refit the chosen pipeline on all runs, predict new runs logged by "
            "two other kilns (every 20 s; every 2 minutes with dropouts) without "
            "refitting, save the model, and draw a figure (needs matplotlib). All "
            "data are invented: nothing here describes a real kiln."
        ),
    )
    # errors found after parsing (files, folders) print this parser's usage line
    demo.set_defaults(command_parser=demo)
    demo.add_argument(
        "--output", "-o", type=_model_path, default=Path(DEFAULT_OUTPUT),
        metavar="PATH",
        help="where to save the fitted model: a name ending in '.joblib' (joblib) "
             f"or '.skops' (skops.io) (default: {DEFAULT_OUTPUT})",
    )
    demo.add_argument(
        "--force", action="store_true",
        help="replace the model file and the figure if they exist",
    )
    demo.add_argument(
        "--figure", type=Path, default=None, metavar="PATH",
        help="where to save the figure: .png, .pdf or .svg (default: the model "
             "path with '.png')",
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
        "--random-state", type=_int_in(0, 2**32 - 2), default=0, metavar="SEED",
        help="seed of the invented data and the folds, 0 to 4294967294; the new "
             "runs of the other kilns use SEED + 1 (default: 0)",
    )
    demo.add_argument(
        "--n-jobs", type=_n_jobs, default=1, metavar="J",
        help="parallel jobs for the grid search: 1 to 64, or -1 for all cores "
             "(scikit-learn's convention) (default: 1)",
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
    n_stages = 7 if args.no_figure else 8
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
    baseline.fit(X, y)
    explained = _components_from_file(X, kiln.grid, stream)
    progress.line(
        f"refitted the chosen pipeline (and the baseline) on all {args.n_runs} runs; "
        f"from a memory-mapped file in batches, the first principal component of "
        f"the runs explains {explained:.0%} of their variance"
    )

    new_seed = args.random_state + 1
    other_kilns = other_kilns_table(final, baseline, N_NEW_RUNS, new_seed)
    progress.line(
        f"predicted {N_NEW_RUNS} new runs logged by three kilns at different rates, "
        "without refitting"
    )

    path = save_model(final, args.output, force=args.force)
    progress.line(f"saved the model to {path}")

    figure = None
    if not args.no_figure:
        figure, message = _draw_figure(kiln, final, args.figure, args.force, new_seed)
        progress.line(message)

    # the same folds for both models (one KFold, one seed): paired differences
    best_folds = np.array([search.cv_results_[f"split{i}_test_score"][search.best_index_]
                           for i in range(baseline_cv.size)])
    paired = best_folds - baseline_cv
    results = {
        "cv_gain_se": float(paired.std(ddof=1) / np.sqrt(paired.size)),
        "cv_r2": float(search.best_score_),
        "cv_r2_std": float(search.cv_results_["std_test_score"][search.best_index_]),
        "baseline_cv_r2": float(baseline_cv.mean()),
        "baseline_cv_r2_std": float(baseline_cv.std()),
        "test_r2": float(model_test),
        "baseline_test_r2": float(baseline_test),
        "test_rmse": rmse["functional"],
        "baseline_test_rmse": rmse["baseline"],
        "best_params": _plain(search.best_params_),
        "smoothing_alpha": float(final.named_steps["smooth"].alpha_),
        "other_kilns": other_kilns,
        "output": str(path),
        "figure": None if figure is None else str(figure),
        "n_test": int(len(y_test)),
    }
    _summary(results, stream)
    return results


def _components_from_file(X, minutes, stream):
    """FunctionalPCA fitted batch by batch from the runs saved as ``.npy``
    (gaps interpolated), as one would fit runs that do not fit in memory;
    progress lines go to ``stream``. Returns the first component's share."""
    import contextlib

    from .decomposition import FunctionalPCA
    from .utils import partial_fit_batches

    with tempfile.TemporaryDirectory(prefix="skfunc-demo-") as folder:
        path = Path(folder) / "runs.npy"
        np.save(path, interpolate_gaps(X))
        runs = np.load(path, mmap_mode="r")
        pca = FunctionalPCA(3, basis="bspline", grid=minutes)
        with contextlib.redirect_stdout(stream):
            partial_fit_batches(pca, runs, batch_size=-(-runs.shape[0] // 4), verbose=1)
        del runs
    return float(pca.explained_variance_ratio_[0])


def _rmse(y, pred):
    return float(np.sqrt(np.mean((np.asarray(y) - pred) ** 2)))


def _plain(params):
    """Search parameters for printing: numbers as numbers, estimators by name."""
    plain = {}
    for key, value in params.items():
        if hasattr(value, "get_params"):
            value = type(value).__name__
        elif hasattr(value, "item"):
            value = value.item()
        plain[key] = value
    return plain


def _draw_figure(kiln, final, path, force, new_seed):
    """Six labelled panels: the training curves with their band, the strength
    coefficient function, one new run as three kilns log it, and the leading
    principal components of the smoothed curves."""
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
    minutes = kiln.grid
    curves = final.named_steps["smooth"].transform(kiln.data)
    fig = plt.figure(figsize=(15, 10.5), layout="constrained")
    fig.suptitle(
        "skfunc demo on invented kiln-firing data (every number is invented)",
        fontsize="large",
    )
    top, bottom = fig.subfigures(2, 1, height_ratios=[1.25, 1])
    ax_curves, ax_coef, ax_rates = top.subplots(1, 3)
    plotting.CurveBandDisplay.from_data(kiln.data, grid=minutes, max_curves=40,
                                        ax=ax_curves)
    ax_curves.set(title=f"Training runs as logged\n({len(kiln.data)} runs, "
                        "every minute; NaN gaps are dropouts)",
                  xlabel="minute", ylabel="temperature (°C)")
    _legend_below(ax_curves)
    _coefficient_panel(final, minutes, curves, kiln, ax_coef)
    _rates_panel(final, new_seed, ax_rates)

    fpca = final.named_steps.get("fpca")
    source = "the chosen pipeline's FunctionalPCA"
    if not hasattr(fpca, "components_") or len(fpca.components_) < 3:
        from .decomposition import FunctionalPCA

        fpca = FunctionalPCA(n_components=3, basis="bspline", n_basis=25, alpha=0,
                             grid=minutes).fit(curves)
        source = "a FunctionalPCA fitted for this figure (the chosen pipeline has none)"
    bottom.suptitle(
        f"Leading principal components of the GCV-smoothed curves, from {source}: "
        "mean ± 2 SD along each", fontsize="medium",
    )
    axes = bottom.subplots(1, 3, sharey=True)
    plotting.ComponentPerturbationDisplay.from_estimator(fpca, ax=axes)
    for ax in axes:
        ax.set_xlabel("minute")
    axes[0].set_ylabel("temperature (°C)")
    fig.savefig(path, dpi=90)
    plt.close(fig)
    return path, f"wrote the figure {path}"


def _coefficient_panel(final, minutes, curves, kiln, ax):
    """beta(t) of the chosen pipeline; its band from FunctionalRidgeCV."""
    from . import plotting
    from .linear_model import FunctionalRidgeCV

    chosen = final.named_steps["regression"]
    if isinstance(chosen, FunctionalRidgeCV):
        plotting.CoefficientFunctionDisplay.from_estimator(
            chosen, reference=kiln.coef_function, ax=ax
        )
        ax.set_title("Strength coefficient function β(t):\nthe chosen pipeline's "
                     "FunctionalRidgeCV")
    else:
        # FPCA scores <x - mean, xi_k> into a linear model: the prediction is
        # the integral of x times sum_k c_k xi_k, the pipeline's own beta(t)
        fpca = final.named_steps["fpca"]
        own = np.asarray(chosen.coef_) @ fpca.components_
        separate = FunctionalRidgeCV(grid=minutes, n_basis=30).fit(curves, kiln.strength)
        display = plotting.CoefficientFunctionDisplay.from_estimator(
            separate, reference=kiln.coef_function, ax=ax
        )
        display.line_.set_label("separate FunctionalRidgeCV fit (for its band)")
        ax.plot(minutes, own, color="C1", linewidth=1.5,
                label="chosen pipeline (FPCA + Ridge): Σ c_k ξ_k(t)")
        ax.set_title("Strength coefficient function β(t):\nchosen pipeline and "
                     "a separate FunctionalRidgeCV")
    ax.set(xlabel="minute", ylabel="MPa per °C·min")
    _legend_below(ax)


def _rates_panel(final, new_seed, ax):
    """One new run as three kilns log it, around the older kiln's dropout,
    with each kiln's predicted strength."""
    rates = logging_rates()
    logs = [make_kiln_firing(N_NEW_RUNS, grid=minutes, dropout_fraction=dropouts,
                             random_state=new_seed)
            for _, minutes, dropouts in rates]
    # the first new run that the older kiln logged with a dropout, shown
    # from 20 minutes before its first dropout to 20 minutes after it
    old_minutes, old_log = rates[2][1], logs[2]
    i = int(np.flatnonzero(old_log.has_dropout)[0])
    lost = np.isnan(old_log.data[i])
    first = int(np.flatnonzero(lost)[0])
    after = np.flatnonzero(~lost[first:])
    last = first + int(after[0]) - 1 if after.size else lost.size - 1
    gap = (old_minutes[max(first - 1, 0)], old_minutes[min(last + 1, lost.size - 1)])
    window = (max(gap[0] - 20.0, 0.0), min(gap[1] + 20.0, old_minutes[-1]))
    styles = [{"linewidth": 4, "color": "0.8"},
              {"linewidth": 0, "marker": ".", "markersize": 3, "color": "C0"},
              {"linestyle": "none", "marker": "o", "markersize": 5, "color": "C3",
               "markerfacecolor": "none"}]
    for k, ((label, minutes, _), log) in enumerate(zip(rates, logs)):
        X = log.data[i : i + 1]
        if k == 0:
            pred = final.predict(X)[0]
        else:
            resample = smoother_for_grid(final, minutes).fit(X)
            pred = final[1:].predict(resample.transform(X))[0]
        shown = (minutes >= window[0]) & (minutes <= window[1])
        ax.plot(minutes[shown], X[0, shown], label=f"{label}: predicted {pred:.1f} MPa",
                **styles[k])
    ax.axvspan(*gap, color="C3", alpha=0.08,
               label="older kiln's thermocouple dropout")
    ax.set(title=f"One new run as three kilns log it\n(true strength "
                 f"{logs[0].strength[i]:.1f} MPa; minutes {window[0]:.0f}-{window[1]:.0f})",
           xlabel="minute", ylabel="temperature (°C)")
    _legend_below(ax)


def _legend_below(ax):
    """The legend under the panel, clear of its curves (the demo's panels
    sit side by side, so there is no room beside them)."""
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), fontsize="small",
              frameon=False)


def _verdict(gain, gain_se, held_out):
    """A winner only where the data support one: the paired cross-validation
    difference beyond twice its standard error (common practice for a
    difference of means) and the held-out runs agreeing in sign."""
    if gain > 2 * gain_se and held_out > 0:
        return "the functional pipeline beats the baseline"
    if gain < -2 * gain_se and held_out < 0:
        return "the baseline beats the functional pipeline"
    return ("no clear winner (the difference is within twice its standard error, "
            "or the held-out runs disagree)")


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
        f"  chosen settings       {results['best_params']}; smoothing alpha "
        f"{results['smoothing_alpha']:.3g} (GCV)",
        f"  {_verdict(gain, results['cv_gain_se'], held_out)}: CV R^2 {gain:+.3f} "
        f"(+/- {results['cv_gain_se']:.3f} over the paired folds), held-out R^2 "
        f"{held_out:+.3f} (a grid search's best CV score is slightly optimistic; "
        "held-out runs are not)",
        f"  model saved to        {results['output']} (load it with "
        "skfunc.persistence.load_model; "
        + ("skops files load trusting only skfunc's and scikit-learn's types)"
           if results["output"].lower().endswith(".skops") else
           "joblib files run code when loaded, so load only your own)"),
    ]
    if results["figure"]:
        lines.append(f"  figure                {results['figure']}")
    lines.append("")
    lines.extend(format_other_kilns(results["other_kilns"], N_NEW_RUNS))
    lines.append("")
    lines.append(
        "  Predictions are statistical estimates: validate them on your own "
        "process data before they drive a quality or safety decision."
    )
    print("\n".join(lines), file=stream, flush=True)


def main(argv=None):
    parser = build_parser()
    args, unknown = parser.parse_known_args(argv)
    if unknown:  # reported with the usage line of the command they follow
        args.command_parser.error(f"unrecognized arguments: {' '.join(unknown)}")
    if args.command == "demo":
        _check_paths(args.command_parser, args)
        # the demo's linear algebra is on small matrices, where BLAS threads
        # only add overhead (many times over on a busy machine); parallelism,
        # if wanted, comes from --n-jobs
        with threadpool_limits(limits=1, user_api="blas"):
            run_demo(args)
    return 0
