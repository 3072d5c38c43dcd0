"""Sphinx configuration of the skfunc documentation.

Build with ``python -m sphinx -W -b html docs docs/_build/html`` from the
repository root (tests/test_docs.py does, with warnings as errors).
"""

import os
import re
import sys

sys.path.insert(0, os.path.abspath(".."))

from skfunc import __version__  # noqa: E402

project = "skfunc"
author = "skfunc developers"
copyright = "skfunc developers"
release = version = __version__

extensions = [
    "sphinx.ext.autodoc", "sphinx.ext.mathjax", "numpydoc", "sphinx_gallery.gen_gallery",
]
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
autodoc_default_options = {"members": False}
exclude_patterns = ["_build"]

# The gallery: every script in examples/ runs during the build and its
# printed output and figures go on its page (docs/auto_examples is generated).
sphinx_gallery_conf = {
    "examples_dirs": "../examples",
    "gallery_dirs": "auto_examples",
    "filename_pattern": r"\.py$",  # run every example, not only plot_*.py
    "within_subsection_order": "FileNameSortKey",
    "download_all_examples": False,
    "write_computation_times": False,
    "remove_config_comments": True,
    "abort_on_example_error": True,
}
templates_path = []
html_theme = "alabaster"
html_static_path = ["_static"]
html_theme_options = {"description": "Functional data analysis for scikit-learn"}


# Docstrings name fitted attributes in plain text, e.g. "shape (n_basis_,)".
# In reStructuredText a word ending in "_" is a link to a target, which does
# not exist; show such words as literals instead. Names being defined
# ("coef_ : ndarray"), literals and doctest lines are left alone.
_LITERAL = re.compile(r"(``.*?``|`[^`]*`)")
_TRAILING = re.compile(r"(?<![\w.`*])([A-Za-z]\w*_)(?![\w`])")
_DEFINITION = re.compile(r"^(\s*[\w, *]+ : )(.*)$")


def _quote_attribute_names(text):
    parts = _LITERAL.split(text)
    for i in range(0, len(parts), 2):  # even parts are outside literals
        parts[i] = _TRAILING.sub(r"``\1``", parts[i])
    return "".join(parts)


def _escape_trailing_underscores(app, what, name, obj, options, lines):
    for i, line in enumerate(lines):
        stripped = line.lstrip()
        if stripped.startswith((">>>", "...")):
            continue
        match = _DEFINITION.match(line)
        if match:
            lines[i] = match.group(1) + _quote_attribute_names(match.group(2))
        else:
            lines[i] = _quote_attribute_names(line)


def setup(app):
    app.connect("autodoc-process-docstring", _escape_trailing_underscores,
                priority=400)
