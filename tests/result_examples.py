"""Registry of small, real instances of every result type, for the one protocol test.

Each area keeps its factories in ``tests/examples_<area>.py``::

    from result_examples import example

    @example("Section")
    def small_section():
        return flowkit.poincare_section(...)   # a real, quick computation (< 2 s after compile)

``tests/test_result_protocol.py`` imports every ``examples_*.py`` and checks that
each kind in :data:`flowkit.results.KINDS` has a factory, then saves each instance
in every format and reloads it with :func:`flowkit.load`.
"""

from __future__ import annotations

from typing import Callable

EXAMPLES: dict[str, Callable] = {}


def example(kind: str):
    """Register a factory returning a small real instance of result ``kind``."""

    def deco(fn):
        EXAMPLES[kind] = fn
        return fn

    return deco
