"""Argument helpers shared by subcommands."""

from __future__ import annotations

import argparse

from flowkit.errors import FlowkitError
from flowkit.validation import parse_vector  # noqa: F401  (re-exported for subcommands)


def add_flow_args(parser: argparse.ArgumentParser) -> None:
    """The positional FLOW name and repeatable ``--set NAME=VALUE``."""
    parser.add_argument("flow", metavar="FLOW", help="preset name (see `flowkit flows`)")
    parser.add_argument(
        "--set", dest="params", action="append", default=[], metavar="NAME=VALUE",
        help="set a flow parameter (repeatable), e.g. --set rotation=0.3",
    )


def add_max_seconds(parser: argparse.ArgumentParser) -> None:
    """``--max-seconds S``: a wall-clock budget, checked between chunks (the result is then partial)."""
    parser.add_argument("--max-seconds", type=float, default=None, metavar="S",
                        help="wall-clock budget: stop between chunks after S seconds and report the finished "
                             "part, flagged partial (a progress bar shows on stderr once a run passes 2 s)")


def parse_params(items: list[str]) -> dict[str, float]:
    """Turn ``["a=1", "b=2.5"]`` into ``{"a": 1.0, "b": 2.5}`` with clear errors."""
    out = {}
    for item in items:
        name, sep, value = item.partition("=")
        if not sep or not name.strip():
            raise FlowkitError(f"--set expects NAME=VALUE, e.g. --set rotation=0.3; got {item!r}")
        try:
            out[name.strip()] = float(value)
        except ValueError:
            raise FlowkitError(f"--set {name.strip()}: {value!r} is not a number") from None
    return out


def flow_from_args(args):
    """The flow named on the command line, with its ``--set`` parameters."""
    from flowkit.flows import flow

    return flow(args.flow, **parse_params(args.params))


# -- fail before computing -----------------------------------------------------------------
def plot_formats() -> tuple[str, ...]:
    """Image suffixes matplotlib can write (from its canvas, so it matches the installed version)."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.figure import Figure

    return tuple(f".{k}" for k in sorted(Figure().canvas.get_supported_filetypes()))


def check_output(path, option: str, kind: str = "result"):
    """Check an output option before the work starts; ``kind`` is "result", "plot" or "store".

    The message names the option and the fix (e.g. ``mkdir -p`` for a missing folder).
    """
    from pathlib import Path

    from flowkit.validation import RESULT_FORMATS, output_path

    if path is None:
        return None
    if kind == "store":
        p = Path(path).expanduser()
        if p.exists() and not p.is_dir():
            raise FlowkitError(f"{option} {str(p)!r} is a file; give a folder for the sweep store")
        parent = p.parent if str(p.parent) else Path(".")
        if not parent.is_dir():
            raise FlowkitError(f"{option}: folder {str(parent)!r} does not exist; create it with "
                               f"mkdir -p {parent} (or choose another path)")
        import os

        if not os.access(p if p.exists() else parent, os.W_OK):
            raise FlowkitError(f"{option}: {str(p if p.exists() else parent)!r} is not writable; choose another path")
        return p
    formats = plot_formats() if kind == "plot" else RESULT_FORMATS
    try:
        return output_path(path, option, formats)
    except FlowkitError as exc:
        text = str(exc).replace(f"`{option}`", option)
        if "does not exist" in text:
            folder = Path(path).expanduser().parent
            text = (f"{option}: folder {str(folder)!r} does not exist; create it with mkdir -p {folder} "
                    "(or choose another path)")
        raise FlowkitError(text) from None


#: Output options of any subcommand: (attribute, kind), checked by ``main`` before ``run``.
OUTPUT_OPTIONS = (("out", "result"), ("save", "result"), ("plot", "plot"), ("store", "store"))


def check_outputs(args, *options: tuple[str, str]) -> None:
    """``check_output`` for each ``(attribute, kind)`` the subcommand has, named as its ``--option``."""
    for attr, kind in options:
        value = getattr(args, attr, None)
        if value is not None:
            check_output(value, "--" + attr.replace("_", "-"), kind)


def save_figure(fig, path: str, **kw) -> str:
    """``fig.savefig`` through the atomic writer: a failed write falls back to a folder it names."""
    from pathlib import Path

    from flowkit.results.files import write_safely

    fmt = Path(path).suffix.lstrip(".").lower() or None
    return str(write_safely(Path(path), lambda p: fig.savefig(p, format=fmt, **kw)))


# -- a misspelled option or subcommand gets a suggestion -------------------------------------
class SuggestingParser(argparse.ArgumentParser):
    """``ArgumentParser`` whose errors suggest the nearest valid option or subcommand.

    (Python 3.14 has ``suggest_on_error``; 3.11 does not.) Errors still print the
    usage line to stderr and exit with status 2, never a traceback.
    """

    def parse_known_args(self, args=None, namespace=None):
        import sys

        self._seen = list(sys.argv[1:] if args is None else args)
        return super().parse_known_args(args, namespace)

    def _candidates(self) -> list[str]:
        """Option strings of this parser and of the subcommand named on the command line."""
        opts = list(self._option_string_actions)
        seen = getattr(self, "_seen", [])
        for action in self._actions:
            if isinstance(action, argparse._SubParsersAction):
                for tok in seen:
                    if tok in action.choices:
                        opts += list(action.choices[tok]._option_string_actions)
                        break
        return opts

    def error(self, message: str):
        import difflib
        import re

        hint = ""
        bad = re.search(r"invalid choice: '([^']*)' \(choose from (.*)\)", message)
        if bad:
            choices = re.findall(r"'([^']*)'", bad.group(2))
            close = difflib.get_close_matches(bad.group(1), choices, n=1, cutoff=0.5)
            if close:
                hint = f"; did you mean '{close[0]}'?"
        else:  # unrecognized or missing options: look for a misspelled one among the arguments given
            options = self._candidates()
            for tok in getattr(self, "_seen", []):
                name = tok.split("=", 1)[0]
                if name.startswith("-") and name not in options and not _is_number(name):
                    close = difflib.get_close_matches(name, options, n=1, cutoff=0.6)
                    if close:
                        hint = f"; did you mean {close[0]} (not {name})?"
                        break
        super().error(message + hint)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
