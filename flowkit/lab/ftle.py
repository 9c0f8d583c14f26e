"""The FTLE explorer: an FTLE map on a coordinate plane, redrawn as parameters move.

Every map comes from :func:`flowkit.chaos.ftle_field` (variational equations
with the exact gradient); the explorer keeps one image artist and updates it
with ``set_data``. While a slider moves it shows a coarse preview grid; when
the slider rests, the full grid (with a progress bar when it is large).
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.flows.base import Flow
from flowkit.lab.base import EXPLORER_PRESETS, Explorer
from flowkit.lab.figures import axis_name, finite_range
from flowkit.lab.controls import PlaneControls, log_slider, moved

#: Grid points above which the full map shows a progress bar.
_LONG_WORK = 128 * 128


class FTLEExplorer(Explorer):
    """Forward or backward FTLE maps of a flow on a plane ``axis = offset``.

    Parameters
    ----------
    flow : str or Flow
        Preset name or your own flow.
    params : dict, optional
        Starting parameter values.
    normal : {"x", "y", "z"}, optional
        The plane's normal (default y in the unit ball, z in the periodic box).
    offset : float
        Position of the plane along its normal.
    time : float
        Integration time T.
    direction : {"forward", "backward"}
    resolution : int
        Grid points per side of the full map.
    preview_resolution : int
        Grid points per side while a slider moves.
    **kw
        ``presets``, ``figsize``, ``export_dir``, ``delays``: see :class:`~flowkit.lab.base.Explorer`.
    """

    kind = "ftle"

    def __init__(self, flow="stf", *, params=None, normal: str | None = None, offset: float = 0.0,
                 time: float = 5.0, direction: str = "forward", resolution: int = 96,
                 preview_resolution: int = 24, presets=EXPLORER_PRESETS, **kw):
        import ipywidgets as w

        if normal not in (None, "x", "y", "z"):
            raise FlowkitError(f"`normal` must be 'x', 'y' or 'z'; got {normal!r}")
        if direction not in ("forward", "backward"):
            raise FlowkitError(f"`direction` must be 'forward' or 'backward'; got {direction!r}")
        for name, val in (("resolution", resolution), ("preview_resolution", preview_resolution)):
            if not (isinstance(val, (int, np.integer)) and 2 <= val <= 2048):
                raise FlowkitError(f"`{name}` must be an integer between 2 and 2048; got {val!r}")
        if not (math.isfinite(time) and time > 0):
            raise FlowkitError(f"`time` must be a positive number; got {time!r}")
        self._start = {"normal": normal, "offset": float(offset)}
        self.preview_resolution = int(preview_resolution)
        self.plane_controls = PlaneControls()
        self.time_slider = log_slider(float(time), -1, 2.5, 0.02, "T")
        self.direction_picker = w.ToggleButtons(options=["forward", "backward"], value=direction,
                                                description="time", style={"button_width": "90px"})
        self.resolution_box = w.BoundedIntText(value=int(resolution), min=2, max=2048, step=16,
                                               description="grid")
        super().__init__(flow, params=params, presets=presets, **kw)
        self._flow_changed()
        for widget in (*self.plane_controls.widgets, self.time_slider, self.direction_picker):
            widget.observe(self._on_control, names="value")
        self.resolution_box.observe(lambda _c: self._full.trigger(), names="value")

    # -- controls ----------------------------------------------------------------------
    @property
    def plane(self):
        """The :class:`flowkit.chaos.GridPlane` the controls describe."""
        from flowkit.chaos.grid import GridPlane, default_span

        pc = self.plane_controls
        return GridPlane.coordinate(pc.normal.value, pc.offset.value, default_span(self._base))

    def _extra_controls(self) -> list:
        return [*self.plane_controls.widgets, self.time_slider, self.direction_picker,
                self.resolution_box]

    def _flow_changed(self) -> None:
        base = self._base
        if base.domain not in ("ball", "periodic"):
            raise FlowkitError(f"the FTLE explorer needs a bounded domain; flow '{base.name}' lives on "
                               f"'{base.domain}' (use flowkit.ftle_field with a span instead)")
        self._quiet = True
        try:
            self.plane_controls.reset(base, self._start["normal"], self._start["offset"])
        finally:
            self._quiet = False
        self.result = None

    def _on_control(self, change) -> None:
        if not self._quiet and moved(change):
            self.changed()

    # -- computing ---------------------------------------------------------------------
    def _warm(self, flow: Flow) -> None:
        self._field(flow, 3)  # the centre of a 3x3 grid lies inside every domain

    def _field(self, flow: Flow, n: int, progress: bool = False):
        from flowkit.chaos import ftle_field

        with warnings.catch_warnings():  # orbits that leave the domain are NaN and shown grey
            warnings.simplefilter("ignore", FlowkitNotice)
            return ftle_field(flow, self.plane, (n, n), self.time_slider.value,
                              direction=self.direction_picker.value, progress=progress)

    def _compute(self, flow: Flow, preview: bool):
        n = min(self.preview_resolution, self.resolution_box.value) if preview else self.resolution_box.value
        if not preview and n * n > _LONG_WORK:
            with self.long_job():
                return self._field(flow, n, progress=True)
        return self._field(flow, n)

    # -- drawing -----------------------------------------------------------------------
    def _build_axes(self) -> None:
        import matplotlib as mpl

        self.ax = self.fig.add_subplot()
        self.image = self.ax.imshow(np.full((2, 2), np.nan), origin="lower", interpolation="nearest",
                                    cmap=mpl.colormaps["magma"].with_extremes(bad="0.85"), rasterized=True)
        self.colorbar = self.fig.colorbar(self.image, ax=self.ax, shrink=0.8, label="FTLE (1/time)")
        self.ax.set_aspect("equal")

    def _draw(self, field, preview: bool) -> None:
        s, r = field.s, field.r
        ds, dr = (s[1] - s[0]) / 2, (r[1] - r[0]) / 2
        self.image.set_data(np.ma.masked_invalid(field.values))
        self.image.set_extent((s[0] - ds, s[-1] + ds, r[0] - dr, r[-1] + dr))
        self.image.set_clim(*finite_range(field.values))
        xl, yl = axis_name(field.plane["u"]), axis_name(field.plane["v"])
        self.ax.set(xlabel=xl, ylabel=yl, xlim=(s[0] - ds, s[-1] + ds), ylim=(r[0] - dr, r[-1] + dr))
        self.ax.set_title(f"{self._label(self.flow)}; {field.direction} T = {field.time:.3g}"
                          + ("  (preview)" if preview else ""), fontsize=10)

    def _describe(self, field) -> str:
        vals = field.values[np.isfinite(field.values)]
        rng = f"FTLE {vals.min():.3g} .. {vals.max():.3g}" if vals.size else "no finished orbits"
        return f"{field.values.shape[1]}x{field.values.shape[0]} grid, {rng}"

    # -- exports -------------------------------------------------------------------------
    def paper_figure(self):
        """A new figure of the current full map (:func:`flowkit.plot.plot_ftle`)."""
        from matplotlib.figure import Figure

        from flowkit.plot import plot_ftle

        fig = Figure(figsize=(3.6, 3.0), layout="constrained")
        plot_ftle(fig.add_subplot(), self.result)
        return fig

    def save_data(self, path) -> None:
        """The FTLE field with provenance (:meth:`flowkit.chaos.FTLEField.save`)."""
        self.result.save(path)
