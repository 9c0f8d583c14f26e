"""What a sweep computes: a flow, the parameters varied over a grid, the measures."""

from __future__ import annotations

import hashlib
import itertools
import json
import math
from dataclasses import asdict, dataclass, field

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.validation import memory

#: Keys of a sweep spec as stored in manifests and task payloads.
SPEC_KEYS = ("flow", "axes", "measures", "base", "options", "seed")


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
            if not (math.isfinite(start) and math.isfinite(stop)):
                raise ValueError
        else:
            values = [float(v) for v in rng.split(",") if v.strip()]
    except ValueError:
        raise FlowkitError(f"--vary {name}: {rng!r} is not START:STOP:COUNT or a comma-separated list") from None
    if ":" in rng:
        memory(count * 64.0, f"--vary {name} COUNT", per_unit=64.0, value=count)  # a float in a list
        values = np.linspace(start, stop, count).tolist() if count > 0 else []
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

    @classmethod
    def from_dict(cls, data, where: str = "sweep spec") -> "SweepSpec":
        """A spec from stored data (a manifest, a task payload): unknown keys and types are refused."""
        if isinstance(data, SweepSpec):
            return data
        if not isinstance(data, dict):
            raise FlowkitError(f"{where}: a sweep spec must be a mapping; got {type(data).__name__}")
        for key in data:
            if key not in SPEC_KEYS:
                raise FlowkitError(f"{where}: unknown key {key!r} in the sweep spec; allowed: {', '.join(SPEC_KEYS)}")
        for key in ("flow", "axes", "measures"):
            if key not in data:
                raise FlowkitError(f"{where}: the sweep spec lacks key {key!r}")
        return cls(**data, where=where)

    where: str = field(default="sweep spec", repr=False, compare=False)

    def __post_init__(self):
        from flowkit.flows.recipes import check_params
        from flowkit.flows.registry import rebuild_flow
        from flowkit.sweep.measures import MEASURES

        where = self.where
        _check_types(self, where)
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
        self.base = check_params(self.base, f"{where}: key 'base'")
        n = math.prod(len(v) for v in self.axes.values())
        per_point = 400.0 + 32.0 * len(self.measures)  # a parameter dict, a record and the assembled arrays
        memory(n * per_point, "sweep points", per_unit=per_point, value=n)
        for k, vals in self.axes.items():
            if not vals:
                raise FlowkitError(f"the range of '{k}' is empty")
            if not all(math.isfinite(v) for v in vals):
                raise FlowkitError(f"the range of '{k}' contains non-finite values")
        for m, opts in self.options.items():
            _check_options(m, opts, MEASURES[m], where)
        flow = rebuild_flow(self.flow, dict(self.base), f"{where}: key 'flow'")  # validates flow and fixed parameters
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
        out = asdict(self)
        out.pop("where")
        return out

    def fingerprint(self) -> str:
        """Hash of everything that determines the numbers (not of how they are run)."""
        text = json.dumps(self.as_dict(), sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()


def _check_types(spec: SweepSpec, where: str) -> None:
    """Refuse stored values of the wrong type, naming the key."""
    def bad(key, what, value):
        text = repr(value)
        raise FlowkitError(f"{where}: key {key!r} must be {what}; got {text[:80]}")

    if not isinstance(spec.axes, dict) or not all(
            isinstance(k, str) and isinstance(v, (list, tuple)) and all(_number(x) for x in v)
            for k, v in spec.axes.items()):
        bad("axes", "a mapping of parameter names to lists of numbers", spec.axes)
    if not isinstance(spec.measures, (list, tuple)) or not all(isinstance(m, str) for m in spec.measures):
        bad("measures", "a list of measure names", spec.measures)
    spec.measures = list(spec.measures)
    if not isinstance(spec.base, dict):
        bad("base", "a mapping of parameter names to numbers", spec.base)
    if not isinstance(spec.options, dict) or not all(isinstance(k, str) and isinstance(v, dict)
                                                     for k, v in spec.options.items()):
        bad("options", "a mapping {measure: {option: value}}", spec.options)
    if isinstance(spec.seed, bool) or not isinstance(spec.seed, (int, np.integer)) or spec.seed < 0:
        bad("seed", "a non-negative integer", spec.seed)
    spec.seed = int(spec.seed)


def _number(x) -> bool:
    return isinstance(x, (int, float, np.integer, np.floating)) and not isinstance(x, bool)


def _check_options(measure: str, opts: dict, fn, where: str) -> None:
    """Options must be keyword arguments the measure takes, with plain JSON values."""
    import inspect

    allowed = [n for n in inspect.signature(fn).parameters if n not in ("flow", "seed")]
    for name, value in opts.items():
        if name not in allowed:
            raise FlowkitError(f"{where}: measure '{measure}' has no option {name!r}; its options are: "
                               f"{', '.join(allowed) or '(none)'}")
        if not (value is None or isinstance(value, (bool, int, float, str))):
            raise FlowkitError(f"{where}: option {measure}.{name} must be a number, text or true/false; "
                               f"got {type(value).__name__}")
