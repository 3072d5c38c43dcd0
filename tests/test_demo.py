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
    # a blank 13 x 7.5 inch canvas at 90 dpi is 4.7 kB as PNG (measured with
    # matplotlib 3.x): this only rules out an empty file or a blank figure
    assert figure.stat().st_size > 10_000
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature


def test_demo_refuses_to_overwrite_without_force(tmp_path, capsys):
    output = tmp_path / "model.skops"
    output.write_bytes(b"keep me")
    with pytest.raises(SystemExit) as info:
        main(["demo", "--output", str(output), *FAST])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert f"--output: {output} already exists" in err and "--force" in err
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
        (["demo", "--output", ""], "--output needs a file name"),
        (["demo", "--output", "/"], "--output needs a file name"),
        (["demo", "--figure", ""], "--figure needs a file name"),
    ],
)
def test_bad_options_get_clear_messages(argv, message, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert message in capsys.readouterr().err


@pytest.fixture
def no_work(monkeypatch):
    """Make any run of the demo's stages fail the test: refusals must come
    before any work."""
    import skfunc._demo as demo

    def fail(*args, **kwargs):
        raise AssertionError("the demo started working before refusing")

    monkeypatch.setattr(demo, "run_demo", fail)


@pytest.mark.parametrize("extra", [[], ["--figure", "{out}"], ["--figure", "./{out}"]])
def test_figure_path_equal_to_model_path_is_refused(tmp_path, capsys, no_work,
                                                    monkeypatch, extra):
    # --output model.png would be overwritten by the default figure model.png
    monkeypatch.chdir(tmp_path)
    out = "model.png"
    argv = ["demo", "--output", out, "--force", *[a.format(out=out) for a in extra]]
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert "the figure would overwrite the model" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_unwritable_folder_is_refused_first_naming_the_target(tmp_path, capsys,
                                                             no_work, monkeypatch):
    # a folder that refuses new files (simulated: tests may run as root) is found
    # before the demo runs, and the message names the model file
    import skfunc.persistence as persistence

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(tmp_path / ".x.probe"))

    monkeypatch.setattr(persistence.tempfile, "mkstemp", refuse)
    output = tmp_path / "model.joblib"
    with pytest.raises(SystemExit) as info:
        main(["demo", "--output", str(output), *FAST])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert f"--output: Cannot write {output}" in err and "Permission denied" in err
    assert ".part" not in err and ".probe" not in err


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
