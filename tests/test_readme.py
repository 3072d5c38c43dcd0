"""The README's quickstart runs as written."""

import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"


@pytest.mark.slow
def test_quickstart_runs():
    blocks = re.findall(r"```python\n(.*?)```", README.read_text(), re.S)
    assert blocks, "the README has a python quickstart block"
    namespace = {}
    exec(compile(blocks[0], "README.md", "exec"), namespace)  # noqa: S102
    lower, upper = namespace["lower"], namespace["upper"]
    assert (lower <= upper).all()
    assert namespace["search"].best_score_ > 0.5


def _setup_commands():
    text = README.read_text()
    setup = text[text.index("## Set-up") : text.index("##", text.index("## Set-up") + 3)]
    return [c.strip() for c in re.findall(r"```bash\n(.*?)```", setup, re.S)]


def test_two_setup_commands():
    assert _setup_commands() == [
        'python -m pip install -e ".[plot]" && python -m skfunc demo',
        'python -m pip install -e ".[test]" && python -m pytest -m "slow or not slow"',
    ]


def test_main_job_command_installs_matplotlib_and_ci_runs_the_test_command():
    import shlex

    root = README.parent
    pyproject = (root / "pyproject.toml").read_text()
    # (tomllib is Python 3.11+; the package supports 3.10, so read the lines)
    plot = re.search(r"^plot = \[(.*)\]$", pyproject, re.M).group(1)
    addopts = shlex.split(re.search(r"^addopts = \"(.*)\"$", pyproject, re.M).group(1))
    # the demo's figure needs matplotlib: the main-job command installs it
    assert '"matplotlib' in plot
    # the README's test command is the one CI runs, and it selects every test
    # (pyproject's default run deselects the slow ones)
    ci = (root / ".ci" / "run").read_text()
    test_command = _setup_commands()[1]
    assert test_command in ci.splitlines()
    assert addopts[addopts.index("-m") + 1] == "not slow"
