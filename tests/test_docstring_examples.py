"""Run the Examples sections of every module's docstrings with doctest.

The docstring examples are the first code a reader runs; an example that
raises or prints something else than shown is a bug of the docs.
"""

import doctest
import importlib
import pkgutil

import matplotlib
import pytest

import skfunc

matplotlib.use("Agg")

MODULES = sorted(
    info.name
    for info in pkgutil.walk_packages(skfunc.__path__, prefix="skfunc.")
    if info.name != "skfunc.__main__"
)

OPTIONFLAGS = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE


@pytest.mark.parametrize("module_name", MODULES)
def test_docstring_examples(module_name):
    import matplotlib.pyplot as plt

    module = importlib.import_module(module_name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=OPTIONFLAGS)
    failed = []
    try:
        # the finder keeps the objects defined in this module: re-exports
        # are run with the module that defines them
        for test in finder.find(module, module_name):
            runner.run(test, out=failed.append)
    finally:
        plt.close("all")
    assert not failed, "".join(failed)
