"""Every script in examples/ runs to completion (Agg backend, no display)."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.py"))


def test_there_are_kiln_examples():
    kiln = [p for p in EXAMPLES if p.name.startswith("kiln_")]
    assert len(kiln) >= 4


@pytest.mark.slow
@pytest.mark.parametrize("script", EXAMPLES, ids=lambda p: p.name)
def test_example_runs(script, tmp_path):
    env = dict(os.environ)
    env["MPLBACKEND"] = "Agg"
    env["PYTHONPATH"] = os.pathsep.join(
        p for p in (str(ROOT), env.get("PYTHONPATH")) if p
    )
    # the examples' linear algebra is on small matrices: BLAS threads only
    # add overhead on a shared two-core machine
    env["OPENBLAS_NUM_THREADS"] = "1"
    result = subprocess.run(
        [sys.executable, str(script)], cwd=tmp_path, env=env,
        capture_output=True, text=True, timeout=300,
    )
    assert result.returncode == 0, result.stderr[-3000:]
    assert result.stdout.strip(), "an example should print what it found"
    assert list(tmp_path.iterdir()) == []  # examples leave no files behind
