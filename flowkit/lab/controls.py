"""Small pieces the explorers share: debouncing, parameter sliders, quick mode.

Debouncing
----------
A slider with ``continuous_update=True`` sends a value every few milliseconds
while it is dragged; computing a full result for each one makes the kernel fall
behind and the widget feel stuck. :class:`Debouncer` coalesces calls on the
running asyncio loop (the one ipykernel runs):

* ``mode="throttle"`` runs at most once per ``delay`` seconds, always with the
  latest arguments (the quick preview while dragging);
* ``mode="debounce"`` runs once, ``delay`` seconds after the last trigger (the
  full result when the slider has been released and stays put).

Without a running loop (plain scripts, unit tests) a throttled call runs at
once and a debounced call waits for :meth:`Debouncer.flush`, so both paths can
be driven step by step.
"""

from __future__ import annotations

import asyncio
import math
import os
from typing import Callable

from flowkit.errors import FlowkitError

#: Slider ranges (low, high, step) of preset parameters; others get default +- max(1, |default|).
PARAM_RANGES: dict[str, dict[str, tuple[float, float, float]]] = {
    "stf": {"rotation": (-2.0, 2.0, 0.01)},
    "hill": {"strength": (0.1, 3.0, 0.01), "swirl": (0.0, 3.0, 0.01)},
    "abc": {"A": (0.0, 2.0, 0.01), "B": (0.0, 2.0, 0.01), "C": (0.0, 2.0, 0.01)},
    "roberts": {"B": (0.0, 2.0, 0.01), "C": (0.0, 2.0, 0.01)},
    "circular": {"epsilon": (0.0, 2.0, 0.01), "omega": (0.1, 3.0, 0.01)},
}


#: Section-plane normal of presets whose orbits never cross the usual default (y in the ball,
#: z in the box): Hill's vortex without swirl keeps each orbit in its meridional plane.
DEFAULT_NORMALS = {"hill": "z"}


def quick() -> bool:
    """True when ``FLOWKIT_QUICK=1``: notebooks and gallery scripts shrink their sizes (CI)."""
    return os.environ.get("FLOWKIT_QUICK", "") not in ("", "0")


def param_range(flow_name: str, param: str, default: float) -> tuple[float, float, float]:
    """(low, high, step) for a parameter slider; always contains ``default``."""
    lo, hi, step = PARAM_RANGES.get(flow_name, {}).get(param, (math.nan, math.nan, math.nan))
    if not math.isfinite(lo):
        half = max(1.0, abs(default))
        lo, hi, step = default - half, default + half, half / 100
    return min(lo, default), max(hi, default), step


def param_sliders(flow, on_change: Callable | None = None) -> dict:
    """One continuously updating ``FloatSlider`` per parameter of ``flow``, keyed by name."""
    import ipywidgets as w

    sliders = {}
    for name, value in flow.param_dict.items():
        lo, hi, step = param_range(flow.name, name, value)
        s = w.FloatSlider(value=value, min=lo, max=hi, step=step, description=name, continuous_update=True,
                          readout_format=".3f", style={"description_width": "initial"},
                          layout=w.Layout(width="95%"))
        if on_change is not None:
            s.observe(on_change, names="value")
        sliders[name] = s
    return sliders


def log_slider(value: float, low: float, high: float, step: float, description: str):
    """A ``FloatLogSlider`` (base 10) whose grid of exponents passes through ``value`` itself.

    The browser snaps a log slider's exponent to ``min + k * step``; with ``min`` on that
    grid through log10(value) the starting value stays as given (5.0 stays 5.0 instead
    of becoming 10**0.70 = 5.01 and triggering a recomputation). ``low``/``high`` bound
    the exponent range (powers of ten), widened by at most one step to fit the grid.
    """
    import ipywidgets as w

    e = math.log10(value)
    lo = e - math.floor((e - low) / step + 1e-9) * step
    hi = e + math.floor((high - e) / step + 1e-9) * step
    return w.FloatLogSlider(value=value, base=10, min=lo, max=hi, step=step, description=description,
                            continuous_update=True, layout=w.Layout(width="95%"))


def moved(change, rel: float = 1e-9) -> bool:
    """Whether a slider's value change is a real move (not the browser re-sending a rounded value)."""
    old, new = change.get("old"), change.get("new")
    if not isinstance(old, (int, float)) or not isinstance(new, (int, float)):
        return True
    owner = change.get("owner")
    # a linear slider's echo can turn 0.0 into 2.2e-16: compare with its step too
    step = 0.0 if owner is None or "Log" in type(owner).__name__ else float(getattr(owner, "step", 0.0) or 0.0)
    return abs(new - old) > max(rel * max(abs(old), abs(new)), 1e-6 * step)


class Debouncer:
    """Coalesce rapid calls of ``fn`` (see the module notes for the two modes).

    Parameters
    ----------
    delay : float
        Seconds: the throttle interval, or the quiet time before a debounced call.
    fn : callable
        Called with the arguments of the latest :meth:`trigger`.
    mode : {"throttle", "debounce"}
    """

    def __init__(self, delay: float, fn: Callable, mode: str = "debounce"):
        if mode not in ("throttle", "debounce"):
            raise FlowkitError(f"`mode` must be 'throttle' or 'debounce'; got {mode!r}")
        if not (delay >= 0 and math.isfinite(delay)):
            raise FlowkitError(f"`delay` must be a non-negative number of seconds; got {delay!r}")
        self.delay = float(delay)
        self.fn = fn
        self.mode = mode
        self._args: tuple = ()
        self._pending = False
        self._handle = None

    @property
    def pending(self) -> bool:
        """True while a call is waiting (for its timer, or for :meth:`flush`)."""
        return self._pending

    def trigger(self, *args) -> None:
        """Ask for a call with ``args`` (the latest arguments win)."""
        self._args = args
        self._pending = True
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:  # no event loop: throttled calls run now, debounced ones wait for flush()
            if self.mode == "throttle":
                self.flush()
            return
        if self.mode == "debounce" and self._handle is not None:
            self._handle.cancel()
            self._handle = None
        if self._handle is None:
            self._handle = loop.call_later(self.delay, self._fire)

    def cancel(self) -> None:
        """Drop a waiting call."""
        if self._handle is not None:
            self._handle.cancel()
        self._handle = None
        self._pending = False

    def flush(self) -> bool:
        """Run a waiting call now; return whether one ran."""
        if self._handle is not None:
            self._handle.cancel()
            self._handle = None
        if not self._pending:
            return False
        self._fire()
        return True

    def _fire(self) -> None:
        self._handle = None
        self._pending = False
        self.fn(*self._args)


#: Crossing directions offered by the section explorer: (label on the button, Plane direction).
DIRECTION_CHOICES = (("+", "+"), ("−", "-"), ("both", "both"))
#: Default crossing direction of every section a user draws (explorer, CLI, headless figure):
#: all crossings, so the whole trace of each orbit shows and a clicked seed appears where it was clicked.
DEFAULT_DIRECTION = "both"
#: In-plane axes (horizontal, vertical) of the coordinate planes: the other two coordinates in order.
from flowkit.sections.geometry import PLANE_AXES, coordinate_plane  # noqa: E402,F401  (re-exported for the lab)


def direction_text(axis: str, direction: str) -> str:
    """What a crossing direction keeps, in words, e.g. 'crossings: both directions'."""
    if direction == "both":
        return "crossings: both directions"
    return f"crossings: {axis} {'increasing' if direction == '+' else 'decreasing'} ({direction})"


class PlaneControls:
    """A normal picker (x, y, z), an offset slider whose range follows the flow's domain and,
    with ``direction=True``, a crossing-direction picker (+, −, both)."""

    def __init__(self, direction: bool = False):
        import ipywidgets as w

        self.normal = w.ToggleButtons(options=["x", "y", "z"], description="normal", style={"button_width": "40px"},
                                      tooltips=["plane x = offset", "plane y = offset", "plane z = offset"])
        self.offset = w.FloatSlider(description="offset", continuous_update=True, readout_format=".3f",
                                    layout=w.Layout(width="95%"))
        self.direction = None
        if direction:
            self.direction = w.ToggleButtons(
                options=list(DIRECTION_CHOICES), value=DEFAULT_DIRECTION, description="direction",
                tooltips=["only where the normal coordinate increases", "only where it decreases",
                          "every crossing (default)"], style={"button_width": "58px"})

    @property
    def widgets(self) -> list:
        return [self.normal, self.offset] + ([self.direction] if self.direction is not None else [])

    def observe(self, handler: Callable) -> None:
        for widget in self.widgets:
            widget.observe(handler, names="value")

    def reset(self, flow, normal: str | None, offset: float, direction: str | None = None) -> None:
        """Fit the offset range to ``flow``'s domain, then set ``normal`` (and ``direction``).

        Default normal: :data:`DEFAULT_NORMALS` for the presets listed there, else
        y in the unit ball and z in the periodic box.
        """
        if flow.domain == "ball":
            lo, hi = -0.9, 0.9
        elif flow.domain == "periodic":
            lo, hi = 0.0, 2 * math.pi
        else:
            lo, hi = -5.0, 5.0
        s = self.offset
        with s.hold_trait_notifications():
            s.min, s.max = min(lo, -abs(offset)) - 1, max(hi, abs(offset)) + 1  # never clamp on the way
            s.value = min(max(float(offset), lo), hi)
            s.min, s.max, s.step = lo, hi, (hi - lo) / 200
        self.normal.value = normal or DEFAULT_NORMALS.get(flow.name) or ("y" if flow.domain == "ball" else "z")
        if self.direction is not None:
            self.direction.value = direction or DEFAULT_DIRECTION
