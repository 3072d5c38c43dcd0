"""The documentation builds with Sphinx, numpydoc and sphinx-gallery,
warnings as errors, and every code snippet in it runs as a doctest."""

import doctest
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

PAGES = sorted((ROOT / "docs").glob("*.rst"))


@pytest.mark.slow
def test_docs_build_without_warnings(tmp_path):
    # The build also runs every script in examples/ (sphinx-gallery, in the
    # example's folder, aborting on an error): the one run of the examples
    # in the suite, checked below as tests/test_examples.py checked them in
    # processes of their own.
    pytest.importorskip("sphinx")
    pytest.importorskip("numpydoc")
    pytest.importorskip("sphinx_gallery")
    # build from a copy, so that the gallery's generated pages (written next
    # to the sources) are fresh and the working tree is left alone
    import os
    import shutil

    source = tmp_path / "src"
    ignore = shutil.ignore_patterns("_build", "auto_examples", "sg_execution_times.rst")
    shutil.copytree(ROOT / "docs", source / "docs", ignore=ignore)
    shutil.copytree(ROOT / "examples", source / "examples")
    env = dict(os.environ, MPLBACKEND="Agg", OPENBLAS_NUM_THREADS="1")
    env["PYTHONPATH"] = os.pathsep.join(
        p for p in (str(ROOT), env.get("PYTHONPATH")) if p
    )
    result = subprocess.run(
        [sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-E",
         "-b", "html", str(source / "docs"), str(tmp_path / "html")],
        capture_output=True, text=True, timeout=900, env=env,
    )
    assert result.returncode == 0, result.stderr[-5000:]
    pages = {p.name for p in (tmp_path / "html").glob("*.html")}
    for page in ("index.html", "api.html", "cautions.html", "saving_models.html",
                 "resolution_invariance.html"):
        assert page in pages
    api = (tmp_path / "html" / "api.html").read_text(encoding="utf-8")
    assert "CurveBandDisplay" in api and "make_kiln_firing" in api
    # the gallery: one page per example, with the figures the scripts drew
    gallery = tmp_path / "html" / "auto_examples"
    examples = sorted(p.stem for p in (ROOT / "examples").glob("*.py"))
    assert sorted(p.stem for p in gallery.glob("*.html") if p.stem != "index") \
        == examples
    figures = list((tmp_path / "html" / "_images").glob("sphx_glr_kiln_*_001.png"))
    drawn = [name for name in examples if name.startswith("kiln_")]
    assert len(figures) == len(drawn), sorted(p.name for p in figures)
    for name in examples:
        # every example prints what it found (its output block on its page)
        html = (gallery / f"{name}.html").read_text(encoding="utf-8")
        assert "sphx-glr-script-out" in html, f"{name} printed nothing"
    # and leaves no files behind (they would be written in its folder)
    assert sorted(p.name for p in (source / "examples").iterdir()) \
        == sorted(p.name for p in (ROOT / "examples").iterdir())
    page = (gallery / "kiln_strength_coefficient.html").read_text(encoding="utf-8")
    assert "sphx_glr_kiln_strength_coefficient_001.png" in page


def test_every_page_is_reachable_and_cautions_are_there():
    docs = ROOT / "docs"
    index = (docs / "index.rst").read_text(encoding="utf-8")
    for page in docs.glob("*.rst"):
        assert page.stem == "index" or f"   {page.stem}\n" in index, page.name
    cautions = (docs / "cautions.rst").read_text(encoding="utf-8")
    assert "validate" in cautions.lower() and "standards" in cautions
    saving = (docs / "saving_models.rst").read_text(encoding="utf-8")
    assert "runs code" in saving and "skops" in saving


@pytest.mark.parametrize("page", [p for p in PAGES if ">>> " in p.read_text(
    encoding="utf-8")], ids=lambda p: p.name)
def test_snippets_run_as_doctests(page, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # snippets that save files write them here
    result = doctest.testfile(
        str(page), module_relative=False, encoding="utf-8", verbose=False,
        optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
    )
    assert result.attempted > 0
    assert result.failed == 0, f"{result.failed} snippet line(s) of {page.name} failed"


def test_python_snippets_are_doctests():
    # a literal block (after "::") holding Python would escape the doctest
    # run above; shell commands go in ".. code-block:: bash"
    literal = re.compile(r"::\n\n((?:[ ]{4}.*\n|\n)+)")
    for page in PAGES:
        text = page.read_text(encoding="utf-8")
        for block in literal.findall(text):
            code = block.strip()
            looks_like_python = re.search(r"^\s*(import|from) |\w+ = \w", code, re.M)
            assert not looks_like_python, f"{page.name}: Python outside a doctest:\n{code}"
