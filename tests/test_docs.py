"""The documentation builds with Sphinx and numpydoc, warnings as errors."""

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

pytest.importorskip("sphinx")
pytest.importorskip("numpydoc")


def test_docs_build_without_warnings(tmp_path):
    result = subprocess.run(
        [sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-E",
         "-b", "html", str(ROOT / "docs"), str(tmp_path / "html")],
        capture_output=True, text=True, timeout=600,
    )
    assert result.returncode == 0, result.stderr[-5000:]
    pages = {p.name for p in (tmp_path / "html").glob("*.html")}
    for page in ("index.html", "api.html", "cautions.html", "saving_models.html",
                 "resolution_invariance.html"):
        assert page in pages
    api = (tmp_path / "html" / "api.html").read_text(encoding="utf-8")
    assert "CurveBandDisplay" in api and "make_kiln_firing" in api


def test_every_page_is_reachable_and_cautions_are_there():
    docs = ROOT / "docs"
    index = (docs / "index.rst").read_text(encoding="utf-8")
    for page in docs.glob("*.rst"):
        assert page.stem == "index" or f"   {page.stem}\n" in index, page.name
    cautions = (docs / "cautions.rst").read_text(encoding="utf-8")
    assert "validate" in cautions.lower() and "standards" in cautions
    saving = (docs / "saving_models.rst").read_text(encoding="utf-8")
    assert "runs code" in saving and "skops" in saving
