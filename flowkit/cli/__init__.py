"""The ``flowkit`` command line.

Each subcommand lives in its own module in this package with two functions:
``add(subparsers)`` registers its parser and ``run(args) -> dict`` does the work
and returns a JSON-ready result. With ``--json`` the result is printed as one JSON
object on stdout; otherwise ``human(result)`` (if the module has one) or a plain
key: value listing is printed. Errors print ``{"error": ...}`` with ``--json``
(message on stderr otherwise) and exit with status 2.
"""

from __future__ import annotations

import argparse
import importlib
import json
import sys

from flowkit.errors import FlowkitError

#: Subcommand modules, in the order shown by ``flowkit --help``.
COMMANDS = ["flows", "describe", "check", "section", "periodic", "lyapunov", "ftle", "stretch", "dynamo", "loop", "sweep", "cache"]


def _jsonable(obj):
    """JSON-ready copy of a command's result (NaN and infinities become null)."""
    from flowkit.results.encoding import plain

    return plain(obj)


def _plain(result: dict, indent: str = "") -> str:
    lines = []
    for key, val in result.items():
        if isinstance(val, dict):
            lines.append(f"{indent}{key}:")
            lines.append(_plain(val, indent + "  "))
        else:
            lines.append(f"{indent}{key}: {val}")
    return "\n".join(lines)


def build_parser() -> tuple[argparse.ArgumentParser, dict]:
    from flowkit.cli.common import SuggestingParser

    parser = SuggestingParser(
        prog="flowkit",
        description="flowkit: chaotic flows and kinematic dynamos. Every subcommand takes --json.",
    )
    from flowkit._version import __version__

    parser.add_argument("--version", action="version", version=f"flowkit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    modules = {}
    for name in COMMANDS:
        mod = importlib.import_module(f"flowkit.cli.{name}")
        p = mod.add(sub)
        p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
        modules[p.prog.split()[-1]] = mod
    return parser, modules


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``flowkit`` command."""
    parser, modules = build_parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    mod = modules[args.command]
    try:
        from flowkit.cli.common import OUTPUT_OPTIONS, check_outputs

        check_outputs(args, *OUTPUT_OPTIONS)  # before any work: a bad path must not cost a finished result
        result = _jsonable(mod.run(args))
    except FlowkitError as exc:
        if args.json:
            print(json.dumps({"error": str(exc)}))
        else:
            print(f"flowkit {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"flowkit {args.command}: interrupted", file=sys.stderr)
        return 130
    if args.json:
        print(json.dumps(result))
    else:
        human = getattr(mod, "human", None)
        print(human(result) if human else _plain(result))
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
