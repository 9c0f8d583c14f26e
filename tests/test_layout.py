"""The layout by stage: small modules, no import cycle between packages.

The import graph is read with ``ast`` from every ``flowkit/**.py`` (module-level
and function-level imports alike; imports under ``if TYPE_CHECKING:`` only serve
annotations and are left out), collapsed to packages (``flowkit.chaos``,
``flowkit.flows``, ...; a root module such as ``flowkit.validation`` is its own
node), and searched for strongly connected components (Tarjan's algorithm).
"""

from __future__ import annotations

import ast
from collections import defaultdict
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1] / "flowkit"
MAX_LINES = 400
#: The package root re-exports the stable top-level names lazily; it is the
#: front door, not a stage, so edges into it (``from flowkit import flow``) are
#: read as edges into the module that defines the name, via _LAZY or flows.
_FRONT_DOOR = "flowkit"


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _node(module: str) -> str:
    """Collapse a module to its package (``flowkit.chaos.ftle`` -> ``flowkit.chaos``)."""
    return ".".join(module.split(".")[:2])


def _is_type_checking(test: ast.expr) -> bool:
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or \
        (isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING")


def _imports(tree: ast.AST, module: str, is_package: bool):
    """(imported module, line) for every import outside ``if TYPE_CHECKING:`` blocks."""
    skip = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and _is_type_checking(node.test):
            for sub in node.body:
                skip.update(id(n) for n in ast.walk(sub))
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name, node.lineno
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = module.split(".")
                base = base[: len(base) - node.level + (1 if is_package else 0)]
                name = ".".join(base + ([node.module] if node.module else []))
            else:
                name = node.module or ""
            if name == _FRONT_DOOR:  # `from flowkit import x`: x is a submodule or a re-exported name
                for alias in node.names:
                    yield f"flowkit.{alias.name}", node.lineno
            else:
                yield name, node.lineno


def _lazy_table() -> dict[str, str]:
    """flowkit/__init__.py's _LAZY: name -> module, read as data."""
    tree = ast.parse((ROOT / "__init__.py").read_text())
    for node in tree.body:
        if isinstance(node, ast.Assign) and any(getattr(t, "id", "") == "_LAZY" for t in node.targets):
            return ast.literal_eval(node.value)
    return {}


def package_graph() -> dict[str, dict[str, list[str]]]:
    """package -> imported package -> ["module:line -> imported", ...] (flowkit-internal, across packages)."""
    lazy = _lazy_table()
    graph: dict[str, dict[str, list[str]]] = defaultdict(lambda: defaultdict(list))
    for path in sorted(ROOT.rglob("*.py")):
        module = _module_name(path)
        tree = ast.parse(path.read_text(), filename=str(path))
        for name, line in _imports(tree, module, path.name == "__init__.py"):
            if not name.startswith("flowkit."):
                continue
            leaf = name.split(".", 1)[1]
            if "." not in leaf and not (ROOT / f"{leaf}.py").exists() and not (ROOT / leaf).is_dir():
                name = lazy.get(leaf, "flowkit.flows")  # a re-exported top-level name
            src, dst = _node(module), _node(name)
            if module == _FRONT_DOOR or src == dst:
                continue
            graph[src][dst].append(f"{module}:{line} -> {name}")
    return graph


def cycles(graph) -> list[list[str]]:
    """Strongly connected components with more than one package (Tarjan)."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph.get(v, {}):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(set(graph) | {w for d in graph.values() for w in d}):
        if v not in index:
            visit(v)
    return out


def test_no_import_cycle_between_packages():
    graph = package_graph()
    found = cycles(graph)
    report = []
    for comp in found:
        report.append(" <-> ".join(comp))
        for a in comp:
            for b in comp:
                if b in graph.get(a, {}):
                    report.append(f"    {a} -> {b}: {graph[a][b][:3]}")
    assert not found, "import cycles between packages:\n" + "\n".join(report)


def test_cycle_finder_finds_a_planted_cycle():
    # the check must be able to fail: a -> b -> c -> a is one component, d hangs off it
    graph = {"a": {"b": []}, "b": {"c": []}, "c": {"a": [], "d": []}, "d": {}}
    assert cycles(graph) == [["a", "b", "c"]]
    assert cycles({"a": {"b": []}, "b": {}}) == []


def test_modules_are_small():
    too_long = []
    for path in sorted(ROOT.rglob("*.py")):
        text = path.read_text()
        if "flowkit:generated" in text[:500]:  # generated code is exempt
            continue
        n = text.count("\n")
        if n > MAX_LINES:
            too_long.append(f"{path.relative_to(ROOT.parent)}: {n} lines")
    assert not too_long, f"modules over {MAX_LINES} lines (split them by idea):\n" + "\n".join(too_long)


def test_old_module_paths_still_import():
    import importlib
    import warnings

    from flowkit._moved import MOVED

    for old, new in MOVED.items():
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            mod = importlib.import_module(old)
        target = importlib.import_module(new)
        assert any(issubclass(w.category, DeprecationWarning) and new in str(w.message) for w in caught) or \
            old in __import__("sys").modules
        for name in getattr(target, "__all__", ()):
            assert getattr(mod, name) is getattr(target, name)


# -- the command line prints what the results say -------------------------------------
def _cli_json(capsys, *argv) -> dict:
    import json

    from flowkit.cli import main

    assert main([*argv, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def assert_cli_matches_summary(cli: dict, summary: dict, skip=("seconds",)):
    """Every key of the result's summary appears in the CLI output with the same value (timings aside)."""
    import json

    summary = json.loads(json.dumps(summary))
    compared = 0
    for k, v in summary.items():
        if k in skip:
            continue
        assert k in cli, f"--json lacks summary key {k!r}"
        assert cli[k] == v, f"--json {k!r}: {cli[k]!r} vs summary {v!r}"
        compared += 1
    assert compared >= 3, f"only {compared} summary keys compared: the check would prove nothing"


def test_cli_json_is_the_result_summary(capsys, tmp_path):
    # the same deterministic computation through the API and the command line
    import flowkit
    from flowkit.sections.geometry import coordinate_plane

    spec = flowkit.lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], 4.0, blocks=4)
    assert len(spec.summary()["exponents"]) == 3  # the Lorenz system has three exponents
    assert_cli_matches_summary(_cli_json(capsys, "lyapunov", "lorenz", "--point", "1,1,20", "--time", "4", "--blocks", "4"),
          spec.summary())
    seeds = tmp_path / "seeds.txt"
    seeds.write_text("1.0 2.0 0.5\n2.5 0.5 1.0\n")
    sec = flowkit.poincare_section(flowkit.flow("abc"), [[1.0, 2.0, 0.5], [2.5, 0.5, 1.0]], crossings=5,
                                   plane=coordinate_plane("y", 0.0, "+"))  # the CLI draws y = 0 in (x, z)
    assert_cli_matches_summary(_cli_json(capsys, "section", "abc", "--seed-file", str(seeds), "--crossings", "5", "--normal", "0,1,0",
                    "--direction", "+"), sec.summary())
