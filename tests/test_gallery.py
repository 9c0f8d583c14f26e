"""Every gallery script runs (quick, low resolution) and writes its PNG and PDF; the index lists it.

``gallery/make_all.py`` is the command behind ``bash run.sh gallery``; here it
runs every script with ``FLOWKIT_QUICK=1`` into a temporary folder.
"""

import ast
import os
import subprocess
import sys
from pathlib import Path

import pytest

GALLERY = Path(__file__).resolve().parents[1] / "gallery"
sys.path.insert(0, str(GALLERY))
from make_all import scripts  # noqa: E402

SCRIPTS = scripts()
#: whole gallery at quick sizes, seconds (a cold numba cache costs most of it)
TIMEOUT = 1500


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    out = tmp_path_factory.mktemp("gallery")
    env = dict(os.environ, FLOWKIT_QUICK="1", FLOWKIT_GALLERY_OUT=str(out), MPLBACKEND="Agg")
    run = subprocess.run([sys.executable, str(GALLERY / "make_all.py")], env=env, capture_output=True, text=True,
                         timeout=TIMEOUT)
    return out, run


def test_make_all_runs_every_script(made):
    out, run = made
    assert run.returncode == 0, run.stdout + run.stderr[-6000:]
    assert f"{len(SCRIPTS)} of {len(SCRIPTS)} gallery scripts ran" in run.stdout


@pytest.mark.parametrize("script", SCRIPTS, ids=[p.stem for p in SCRIPTS])
def test_script_writes_png_and_pdf(made, script):
    out, _ = made
    png, pdf = out / f"{script.stem}.png", out / f"{script.stem}.pdf"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert pdf.read_bytes()[:5] == b"%PDF-" and pdf.stat().st_size > 1000


@pytest.mark.parametrize("script", SCRIPTS, ids=[p.stem for p in SCRIPTS])
def test_script_follows_the_gallery_layout(script):
    text = script.read_text()
    tree = ast.parse(text)
    doc = ast.get_docstring(tree)
    assert doc, f"{script.name}: needs a docstring (title + one paragraph)"
    title, _, body = doc.partition("\n")
    underline, _, paragraph = body.partition("\n")
    assert title.strip() and set(underline.strip()) == {"="} and len(paragraph.split()) >= 20
    assert text.count("# %%") >= 2, "cells marked with '# %%' and headings"
    assert "API used" in text.split("# %%")[-1], "closing list of the API used"
    # object-oriented matplotlib: pyplot only makes the figure
    pyplot_calls = {n.func.attr for n in ast.walk(tree) if isinstance(n, ast.Call)
                    and isinstance(n.func, ast.Attribute) and getattr(n.func.value, "id", "") == "plt"}
    assert pyplot_calls <= {"subplots", "figure"}, pyplot_calls
    assert f'save(fig, "{script.stem}")' in text, "writes PNG and PDF under its own name"


def test_index_lists_every_script():
    index = (GALLERY / "README.md").read_text()
    for script in SCRIPTS:
        assert f"({script.name})" in index, f"gallery/README.md does not list {script.name}"
