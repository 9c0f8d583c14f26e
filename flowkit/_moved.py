"""Old module paths that still import, with a DeprecationWarning naming the new place.

Before the layout by stage, the analyses were root modules (``flowkit.lyapunov``,
``flowkit.stretching``, ...). Importing one of those names now returns the package
that holds its public names, so ``from flowkit.stretching import stretch`` keeps
working. New code imports from the packages (or the top-level ``flowkit.*`` names).
"""

from __future__ import annotations

import importlib
import importlib.abc
import importlib.machinery
import sys
import warnings

#: old module -> module that now exports its public names
MOVED = {
    "flowkit.lyapunov": "flowkit.chaos",
    "flowkit.ftle": "flowkit.chaos",
    "flowkit.stretching": "flowkit.fields",
    "flowkit.lines": "flowkit.fields",
    "flowkit.flux": "flowkit.fields",
    "flowkit.maps": "flowkit.flows.map_presets",
}


class _Alias(importlib.abc.MetaPathFinder, importlib.abc.Loader):
    def find_spec(self, name, path=None, target=None):
        if name not in MOVED:
            return None
        return importlib.machinery.ModuleSpec(name, self)

    def create_module(self, spec):
        return None  # a plain new module, filled in below

    def exec_module(self, module):
        new = MOVED[module.__name__]
        warnings.warn(f"{module.__name__} moved: import from {new} (or the top-level flowkit names) instead",
                      DeprecationWarning, stacklevel=2)
        target = importlib.import_module(new)
        module.__doc__ = f"Moved to {new}; this alias forwards every name there."
        module.__getattr__ = lambda name: getattr(target, name)
        module.__all__ = list(getattr(target, "__all__", ()))


def install() -> None:
    """Put the alias finder on ``sys.meta_path`` (once)."""
    if not any(isinstance(f, _Alias) for f in sys.meta_path):
        sys.meta_path.append(_Alias())
