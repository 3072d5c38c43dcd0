"""``python -m skfunc demo``: options, files, messages (small, fast runs)."""

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from skfunc._demo import interpolate_gaps, main
from skfunc.datasets import make_kiln_firing
from skfunc.persistence import load_model

ROOT = Path(__file__).resolve().parents[1]
FAST = ["--n-runs", "60", "--cv", "2"]


def test_demo_runs_saves_and_draws(tmp_path, capsys):
    output = tmp_path / "model.joblib"
    assert main(["demo", "--output", str(output), *FAST]) == 0
    out = capsys.readouterr().out
    progress = [line for line in out.splitlines() if line.startswith("[")]
    assert [line[:5] for line in progress] == [f"[{i}/7]" for i in range(1, 8)]
    assert "baseline RidgeCV" in out and "cross-validated R^2" in out
    assert "validate them on your own process data" in out
    model = load_model(output)
    kiln = make_kiln_firing(20, random_state=99)
    pred = model.predict(kiln.data)
    # an invented but honest check: predictions track the true strength
    assert np.corrcoef(pred, kiln.strength)[0, 1] > 0.8
    figure = tmp_path / "model.png"
    assert figure.stat().st_size > 10_000
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature


def test_demo_refuses_to_overwrite_without_force(tmp_path, capsys):
    output = tmp_path / "model.skops"
    output.write_bytes(b"keep me")
    with pytest.raises(SystemExit) as info:
        main(["demo", "--output", str(output), *FAST])
    assert info.value.code == 2
    assert "already exists; pass --force" in capsys.readouterr().err
    assert output.read_bytes() == b"keep me"
    main(["demo", "--output", str(output), "--force", "--no-figure", *FAST])
    assert output.read_bytes() != b"keep me"
    model = load_model(output)  # trusts only skfunc's estimator classes
    assert model.predict(make_kiln_firing(3).data).shape == (3,)
    assert not (tmp_path / "model.png").exists()


@pytest.mark.parametrize(
    "argv, message",
    [
        ([], "required: COMMAND"),
        (["plot"], "invalid choice: 'plot'"),
        (["demo", "--n-runs", "ten"], "expected a whole number from 60 to 5000"),
        (["demo", "--n-runs", "5"], "expected a whole number from 60 to 5000; got 5"),
        (["demo", "--cv", "1"], "from 2 to 20"),
        (["demo", "--figure", "out.txt"], "must end in .png, .pdf or .svg"),
        (["demo", "--output", "no/such/folder/m.joblib"], "does not exist"),
        (["demo", "--colour"], "unrecognized arguments: --colour"),
    ],
)
def test_bad_options_get_clear_messages(argv, message, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert message in capsys.readouterr().err


def test_help_through_python_dash_m():
    result = subprocess.run(
        [sys.executable, "-m", "skfunc", "demo", "--help"], cwd=ROOT,
        capture_output=True, text=True, timeout=60, check=True,
    )
    for option in ("--output", "--force", "--figure", "--no-figure", "--n-runs",
                   "--cv", "--random-state", "invented"):
        assert option in result.stdout


def test_interpolate_gaps_matches_numpy_interp():
    X = np.array([[0.0, np.nan, 2.0, np.nan, np.nan, 8.0], [1, 2, 3, 4, 5, np.nan]])
    filled = interpolate_gaps(X)
    np.testing.assert_allclose(filled[0], np.interp(np.arange(6), [0, 2, 5],
                                                    [0, 2, 8]))
    np.testing.assert_allclose(filled[1], [1, 2, 3, 4, 5, 5])
    assert np.isnan(X[0, 1])  # input untouched
