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
