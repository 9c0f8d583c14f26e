"""Files never run code, and bad input or a failed write ends cleanly with nothing lost.

Every crafted input below tries to create a marker file through Python's
``__import__``; each must be refused with a clear error and the marker must never
appear. Command-line cases run the real ``flowkit`` command in a subprocess and
check the exit status, that no traceback is shown, and that the message names
the option and the fix.
"""

from __future__ import annotations

import ast
import json
import os
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest

import flowkit
from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.results import Result

ROOT = Path(__file__).resolve().parents[1]


def _payload(marker: Path) -> str:
    return f"__import__('os').system('touch {marker}')"


def _hostile_recipe(marker: Path) -> dict:
    return {"custom": [_payload(marker), "0", "0"], "params": {}, "domain": "unbounded", "period": None,
            "name": "c", "kind": "flow"}


# -- formulas -----------------------------------------------------------------------------------
def test_crafted_formula_is_refused_and_runs_nothing(tmp_path):
    marker = tmp_path / "MARKER"
    for attempt in (lambda: flowkit.custom_flow([_payload(marker), "0", "0"]),
                    lambda: flowkit.flows.custom_map([_payload(marker), "y", "z"]),
                    lambda: flowkit.custom_flow([f"sin(x) + {_payload(marker)}", "0", "0"]),
                    lambda: flowkit.custom_flow(["x", "y", "eval('1')"]),
                    lambda: flowkit.custom_flow(["(lambda: 1)()", "0", "0"])):
        with pytest.raises(FlowkitError, match="velocity component|map image component"):
            attempt()
    assert not marker.exists()


def test_parameter_named_p_is_allowed_and_used():
    # the generated code's parameter vector is `_params`, so `p` is free for the user
    f = flowkit.custom_flow(["p*sin(z)", "cos(x)", "0"], {"p": 1.5})
    v = f.velocity([[0.1, 0.2, 0.3]])[0]
    assert v[0] == pytest.approx(1.5 * np.sin(0.3), rel=1e-14)  # exact value of the formula
    assert f.with_params(p=-2.0).velocity([[0.1, 0.2, 0.3]])[0, 0] == pytest.approx(-2.0 * np.sin(0.3), rel=1e-14)
    with pytest.raises(FlowkitError, match="parameter name '_params'"):
        flowkit.custom_flow(["x", "y", "z"], {"_params": 1.0})


# -- sweep stores and payloads ---------------------------------------------------------------------
def _store_with(tmp_path: Path, spec: dict, **extra) -> Path:
    from flowkit.sweep.store import MAGIC

    store = tmp_path / "store"
    (store / "points").mkdir(parents=True)
    manifest = {"magic": MAGIC, "fingerprint": "0" * 64, "spec": spec, "flowkit_version": "x", "created": "now",
                "runs": [], **extra}
    (store / "manifest.json").write_text(json.dumps(manifest))
    return store


def test_crafted_sweep_manifest_is_refused_and_runs_nothing(tmp_path):
    from flowkit.sweep import open_results

    marker = tmp_path / "MARKER"
    store = _store_with(tmp_path, {"flow": _hostile_recipe(marker), "axes": {"a": [1.0]}, "measures": ["mean_ftle"]})
    with pytest.raises(FlowkitError) as info:
        open_results(store)
    assert "manifest.json" in str(info.value) and "only named functions can be called" in str(info.value)
    assert not marker.exists()


@pytest.mark.parametrize("spec, extra, words", [
    ({"flow": {"preset": "stf"}, "axes": {"rotation": [0.0]}, "measures": ["mean_ftle"], "run": "x"}, {},
     "unknown key 'run' in the sweep spec"),
    ({"flow": {"preset": "stf", "code": "x"}, "axes": {"rotation": [0.0]}, "measures": ["mean_ftle"]}, {},
     "unknown key 'code'"),
    ({"flow": {"preset": "stf"}, "axes": {"rotation": "0:1"}, "measures": ["mean_ftle"]}, {},
     "key 'axes' must be"),
    ({"flow": {"preset": "stf"}, "axes": {"rotation": [0.0]}, "measures": ["mean_ftle"],
      "options": {"mean_ftle": {"__class__": 1}}}, {}, "has no option '__class__'"),
    ({"flow": {"preset": "stf"}, "axes": {"rotation": [0.0]}, "measures": ["mean_ftle"]}, {"hook": "x"},
     "unknown key 'hook'"),
])
def test_sweep_manifest_keys_and_types_are_checked(tmp_path, spec, extra, words):
    from flowkit.sweep import open_results

    store = _store_with(tmp_path, spec, **extra)
    with pytest.raises(FlowkitError, match=words) as info:
        open_results(store)
    assert "manifest.json" in str(info.value)


def test_crafted_task_payload_is_refused(tmp_path):
    from flowkit.sweep.runner import compute_point

    marker = tmp_path / "MARKER"
    with pytest.raises(FlowkitError, match="sweep task payload"):
        compute_point({"flow": _hostile_recipe(marker), "axes": {"a": [1.0]}, "measures": ["mean_ftle"]}, 0)
    assert not marker.exists()


# -- saved results -----------------------------------------------------------------------------------
@dataclass
class _Saved(Result):
    _ARRAYS = ("values",)
    values: np.ndarray
    provenance: dict = field(default_factory=dict)


@pytest.mark.parametrize("suffix", [".json", ".npz", ".nc"])
def test_crafted_saved_result_is_refused_and_runs_nothing(tmp_path, suffix):
    marker = tmp_path / "MARKER"
    prov = {"flow": {"flow": "c", "parameters": {}, "structure": {"recipe": _hostile_recipe(marker)}}}
    path = _Saved(np.arange(3.0), prov).save(tmp_path / f"r{suffix}")
    back = flowkit.load(path)  # the file is data: loading it is harmless
    with pytest.raises(FlowkitError, match="only named functions can be called"):
        back.flow()
    prov["flow"]["structure"]["recipe"] = {"preset": "stf", "exec": _payload(marker)}
    with pytest.raises(FlowkitError, match="unknown key 'exec'"):
        flowkit.load(_Saved(np.arange(3.0), prov).save(tmp_path / f"s{suffix}")).flow()
    assert not marker.exists()


def test_saved_result_naming_code_as_its_kind_is_refused(tmp_path):
    marker = tmp_path / "MARKER"
    for kind, module in ((_payload(marker), None), ("_Saved2", "os"), ("X", f"flowkit.x;{_payload(marker)}")):
        doc = {"header": {"kind": kind, "module": module, "layout": {}}, "fields": {}, "arrays": {}}
        path = tmp_path / "k.json"
        path.write_text(json.dumps(doc))
        with pytest.raises(FlowkitError, match="unknown result kind"):
            flowkit.load(path)
    assert not marker.exists()


# -- the write that fails after the work -----------------------------------------------------------------
def test_failed_write_goes_to_a_fallback_folder_that_is_named(tmp_path, monkeypatch):
    """A folder that refuses writes after the check: the result lands in the current folder, and we are told.

    As an ordinary user a read-only folder (chmod 555) refuses the write. As root,
    permissions do not stop writes, so the target is /proc (a filesystem that
    refuses new files even to root); both are real refusals by the operating system.
    """
    from flowkit.results.files import write_safely

    alt = tmp_path / "alt"
    alt.mkdir()
    monkeypatch.chdir(alt)
    r = _Saved(np.arange(5.0), {"note": "kept"})
    if os.geteuid() == 0:
        target = Path("/proc") / "flowkit-safety-test.npz"
        with pytest.warns(FlowkitNotice, match="saved to"):
            written = r.save(target)  # passes the up-front check (root may write anywhere), then the OS refuses
    else:
        ro = tmp_path / "ro"
        ro.mkdir()
        target = ro / "r.npz"
        os.chmod(ro, 0o555)
        try:
            with pytest.warns(FlowkitNotice, match="saved to"):
                written = write_safely(target, lambda p: np.savez(p, values=r.values))
        finally:
            os.chmod(ro, 0o755)
    assert Path(written).parent == alt and not target.exists()
    assert np.array_equal(np.load(written)["values"], r.values)  # nothing lost


def test_cli_figure_that_cannot_be_written_falls_back(tmp_path, monkeypatch):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.cli.common import save_figure
    from flowkit.results import files

    monkeypatch.chdir(tmp_path)
    (tmp_path / "out").mkdir()
    real = files._write_atomic

    def refuse_first(path, write):  # the disk fills up between the check and the write
        if Path(path).parent.name == "out":
            raise OSError(28, "No space left on device")
        real(path, write)

    monkeypatch.setattr(files, "_write_atomic", refuse_first)
    fig, ax = plt.subplots()
    ax.plot([0, 1])
    with pytest.warns(FlowkitNotice, match="No space left on device.*saved to"):
        written = save_figure(fig, str(tmp_path / "out" / "f.png"))
    plt.close(fig)
    assert Path(written) == tmp_path / "f.png" and Path(written).read_bytes()[:4] == b"\x89PNG"


# -- text inputs and memory ------------------------------------------------------------------------------
@pytest.mark.parametrize("content, words", [
    (b"0 0 0\n1 2\n", "line 2: expected 3 numbers 'x y z', found 2"),
    (b"0 0 0\n# note\n1 2 nan\n", "line 3: holds NaN or infinity"),
    (b"0 0 0\n\xff\xfe 1 2\n", "line 2: not UTF-8 text"),
    (b"0 0 zero\n", "line 1: expected 3 numbers"),
    (b"# only a comment\n", "has no rows"),
])
def test_points_files_name_file_and_line(tmp_path, content, words):
    from flowkit.seeding import read_points_file, read_seed_file

    path = tmp_path / "pts.txt"
    path.write_bytes(content)
    with pytest.raises(FlowkitError, match=words) as info:
        read_seed_file(path)
    assert "pts.txt" in str(info.value)
    path.write_bytes(b"1 2\n3, 4\n")
    assert read_points_file(path, columns=2).tolist() == [[1.0, 2.0], [3.0, 4.0]]


def test_memory_estimates_name_the_argument_and_what_fits(monkeypatch):
    monkeypatch.setenv("FLOWKIT_MAX_BYTES", str(10 * 2**20))  # a 10 MiB cap
    flow = flowkit.flow("stf")
    with pytest.raises(FlowkitError, match=r"`n` = 2000000000 needs about .* the largest `n` that fits is about 109,226"):
        flowkit.seeding.random_in_domain(flow, 2_000_000_000)
    with pytest.raises(FlowkitError, match=r"`crossings` = '1000000 for 4 seeds'.*largest `crossings` that fits"):
        flowkit.poincare_section(flow, np.zeros((4, 3)), crossings=1_000_000)
    with pytest.raises(FlowkitError, match=r"`resolution` = '4096x4096'.*per side"):
        from flowkit.chaos.grid import check_resolution

        check_resolution((4096, 4096))
    with pytest.raises(FlowkitError, match=r"`max_points` = 10000000000.*largest `max_points`"):
        flowkit.material_line(flow, 1.0, max_points=10_000_000_000)
    with pytest.raises(FlowkitError, match=r"`particles` = '100000000 with 100 checkpoints'"):
        flowkit.stretch(flow, 100_000_000, 1.0)
    from flowkit.sweep import SweepSpec, parse_range

    with pytest.raises(FlowkitError, match=r"--vary rotation COUNT"):
        parse_range("rotation=0:1:1000000000")
    with pytest.raises(FlowkitError, match=r"`sweep points` = 1000000"):
        SweepSpec(flow={"preset": "stf"}, axes={"rotation": [0.0] * 1000, "x": [0.0] * 1000}, measures=["mean_ftle"])


# -- the command line ------------------------------------------------------------------------------------------
def _start(args, cwd) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "flowkit", *args], cwd=cwd, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env={**os.environ, "PYTHONPATH": str(ROOT)})


_CLI_CASES = [
    (["sectoin", "stf"], ["invalid choice: 'sectoin'", "did you mean 'section'?"]),
    (["section", "stf", "--crosings", "5"], ["did you mean --crossings (not --crosings)?"]),
    (["section", "stf", "--crossings", "5", "--methd", "rk4"], ["did you mean --method (not --methd)?"]),
    (["section", "stf", "--crossings", "5", "--method", "dop85"], ["did you mean 'dop853'?"]),
    (["section", "stf", "--crossings", "2", "--out", "missing/a.npz"],
     ["--out", "does not exist", "mkdir -p missing"]),
    (["section", "stf", "--crossings", "2", "--out", "a.txt"], ["--out", "must end in one of .npz, .nc, .json"]),
    (["section", "stf", "--crossings", "2", "--plot", "a.pnx"], ["--plot", ".png", ".svg", "'.pnx'"]),
    (["ftle", "stf", "--plane", "z=0", "--time", "1", "--plot", "missing/f.png"], ["--plot", "mkdir -p missing"]),
    (["lyapunov", "stf", "--point", "0,0,0", "--time", "1", "--out", "missing/l.json"], ["--out", "mkdir -p missing"]),
    (["dynamo", "roberts", "--rm", "5", "--save", "missing/d.npz"], ["--save", "mkdir -p missing"]),
    (["sweep", "stf", "--vary", "rotation=0:1:2", "--measure", "mean_ftle", "--store", "missing/s"],
     ["--store", "mkdir -p missing"]),
    (["section", "stf", "--crossings", "2", "--seed-file", "bad.txt"], ["seed file 'bad.txt' line 2", "UTF-8"]),
    (["section", "stf", "--crossings", "2", "--seeds", "2000000000", "--random"],
     ["`n` = 2000000000", "the largest `n` that fits"]),
]


@pytest.fixture(scope="module")
def cli_runs(tmp_path_factory):
    """Every command-line case as a real subprocess, all started at once (each is ~1 s of start-up)."""
    runs = {}
    for i, (args, _) in enumerate(_CLI_CASES):
        folder = tmp_path_factory.mktemp(f"cli{i}")
        (folder / "bad.txt").write_bytes(b"0 0 0\n\xff 1 2\n")
        runs[tuple(args)] = (_start(args, folder), folder)
    out = {}
    for key, (proc, folder) in runs.items():
        stdout, stderr = proc.communicate(timeout=300)
        out[key] = (proc.returncode, stdout, stderr, folder)
    return out


@pytest.mark.parametrize("args, words", _CLI_CASES)
def test_cli_refusals_are_clean(cli_runs, args, words):
    code, out, err, folder = cli_runs[tuple(args)]
    assert code == 2, err
    assert "Traceback" not in err and "Traceback" not in out
    for w in words:
        assert w in err, (w, err)
    assert not (folder / "missing").exists() and not list(folder.glob("*.npz"))


# -- the source holds no door from text to code ---------------------------------------------------------------------
_FORBIDDEN_CALLS = {"eval", "exec", "parse_expr", "sympify", "S", "__import__"}


def _forbidden(tree: ast.AST) -> list[tuple[int, str]]:
    found = []
    # a bare S(...) is sympy's sympify only where S was imported from sympy (periodic.py's S is sp.sin)
    sympy_s = any(isinstance(n, ast.ImportFrom) and (n.module or "").startswith("sympy")
                  and any(a.name == "S" for a in n.names) for n in ast.walk(tree))
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        name = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
        owner = f.value.id if isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name) else ""
        s_ok = name == "S" and (owner not in ("", "sp", "sympy") or (owner == "" and not sympy_s))
        if name in _FORBIDDEN_CALLS and not s_ok:
            found.append((node.lineno, name))
        if name in ("load", "loads", "Unpickler") and owner in ("pickle", "cloudpickle", "dill", "marshal"):
            found.append((node.lineno, f"{owner}.{name}"))
        if name == "load" and owner in ("np", "numpy"):
            for kw in node.keywords:
                if kw.arg == "allow_pickle" and not (isinstance(kw.value, ast.Constant) and kw.value.value is False):
                    found.append((node.lineno, "np.load(allow_pickle=...)"))
    return found


def test_scanner_catches_each_door():
    src = ("from sympy import S\neval(s)\nexec(s)\nsp.sympify(s)\nsympify(s)\nS(s)\nparse_expr(s)\n"
           "pickle.loads(b)\nnp.load(p, allow_pickle=True)\n__import__(s)\nsp.S(s)\n")
    assert len(_forbidden(ast.parse(src))) == 10
    assert _forbidden(ast.parse("np.load(p, allow_pickle=False)\nre.compile(s)\njson.loads(s)\nS = sp.sin\nS(x)\n")) == []


def test_flowkit_source_has_no_door_from_text_to_code():
    bad = []
    for path in sorted((ROOT / "flowkit").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        bad += [f"{path.relative_to(ROOT)}:{line}: {what}" for line, what in _forbidden(tree)]
    assert not bad, "text would reach code through:\n" + "\n".join(bad)
