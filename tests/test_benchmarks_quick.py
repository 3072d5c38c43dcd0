"""Smoke run of every benchmark script in quick mode, through the runner.

The figures themselves are recorded in docs/performance.rst from full runs;
this test only checks that each script runs to its table.
"""

import subprocess
import sys
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # about 30 s; CI runs it (-m "slow or not slow")

BENCHMARKS = Path(__file__).resolve().parent / "benchmarks"


def test_quick_benchmarks_run():
    scripts = sorted(p.name for p in BENCHMARKS.glob("bench_*.py"))
    assert "bench_scale.py" in scripts
    done = subprocess.run(
        [sys.executable, str(BENCHMARKS / "run_all.py"), "--quick", "--jobs", "2"],
        capture_output=True, text=True, timeout=300,
    )
    assert done.returncode == 0, done.stdout[-3000:] + done.stderr[-3000:]
    for name in scripts:
        assert f"=== {name} (" in done.stdout
