"""The README's quickstart runs as written."""

import re
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def test_quickstart_runs():
    blocks = re.findall(r"```python\n(.*?)```", README.read_text(), re.S)
    assert blocks, "the README has a python quickstart block"
    namespace = {}
    exec(compile(blocks[0], "README.md", "exec"), namespace)  # noqa: S102
    lower, upper = namespace["lower"], namespace["upper"]
    assert (lower <= upper).all()
    assert namespace["search"].best_score_ > 0.5


def test_two_setup_commands():
    text = README.read_text()
    setup = text[text.index("## Set-up") : text.index("##", text.index("## Set-up") + 3)]
    commands = re.findall(r"```bash\n(.*?)```", setup, re.S)
    assert [c.strip() for c in commands] == [
        'python -m pip install -e . && python -m skfunc demo',
        'python -m pip install -e ".[test]" && python -m pytest',
    ]
