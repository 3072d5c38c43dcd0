"""Benchmark of the user's first hour: ``python -m skfunc demo`` and the
examples, against their time budgets.

Targets: the demo finishes in under 60 s on two cores; every
script in ``examples/`` in under 30 s. Each command runs in a fresh Python
process (as a user would run it, imports included), with the Agg backend.
The table gives the wall time and its ratio to the budget (< 1 meets it).

Usage::

    python tests/benchmarks/bench_demo.py           # full size: defaults
    python tests/benchmarks/bench_demo.py --quick   # small demo, no examples
"""

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def timed(command, cwd):
    env = dict(os.environ, MPLBACKEND="Agg")
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH"))
                                        if p)
    start = time.perf_counter()
    result = subprocess.run(command, cwd=cwd, env=env, capture_output=True, text=True)
    elapsed = time.perf_counter() - start
    if result.returncode != 0:
        sys.exit(f"{' '.join(command)} failed:\n{result.stderr[-2000:]}")
    return elapsed, result.stdout


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true",
                        help="60 runs, 2 folds, no examples (a few seconds)")
    args = parser.parse_args()
    rows = []
    with tempfile.TemporaryDirectory() as folder:
        demo = [sys.executable, "-m", "skfunc", "demo", "--output",
                str(Path(folder) / "model.joblib")]
        if args.quick:
            demo += ["--n-runs", "60", "--cv", "2", "--no-figure"]
        seconds, out = timed(demo, folder)
        rows.append(("python -m skfunc demo", seconds, 60.0))
        summary = [line.strip() for line in out.splitlines() if "R^2" in line]
        if not args.quick:
            for script in sorted((ROOT / "examples").glob("*.py")):
                seconds, _ = timed([sys.executable, str(script)], folder)
                rows.append((f"examples/{script.name}", seconds, 30.0))
    print(f"{'command':48s} {'seconds':>8s} {'budget':>7s} {'ratio':>6s}")
    for name, seconds, budget in rows:
        print(f"{name:48s} {seconds:8.1f} {budget:7.0f} {seconds / budget:6.2f}")
    print("\n".join(summary))


if __name__ == "__main__":
    main()
