"""Every code block of the README runs as written.

The Python blocks build on each other like the cells of one notebook: they are
written, in order, into one script that runs in a fresh interpreter in a
temporary folder (``FLOWKIT_QUICK=1``, ``MPLBACKEND=Agg``), with a marker
printed before each block so a failure names the block. Each command of a
``bash`` block (continuation lines joined) runs in that folder with the
project's ``flowkit`` and ``python`` first on ``PATH``, as after
``source .venv/bin/activate``.

A block or a command whose text contains ``(not run by the README test`` is
skipped: that visible comment says why (it opens a browser, runs the whole
test suite, runs for minutes). The test checks that few are skipped.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
SKIP = "(not run by the README test"
#: At most this many commands or blocks may carry the skip marker.
MAX_SKIPPED = 14


def readme_blocks(text: str) -> list[tuple[str, str, int]]:
    """(language, body, line number) of every fenced code block."""
    out = []
    for m in re.finditer(r"^```(\w*)\n(.*?)^```", text, re.S | re.M):
        out.append((m.group(1), m.group(2), text[:m.start()].count("\n") + 1))
    return out


def shell_commands(body: str) -> list[str]:
    """The commands of a bash block: continuation lines joined, comments and blank lines dropped."""
    joined = re.sub(r"\\\n\s*", " ", body)
    return [line for line in joined.splitlines() if line.strip() and not line.lstrip().startswith("#")]


def _env(tmp: Path) -> dict:
    env = dict(os.environ, FLOWKIT_QUICK="1", MPLBACKEND="Agg", PYTHONPATH=str(ROOT))
    env["PATH"] = f"{Path(sys.executable).parent}{os.pathsep}{env.get('PATH', '')}"
    return env


def test_readme_blocks_are_found_and_few_are_skipped():
    blocks = readme_blocks(README.read_text())
    langs = {lang for lang, _, _ in blocks}
    assert {"python", "bash"} <= langs and len(blocks) >= 10
    skipped = sum(SKIP in body for lang, body, _ in blocks if lang == "python")
    skipped += sum(SKIP in cmd for lang, body, _ in blocks if lang == "bash" for cmd in shell_commands(body))
    assert skipped <= MAX_SKIPPED, f"{skipped} README commands are skipped by the README test"
    assert "Using flowkit after set-up" in README.read_text()


def test_readme_python_blocks_run(tmp_path):
    parts = []
    for k, (lang, body, line) in enumerate(readme_blocks(README.read_text())):
        if lang != "python" or SKIP in body:
            continue
        parts.append(f"print('README block at line {line}', round(__import__('time').perf_counter() - _T0, 1), "
                     f"flush=True)\n{body}")
    script = tmp_path / "readme_blocks.py"
    script.write_text("_T0 = __import__('time').perf_counter()\n" + "\n".join(parts))
    tic = time.perf_counter()
    run = subprocess.run([sys.executable, str(script)], cwd=tmp_path, env=_env(tmp_path), capture_output=True,
                         text=True, timeout=600)
    seconds = time.perf_counter() - tic
    last = [ln for ln in run.stdout.splitlines() if ln.startswith("README block at line")]
    assert run.returncode == 0, f"{last[-1] if last else 'README'} failed:\n{run.stderr[-3000:]}"
    print(f"README Python blocks: {seconds:.1f} s; started at (s):", *last, sep="\n")


def _commands():
    out = []
    for lang, body, line in readme_blocks(README.read_text()):
        if lang != "bash":
            continue
        for cmd in shell_commands(body):
            if SKIP not in cmd:
                out.append(pytest.param(cmd, id=f"line{line}:{cmd.split('#')[0].strip()[:50]}"))
    return out


@pytest.fixture(scope="module")
def shell_dir(tmp_path_factory):
    return tmp_path_factory.mktemp("readme-shell")


@pytest.mark.parametrize("cmd", _commands())
def test_readme_shell_commands_run(cmd, shell_dir, monkeypatch, capsys):
    import shlex

    words = shlex.split(cmd, comments=True)
    if words and words[0] == "flowkit" and not set("|;&<>") & set(cmd.split("#")[0]):
        # `flowkit ARGS` runs through the same entry point in this process: the console script is
        # a one-line call of flowkit.cli.main, and kernels compiled once serve every command
        from flowkit.cli import main

        monkeypatch.chdir(shell_dir)
        monkeypatch.setenv("MPLBACKEND", "Agg")
        code = main(words[1:])
        out = capsys.readouterr()
        assert code == 0, f"`{cmd}` failed ({code}):\n{out.out[-1500:]}\n{out.err[-3000:]}"
        return
    # `bash run.sh ...` is run from the repository (that is where the README says to type it)
    cwd = ROOT if cmd.lstrip().startswith("bash run.sh") else shell_dir
    run = subprocess.run(["bash", "-c", f"set -o pipefail; {cmd}"], cwd=cwd, env=_env(shell_dir),
                         capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, f"`{cmd}` failed ({run.returncode}):\n{run.stdout[-1500:]}\n{run.stderr[-3000:]}"


def test_presets_table_names_the_domain_each_flow_reports():
    import flowkit

    text = README.read_text()
    table = text[text.index("## Presets"):]
    rows = [r for r in table.splitlines() if r.startswith("| `")]
    assert len(rows) >= 8
    for row in rows:
        names_cell, _, domain_cell = [c.strip() for c in row.strip("|").split("|")][:3]
        names = re.findall(r"`([^`]+)`", names_cell)
        domains = re.findall(r"`([^`]+)`", domain_cell)
        for k, name in enumerate(names):  # "cat-map, sfs-map" pair with "torus / cell"
            assert flowkit.flow(name).domain == domains[min(k, len(domains) - 1)], row


def test_cache_command_removes_nothing_without_clear(tmp_path, monkeypatch, capsys):
    from flowkit.cli import main

    monkeypatch.setenv("FLOWKIT_CACHE_DIR", str(tmp_path / "cache"))
    assert main(["cache"]) == 0
    out = capsys.readouterr().out
    assert "removed" not in out and "--clear" in out
    assert main(["cache", "--json"]) == 0
    assert "removed" not in json.loads(capsys.readouterr().out)


def test_python_reports_compile_seconds_apart_from_integration():
    import flowkit

    f = flowkit.custom_flow(["-y + c*z", "x", "-c*x"], params={"c": 0.25}, domain="ball", name="readme-rotor")
    first = flowkit.poincare_section(f, [[0.3, 0.0, 0.1]], crossings=5)
    again = flowkit.poincare_section(f, [[0.3, 0.0, 0.1]], crossings=5)
    # the first call of a new family compiles its own kernel (or loads it from disk), or runs on the
    # generic kernel shared by every flow while its own compiles in the background; the second call
    # finds a compiled kernel either way
    if first.provenance["kernel"] == "specialized":
        assert first.provenance["compile_seconds"] > 0
    else:
        assert first.provenance["kernel"] == "generic"
    assert again.provenance["compile_seconds"] == 0.0
