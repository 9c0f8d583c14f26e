"""The Poincaré-section explorer: sliders redraw the section in place; clicks add orbits.

>>> from flowkit.lab import SectionExplorer
>>> ex = SectionExplorer("stf", params={"rotation": 0.3})   # doctest: +SKIP
>>> ex                                                        # doctest: +SKIP

Everything it computes goes through :func:`flowkit.sections.poincare_section`
(and :func:`flowkit.chaos.orbit_indicator` for the colours); the explorer only
chooses budgets, keeps the orbits and updates one scatter artist.

Seeds by clicking: a click at in-plane coordinates (u, v) is the 3-D point
``plane.point(u, v)`` on the section plane (for a stroboscopic section, on its
view plane); its orbit is integrated with the full budget and appended.

Crossing direction: the explorer keeps every crossing by default ("both", the
same default as ``flowkit section`` and ``bash run.sh headless``), so the whole
trace of each orbit shows and a clicked seed's orbit shows up where it was
clicked; "+" or "−" keeps one side only (a one-sided return map, what
periodic-orbit and area-preservation arguments need). The figure states which.
The plane ``y = c`` is drawn in (x, z), ``x = c`` in (y, z), ``z = c`` in (x, y)
(:func:`flowkit.lab.controls.coordinate_plane`).
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.lab.base import EXPLORER_PRESETS, Explorer
from flowkit.lab.figures import axis_name, finite_range
from flowkit.lab.controls import DEFAULT_DIRECTION, PlaneControls, coordinate_plane, direction_text, moved
from flowkit.lab.palette import ORBIT_COLOURS, orbit_cmap
from flowkit.plot import plot_section
from flowkit.sections import Plane, Section, Stroboscopic, poincare_section, warm_sections
from flowkit.seeding import across_domain

#: Colours cycle through this many entries of :func:`flowkit.lab.palette.orbit_palette`.
_ORBIT_COLOURS = ORBIT_COLOURS
#: Name under which the chaos indicator is attached to a section (``section.orbit_values``).
INDICATOR = "ftle"
#: Orbits x crossings above which a full update shows a progress bar.
_LONG_WORK = 50_000


def marker_size(n: int) -> float:
    """Scatter marker area (points^2) that keeps n crossings readable on screen."""
    return 4.0 if n <= 3_000 else 1.5 if n <= 30_000 else 0.5


def append_orbits(a: Section, b: Section) -> Section:
    """One section with the orbits of ``a`` followed by those of ``b`` (same flow and plane)."""
    n = a.n_orbits
    prov = dict(a.provenance)
    prov["seeds"] = np.vstack([a.seeds, b.seeds]).tolist()
    prov["seconds"] = a.provenance.get("seconds", 0.0) + b.provenance.get("seconds", 0.0)
    values = {}
    for key in set(a.orbit_values) | set(b.orbit_values):
        va = a.orbit_values.get(key, np.full(a.n_orbits, np.nan))
        vb = b.orbit_values.get(key, np.full(b.n_orbits, np.nan))
        values[key] = np.concatenate([va, vb])
    return Section(
        points=np.vstack([a.points, b.points]), coords=np.vstack([a.coords, b.coords]),
        time=np.concatenate([a.time, b.time]), orbit=np.concatenate([a.orbit, b.orbit + n]),
        crossing_direction=np.concatenate([a.crossing_direction, b.crossing_direction]),
        seeds=np.vstack([a.seeds, b.seeds]), outcome=np.concatenate([a.outcome, b.outcome]),
        t_end=np.concatenate([a.t_end, b.t_end]), steps=np.concatenate([a.steps, b.steps]),
        counts=np.concatenate([a.counts, b.counts]), geometry=a.geometry, provenance=prov, orbit_values=values,
    )


class SectionExplorer(Explorer):
    """Poincaré sections of a flow, redrawn as its parameters move.

    Parameters
    ----------
    flow : str or Flow
        Preset name or your own flow (default the stretch-twist-fold flow).
    params : dict, optional
        Starting parameter values.
    normal : {"x", "y", "z"}, optional
        Normal of the section plane (default y in the unit ball, z in the box).
        Time-periodic flows get a stroboscopic section viewed along this axis.
    offset : float
        Offset of the plane along its normal.
    direction : {"both", "+", "-"}
        Crossings kept: every one (default), or only those where the normal
        coordinate increases ("+") or decreases ("-"). Ignored by stroboscopic sections.
    seeds : array (N, 3), optional
        Starting seeds (default ``n_seeds`` across the domain in the plane,
        :func:`flowkit.seeding.across_domain`).
    n_seeds : int
        Number of default seeds.
    crossings : int
        Crossing budget per orbit of the full section.
    preview_crossings : int, optional
        Budget of the preview shown while a slider moves (default crossings / 10).
    rtol, atol : float
        Tolerances of the full section (the preview uses 1e-7, 1e-9).
    color_by : {"orbit", "chaos"}
        Colour crossings by orbit, or by each orbit's finite-time largest
        Lyapunov exponent (:func:`flowkit.chaos.orbit_indicator`).
    indicator_time : float
        Integration time of the chaos indicator.
    threads : int, optional
        Threads for the kernels (default: all numba threads).
    **kw
        ``presets``, ``figsize``, ``export_dir``, ``delays``: see :class:`~flowkit.lab.base.Explorer`.
    """

    kind = "section"

    def __init__(self, flow="stf", *, params=None, normal: str | None = None, offset: float = 0.0,
                 direction: str = DEFAULT_DIRECTION, seeds=None, n_seeds: int = 10, crossings: int = 1000, preview_crossings: int | None = None,
                 rtol: float = 1e-10, atol: float = 1e-12, color_by: str = "orbit", indicator_time: float = 50.0,
                 threads: int | None = None, presets=EXPLORER_PRESETS, **kw):
        import ipywidgets as w

        if color_by not in ("orbit", "chaos"):
            raise FlowkitError(f"`color_by` must be 'orbit' or 'chaos'; got {color_by!r}")
        if not (isinstance(crossings, (int, np.integer)) and crossings >= 1):
            raise FlowkitError(f"`crossings` must be a positive integer; got {crossings!r}")
        if normal not in (None, "x", "y", "z"):
            raise FlowkitError(f"`normal` must be 'x', 'y' or 'z'; got {normal!r}")
        if direction not in ("+", "-", "both"):
            raise FlowkitError(f"`direction` must be '+', '-' or 'both'; got {direction!r}")
        self.rtol, self.atol, self.threads = rtol, atol, threads
        self.indicator_time = float(indicator_time)
        self.n_seeds = n_seeds
        self._preview_crossings = preview_crossings
        self._start = {"normal": normal, "offset": float(offset), "crossings": int(crossings), "color_by": color_by,
                       "direction": direction}
        self.plane_controls = PlaneControls(direction=True)
        self.crossings_box = w.BoundedIntText(value=int(crossings), min=1, max=1_000_000, step=100,
                                              description="crossings")
        self.color_picker = w.ToggleButtons(options=["orbit", "chaos"], value=color_by, description="colour",
                                            style={"button_width": "60px"})
        from flowkit.lab.skeleton import SkeletonMarks

        self.skeleton = SkeletonMarks()  # periodic-orbit mode (flowkit/lab/skeleton.py)
        super().__init__(flow, params=params, presets=presets, **kw)
        self._user_seeds = None if seeds is None else np.array(seeds, dtype=float, ndmin=2)
        self._flow_changed()
        self.plane_controls.observe(self._on_plane)
        self.crossings_box.observe(lambda _c: self._full.trigger(), names="value")
        self.color_picker.observe(lambda _c: self.update(), names="value")

    # -- controls ----------------------------------------------------------------------
    @property
    def crossings(self) -> int:
        return int(self.crossings_box.value)

    @property
    def preview_crossings(self) -> int:
        if self._preview_crossings is not None:
            return int(self._preview_crossings)
        return max(20, self.crossings // 10)

    @property
    def geometry(self) -> Plane | Stroboscopic:
        """The section the controls describe: a plane, or stroboscopic for time-periodic flows."""
        pc = self.plane_controls
        if self._base.steady:
            return coordinate_plane(pc.normal.value, pc.offset.value, pc.direction.value)
        return Stroboscopic(view=coordinate_plane(pc.normal.value, 0.0, "both"))

    @property
    def view(self) -> Plane:
        g = self.geometry
        return g if isinstance(g, Plane) else g.view

    def _extra_controls(self) -> list:
        return [*self.plane_controls.widgets, self.crossings_box, self.color_picker, *self.skeleton.widgets]

    def _flow_changed(self) -> None:
        base = self._base
        self._quiet = True
        try:
            self.plane_controls.reset(base, self._start["normal"], self._start["offset"], self._start["direction"])
            self.plane_controls.offset.disabled = not base.steady
            self.plane_controls.direction.disabled = not base.steady  # every period: no direction
            self.crossings_box.value = self._start["crossings"]
        finally:
            self._quiet = False
        self.seeds = self._user_seeds if self._user_seeds is not None and base is self._defaults else \
            across_domain(base, self.view, self.n_seeds)
        self.result = None
        self.skeleton.clear()
        self._frame()

    def _on_plane(self, change) -> None:
        if self._quiet or not moved(change):
            return
        self._frame()  # the seeds (points in space) stay: the same orbits, cut by another plane
        self.changed()

    # -- seeds -------------------------------------------------------------------------
    def add_seed(self, point) -> None:
        """Add the orbit of ``point`` (3 numbers) and redraw (the full budget is used)."""
        pt = np.array(point, dtype=float).reshape(1, 3)
        flow = self.flow
        if not flow.contains(pt)[0]:
            raise FlowkitError(f"seed {np.round(pt[0], 4).tolist()} lies outside the {flow.domain} domain of "
                               f"'{flow.name}'; click inside it")
        self.seeds = np.vstack([self.seeds, pt])
        if self.result is None or self._full.pending or self.showing != "full":
            self.update()
            return
        self._ensure_compiled(flow)
        new = self._section(flow, pt, self.crossings, self.rtol, self.atol)
        if self.color_picker.value == "chaos":
            self._attach_indicator(flow, new)
        self.result = append_orbits(self.result, new)
        self._draw(self.result, preview=False)
        self._draw_idle()
        self.say(self._describe(self.result) + " — orbit added")

    def _on_click(self, event) -> None:
        if event.inaxes is not self.ax or getattr(event, "button", 1) not in (1, None) or event.xdata is None:
            return
        toolbar = getattr(self.fig.canvas, "toolbar", None)
        if toolbar is not None and getattr(toolbar, "mode", ""):  # zooming or panning, not seeding
            return
        if self.skeleton.active:  # periodic-orbit mode: find the orbit nearest the click
            try:
                self.say(self.skeleton.click(self.flow, self.geometry, (event.xdata, event.ydata)))
            except FlowkitError as exc:
                self.say(str(exc), error=True)
            self._draw_idle()
            return
        try:
            self.add_seed(self.view.point(event.xdata, event.ydata))
        except FlowkitError as exc:
            self.say(str(exc), error=True)

    # -- computing ------------------------------------------------------------------------
    def _warm(self, flow: Flow) -> None:
        warm_sections(flow)
        if self.color_picker.value == "chaos":
            from flowkit.chaos import orbit_indicator

            orbit_indicator(flow, self.seeds[:1], 0.1)

    def _warm_tag(self) -> str:
        return self.color_picker.value

    def _section(self, flow: Flow, seeds, budget: int, rtol: float, atol: float, progress=False) -> Section:
        return poincare_section(flow, seeds, self.geometry, crossings=budget, rtol=rtol, atol=atol,
                                threads=self.threads, progress=progress)

    def _compute(self, flow: Flow, preview: bool) -> Section:
        if preview:
            return self._section(flow, self.seeds, self.preview_crossings, 1e-7, 1e-9)
        if len(self.seeds) * self.crossings > _LONG_WORK:
            with self.long_job():
                sec = self._section(flow, self.seeds, self.crossings, self.rtol, self.atol, progress=True)
        else:
            sec = self._section(flow, self.seeds, self.crossings, self.rtol, self.atol)
        if self.color_picker.value == "chaos":
            self._attach_indicator(flow, sec)
        return sec

    def _attach_indicator(self, flow: Flow, sec: Section) -> None:
        import warnings

        from flowkit.chaos import attach_indicator
        from flowkit.errors import FlowkitNotice

        with warnings.catch_warnings():  # orbits that leave the domain get NaN; they are drawn grey
            warnings.simplefilter("ignore", FlowkitNotice)
            attach_indicator(sec, flow, self.indicator_time, name=INDICATOR)

    # -- drawing --------------------------------------------------------------------------
    def _build_axes(self) -> None:
        from matplotlib.ticker import MaxNLocator

        ax = self.fig.add_subplot()
        self.ax = ax
        self.skeleton.attach(ax)
        self._orbit_cmap = orbit_cmap(_ORBIT_COLOURS)
        self._cmap_name = "orbits"
        self.scatter = ax.scatter(np.zeros(0), np.zeros(0), c=np.zeros(0), s=1.0, linewidths=0,
                                  cmap=self._orbit_cmap, vmin=-0.5, vmax=_ORBIT_COLOURS - 0.5,
                                  plotnonfinite=True)  # on screen; exports rasterize (plot_section)
        for axis in (ax.xaxis, ax.yaxis):  # at most 6 ticks: labels such as -0.75 never touch
            axis.set_major_locator(MaxNLocator(nbins=5, steps=[1, 2, 2.5, 5, 10]))
        (self.boundary,) = ax.plot([], [], color="0.3", lw=0.8)
        # the colour bar sits in an inset, so while it is hidden the section gets the whole width
        cax = ax.inset_axes([1.04, 0.1, 0.04, 0.8])
        self.colorbar = self.fig.colorbar(self.scatter, cax=cax, label="finite-time largest exponent")
        self.threshold_line = self.colorbar.ax.axhline(0.0, color="k", lw=1.0)
        self.colorbar.ax.set_visible(False)
        ax.set_aspect("equal")

    def _frame(self) -> None:
        """Axes limits, labels and the domain outline for the current flow and plane."""
        base, view, ax = self._base, self.view, self.ax
        e1, e2 = view.basis
        ax.set(xlabel=axis_name(e1), ylabel=axis_name(e2))
        if base.domain == "ball":
            off = view.offset if isinstance(self.geometry, Plane) else 0.0
            r = math.sqrt(max(1 - off**2, 0.0))
            th = np.linspace(0, 2 * math.pi, 241)
            self.boundary.set_data(r * np.cos(th), r * np.sin(th))
            ax.set(xlim=(-1.05, 1.05), ylim=(-1.05, 1.05))
        elif base.domain == "periodic":
            L = 2 * math.pi
            self.boundary.set_data([0, L, L, 0, 0], [0, 0, L, L, 0])
            ax.set(xlim=(-0.1, L + 0.1), ylim=(-0.1, L + 0.1))
        else:
            self.boundary.set_data([], [])
            ax.autoscale()

    def _colours(self, sec: Section) -> tuple[np.ndarray, str, tuple]:
        if self.color_picker.value == "chaos" and INDICATOR in sec.orbit_values:
            per_orbit = np.asarray(sec.orbit_values[INDICATOR], dtype=float)
            lo, hi = finite_range(per_orbit)
            return per_orbit[sec.orbit], "viridis", (min(lo, 0.0), hi)
        return (sec.orbit % _ORBIT_COLOURS).astype(float), "orbits", (-0.5, _ORBIT_COLOURS - 0.5)

    def _draw(self, sec: Section, preview: bool) -> None:
        import matplotlib as mpl

        values, cmap, clim = self._colours(sec)
        self.scatter.set_offsets(sec.display_coords())
        self.scatter.set_sizes([marker_size(len(values))])
        self.scatter.set_array(values)
        if cmap != self._cmap_name or clim != self.scatter.get_clim():
            # only on a real change: each one also redraws the colour bar
            base = self._orbit_cmap if cmap == "orbits" else mpl.colormaps[cmap]
            self.scatter.set_cmap(base.with_extremes(bad="0.7"))
            self.scatter.set_clim(*clim)
            self._cmap_name = cmap
        chaos = cmap == "viridis"
        self.colorbar.ax.set_visible(chaos)
        if chaos:
            thr = sec.provenance["indicator"]["threshold"]
            self.threshold_line.set_ydata([thr, thr])
        if self._base.domain not in ("ball", "periodic") and len(values):
            self.ax.update_datalim(sec.display_coords())
            self.ax.autoscale_view()
        if not preview and self.skeleton.orbits:  # the marks follow the parameters by continuation
            self.skeleton.follow(self.flow, self.geometry)
        self.ax.set_title(self._label(self.flow) + ("  (preview)" if preview else "") + "\n" + self.section_text(),
                          fontsize=10)

    def section_text(self) -> str:
        """Which section the figure shows, e.g. 'plane y = 0, crossings: both directions'."""
        pc = self.plane_controls
        if not self._base.steady:
            return f"stroboscopic (every period), seen along {pc.normal.value}"
        offset = round(pc.offset.value, 6) + 0.0  # no "2.22e-16" from a slider's rounding
        return f"plane {pc.normal.value} = {offset:.3g}, " + direction_text(pc.normal.value,
                                                                                      pc.direction.value)

    def _describe(self, sec: Section) -> str:
        bad = {k: v for k, v in sec.outcomes.items() if v and k not in ("crossing budget", "finished")}
        text = f"{sec.n_orbits} orbits, {sec.crossings_total} crossings ({self.section_text()})"
        return text + (f"; {bad}" if bad else "")

    # -- exports ---------------------------------------------------------------------------
    def paper_figure(self):
        """A new figure of the current full section (:func:`flowkit.plot.plot_section`: rasterized points)."""
        from matplotlib.figure import Figure

        sec = self.result
        fig = Figure(figsize=(3.4, 3.0), layout="constrained")
        ax = fig.add_subplot()
        chaos = self.color_picker.value == "chaos" and INDICATOR in sec.orbit_values
        art = plot_section(ax, sec, color_by=INDICATOR if chaos else "orbit", size=0.3, colorbar=False,
                           cmap=None if chaos else self._orbit_cmap)
        if chaos:
            fig.colorbar(art[0], ax=ax, shrink=0.8, label="finite-time largest exponent")
        ax.set(xlim=self.ax.get_xlim(), ylim=self.ax.get_ylim(), xlabel=self.ax.get_xlabel(),
               ylabel=self.ax.get_ylabel(), title=self._label(self.flow) + "\n" + self.section_text())
        return fig

    def save_data(self, path) -> None:
        """The raw crossings with provenance (:meth:`flowkit.sections.Section.save`, no pickle)."""
        self.result.save(path)
