"""What a sweep computes: a flow, the parameters varied over a grid, the measures."""

from __future__ import annotations

import hashlib
import itertools
import json
import math
from dataclasses import asdict, dataclass, field

import numpy as np

from flowkit.errors import FlowkitError


def parse_range(text: str) -> tuple[str, list[float]]:
    """``"rotation=0:1:11"`` -> ("rotation", 11 values from 0 to 1); ``"a=0.1,0.5"`` -> a list."""
    name, sep, rng = text.partition("=")
    if not sep or not name.strip():
        raise FlowkitError(f"--vary expects NAME=START:STOP:COUNT or NAME=V1,V2,...; got {text!r}")
    name = name.strip()
    try:
        if ":" in rng:
            parts = rng.split(":")
            if len(parts) != 3:
                raise ValueError
            start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
            values = np.linspace(start, stop, count).tolist() if count > 0 else []
        else:
            values = [float(v) for v in rng.split(",") if v.strip()]
    except ValueError:
        raise FlowkitError(f"--vary {name}: {rng!r} is not START:STOP:COUNT or a comma-separated list") from None
    if not values:
        raise FlowkitError(f"--vary {name}: the range is empty; give COUNT >= 1 or at least one value")
    return name, values


@dataclass
class SweepSpec:
    """A parameter sweep.

    Parameters
    ----------
    flow : dict
        Recipe of the flow (``{"preset": name}``, see ``flow.family.structure["recipe"]``).
    base : dict
        Parameter values held fixed.
    axes : dict
        ``{parameter: [values, ...]}``; points are the Cartesian product in
        C order (the last axis varies fastest).
    measures : list of str
        Names from :data:`flowkit.sweep.measures.MEASURES`.
    options : dict
        Per-measure keyword options, ``{measure: {option: value}}``.
    seed : int
        Base random seed; point ``i`` uses ``seed + i`` so results do not depend on
        how points are grouped into tasks or which backend runs them.
    """

    flow: dict
    axes: dict
    measures: list
    base: dict = field(default_factory=dict)
    options: dict = field(default_factory=dict)
    seed: int = 0

    def __post_init__(self):
        from flowkit.flows.registry import rebuild_flow
        from flowkit.sweep.measures import MEASURES

        if not self.axes:
            raise FlowkitError("a sweep needs at least one varied parameter (--vary NAME=START:STOP:COUNT)")
        if not self.measures:
            raise FlowkitError(f"a sweep needs at least one measure; available: {', '.join(sorted(MEASURES))}")
        for m in self.measures:
            if m not in MEASURES:
                raise FlowkitError(f"unknown measure '{m}'; available: {', '.join(sorted(MEASURES))}")
        for m in self.options:
            if m not in self.measures:
                raise FlowkitError(f"options given for measure '{m}', which the sweep does not compute")
        self.axes = {str(k): [float(v) for v in vals] for k, vals in self.axes.items()}
        for k, vals in self.axes.items():
            if not vals:
                raise FlowkitError(f"the range of '{k}' is empty")
            if not all(math.isfinite(v) for v in vals):
                raise FlowkitError(f"the range of '{k}' contains non-finite values")
        flow = rebuild_flow(self.flow, dict(self.base))  # validates the flow and the fixed parameters
        known = set(flow.param_dict)
        for k in self.axes:
            if k not in known:
                raise FlowkitError(
                    f"flow '{flow.name}' has no parameter '{k}' to vary; its parameters are: {', '.join(sorted(known))}"
                )

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(len(v) for v in self.axes.values())

    def points(self) -> list[dict[str, float]]:
        """Parameter dicts of every point, in sweep order."""
        names = list(self.axes)
        return [dict(zip(names, combo)) for combo in itertools.product(*self.axes.values())]

    def as_dict(self) -> dict:
        return asdict(self)

    def fingerprint(self) -> str:
        """Hash of everything that determines the numbers (not of how they are run)."""
        text = json.dumps(self.as_dict(), sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()
