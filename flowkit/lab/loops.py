"""The loop explorer: a closed ribbon carried through a flow; its writhe, twist and linking as time moves.

The curves are those of :func:`flowkit.topology.material_ribbon`: Wr(t), Tw(t) and
Lk(t) of the flow's default loop (a tilted circle with an in-plane normal), and the
loop itself at the end time in 3-D. The explorer keeps one artist per curve and
updates it (``set_data``, ``set_data_3d``); while a slider moves it follows a
coarser loop over fewer passes.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.lab.base import EXPLORER_PRESETS, Explorer
from flowkit.lab.controls import log_slider, moved


class LoopExplorer(Explorer):
    """A closed material ribbon in a flow: the loop, and Wr, Tw, Lk up to the time on the slider.

    Parameters
    ----------
    flow : str or Flow
        Preset name or your own flow (ball or periodic box).
    params : dict, optional
        Starting parameter values.
    time : float
        End time of the run (the slider).
    passes : int
        Insertion passes and records of the full run (the preview uses 4).
    max_points : int
        Point budget of the full run (the preview uses a tenth).
    **kw
        ``presets``, ``figsize``, ``export_dir``, ``delays``: see :class:`~flowkit.lab.base.Explorer`.
    """

    kind = "loop"

    def __init__(self, flow="stf", *, params=None, time: float = 2.0, passes: int = 12, max_points: int = 20_000,
                 presets=EXPLORER_PRESETS, figsize=(5.6, 3.4), **kw):
        for name, val in (("passes", passes), ("max_points", max_points)):
            if not (isinstance(val, (int, np.integer)) and val >= 1):
                raise FlowkitError(f"`{name}` must be a positive integer; got {val!r}")
        if not (math.isfinite(time) and time > 0):
            raise FlowkitError(f"`time` must be a positive number; got {time!r}")
        self.passes = int(passes)
        self.max_points = int(max_points)
        self.time_slider = log_slider(float(time), -1, 1.3, 0.02, "T")
        import ipywidgets as w

        # time-periodic flows: record once per period (T rounded to whole periods)
        self.per_period = w.Checkbox(value=False, description="per period", indent=False)
        super().__init__(flow, params=params, presets=presets, figsize=figsize, **kw)
        self.time_slider.observe(lambda c: self.changed() if moved(c) else None, names="value")
        self.per_period.observe(lambda c: self.changed(), names="value")
        self._flow_changed()

    def _extra_controls(self) -> list:
        return [self.time_slider, self.per_period]

    def _flow_changed(self) -> None:
        self.result = None
        if hasattr(self, "per_period"):
            self.per_period.disabled = getattr(getattr(self, "flow", None), "period", None) is None

    # -- computing ------------------------------------------------------------------------
    def _ribbon(self, flow: Flow, time: float, passes: int, max_points: int, coarse: bool):
        from flowkit.topology import material_ribbon

        size = 2.0 if flow.domain == "ball" else 2 * math.pi
        kw = {"time": time}
        if self.per_period.value and flow.period is not None:
            periods = max(1, int(round(time / flow.period)))
            kw = {"periods": periods}
            passes = max(2, passes // periods)
        return material_ribbon(flow, passes=passes, max_points=max_points,
                               max_spacing=size / (40 if coarse else 100), initial_points=64 if coarse else 128, **kw)

    def _warm(self, flow: Flow) -> None:
        self._ribbon(flow, 0.05, 1, 2000, True)

    def _compute(self, flow: Flow, preview: bool):
        T = float(self.time_slider.value)
        if preview:
            return self._ribbon(flow, T, 4, max(2000, self.max_points // 10), True)
        return self._ribbon(flow, T, self.passes, self.max_points, False)

    # -- drawing ----------------------------------------------------------------------------
    def _build_axes(self) -> None:
        self.ax3d = self.fig.add_subplot(121, projection="3d")
        (self.loop_line,) = self.ax3d.plot([], [], [], lw=1.0, color="tab:blue")
        self.ax3d.set(xlabel="x", ylabel="y", zlabel="z")
        self.ax = self.fig.add_subplot(122)
        (self.wr_line,) = self.ax.plot([], [], "o-", ms=3, label="Wr")
        (self.tw_line,) = self.ax.plot([], [], "s-", ms=3, label="Tw")
        (self.lk_line,) = self.ax.plot([], [], "k--", label="Lk")
        self.ax.set(xlabel="t", ylabel="turns")
        self.ax.grid(alpha=0.3)
        self.ax.legend(loc="upper left", fontsize=8)

    def _draw(self, res, preview: bool) -> None:
        X = np.vstack([res.positions, res.positions[:1]])
        self.loop_line.set_data_3d(X[:, 0], X[:, 1], X[:, 2])
        lo, hi = X.min(axis=0), X.max(axis=0)
        self.ax3d.set(xlim=(lo[0], hi[0]), ylim=(lo[1], hi[1]), zlim=(lo[2], hi[2]))
        t = res.times
        for line, y in ((self.wr_line, res.writhe), (self.tw_line, res.twist), (self.lk_line, res.linking)):
            line.set_data(t, y)
        ys = np.concatenate([res.writhe, res.twist, res.linking])
        pad = 0.1 * max(float(np.ptp(ys)), 1.0)
        self.ax.set(xlim=(0, max(float(t[-1]), 1e-9)), ylim=(float(ys.min()) - pad, float(ys.max()) + pad))
        self.ax.set_title(f"{self._label(self.flow)}; {res.npoints[-1]} points" + ("  (preview)" if preview else ""),
                          fontsize=10)

    def _describe(self, res) -> str:
        return (f"t = {res.times[-1]:.3g}: Wr = {res.writhe[-1]:.4f}, Tw = {res.twist[-1]:.4f}, "
                f"Lk = {res.linking[-1]:.6f} (drift {res.linking_drift:.1e}); length x{res.lengths[-1] / res.lengths[0]:.3g}"
                + (f"; stopped: {res.stopped}" if res.stopped != "time" else ""))

    # -- exports ----------------------------------------------------------------------------
    def paper_figure(self):
        """A new figure of the current full run: Wr, Tw, Lk against time."""
        from matplotlib.figure import Figure

        from flowkit.topology.plot import plot_topology_history

        fig = Figure(figsize=(3.6, 2.8), layout="constrained")
        ax = fig.add_subplot()
        plot_topology_history(ax, self.result)
        ax.set_title(self._label(self.flow))
        return fig

    def save_data(self, path) -> None:
        """The ribbon history with provenance (:meth:`flowkit.topology.results.RibbonHistory.save`)."""
        self.result.save(path)
