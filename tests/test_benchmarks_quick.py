"""Smoke run of every benchmark script in quick mode, through the runner.

The figures themselves are recorded in docs/performance.rst from full runs;
this test only checks that each script runs to its table. One test per
script, each with its own time limit, so a loaded machine slows a script
without failing the others, and a failure names its script.
"""

import importlib.util
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # about 1 min in all; CI runs it (-m "slow or not slow")

BENCHMARKS = Path(__file__).resolve().parent / "benchmarks"
SCRIPTS = sorted(p.name for p in BENCHMARKS.glob("bench_*.py"))

#: seconds one quick script may take (the slowest, bench_scale.py, takes about
#: 7 s of CPU time with one BLAS thread; a loaded machine stretches that ~10x)
TIMEOUT = 300


def _runner():
    spec = importlib.util.spec_from_file_location("run_all", BENCHMARKS / "run_all.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_every_benchmark_is_run():
    assert "bench_scale.py" in SCRIPTS and "_timing.py" not in SCRIPTS


@pytest.mark.parametrize("script", SCRIPTS)
def test_quick_benchmark_runs(script, capsys, monkeypatch):
    # one BLAS thread in the scripts: their quick sizes are small matrices,
    # on which BLAS threads only wait for work (half the CPU time of these
    # runs, measured on two cores; the thread paths have tests of their own)
    for name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        monkeypatch.setenv(name, "1")
    # the runner in this process; the script in its own, as run_all runs it
    code = _runner().main(["--quick", "--timeout", str(TIMEOUT), script])
    out = capsys.readouterr().out
    assert code == 0, out[-3000:]
    assert f"=== {script} (" in out
