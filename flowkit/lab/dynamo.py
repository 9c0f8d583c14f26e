"""The dynamo explorer: growth rate of the leading magnetic mode as Rm and the flow change.

Left, the leading mode of :func:`flowkit.dynamo.growth_rate` on the plane
``z = 0`` (``|B|`` in colour, in-plane field lines); right, the growth rate
against ``Rm``. Every full result for the current flow, parameters, vertical
wavenumber and grid is kept as a point, so the curve builds up while ``Rm`` is
explored and the onset shows where it crosses zero. While the ``Rm`` slider
moves, a coarse grid gives the preview; the chosen grid follows on release, with
its resolution check. For a ball flow each grid keeps the last eigenpairs
(:class:`~flowkit.dynamo.sphere.warm.WarmStart`), so a nearby ``Rm`` starts from them.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.lab.base import Explorer
from flowkit.lab.controls import log_slider, moved

#: Periodic presets offered by the flow picker (the solver needs the 2*pi box).
DYNAMO_PRESETS = ("abc", "roberts", "circular")
#: Presets independent of z, for which one vertical wavenumber can be solved alone.
Z_INDEPENDENT = ("roberts", "circular")
#: Grid sizes offered.
RESOLUTIONS = (8, 12, 16, 24, 32, 48)


class DynamoExplorer(Explorer):
    """Growth rate and leading mode of the kinematic dynamo in a periodic flow or a ball flow.

    Parameters
    ----------
    flow : str or Flow
        Periodic preset (``abc``, ``roberts``, ``circular``) or your own periodic flow; or a
        ball flow (insulating sphere: the mode's meridional slice, ``(L, N) = (N, N)`` up to 24).
    params : dict, optional
        Starting parameter values.
    rm : float
        Starting magnetic Reynolds number (slider from 0.1 to 300, logarithmic).
    resolution : int
        Grid points per side of the full result.
    preview_resolution : int
        Grid of the preview while the ``Rm`` slider moves.
    kz : float, optional
        Start with one vertical wavenumber (z-independent flows only).
    method : {"eigen", "march"}
        Solver of :func:`flowkit.dynamo.growth_rate`.
    **kw
        ``presets``, ``figsize``, ``export_dir``, ``delays``: see :class:`~flowkit.lab.base.Explorer`.
    """

    kind = "dynamo"

    def __init__(self, flow="abc", *, params=None, rm: float = 10.0, resolution: int = 16,
                 preview_resolution: int = 8, kz: float | None = None, method: str = "eigen",
                 presets=DYNAMO_PRESETS, figsize=(5.4, 6.6), **kw):
        import ipywidgets as w

        if not (isinstance(rm, (int, float)) and math.isfinite(rm) and 0.1 <= rm <= 300):
            raise FlowkitError(f"`rm` must be a number between 0.1 and 300 (the slider's range); got {rm!r}")
        for name, val in (("resolution", resolution), ("preview_resolution", preview_resolution)):
            if val not in RESOLUTIONS:
                raise FlowkitError(f"`{name}` must be one of {RESOLUTIONS}; got {val!r}")
        if method not in ("eigen", "march"):
            raise FlowkitError(f"`method` must be 'eigen' or 'march'; got {method!r}")
        if kz is not None and not (math.isfinite(kz) and 0 <= kz <= 3):
            raise FlowkitError(f"`kz` must be a number between 0 and 3 (the slider's range); got {kz!r}")
        self.preview_resolution = int(preview_resolution)
        self.history: dict[tuple, dict[float, tuple[float, float]]] = {}  #: curve key -> {Rm: (rate, freq)}
        self._warm_starts: dict = {}  # ball flows: flow and parameters -> WarmStart (keyed by grid inside)
        self.rm_slider = log_slider(float(rm), -1, math.log10(300), 0.01, "Rm")
        self.resolution_picker = w.Dropdown(options=list(RESOLUTIONS), value=int(resolution), description="N")
        self.method_picker = w.Dropdown(options=["eigen", "march"], value=method, description="method")
        self.kz_toggle = w.Checkbox(value=kz is not None, description="one vertical wavenumber kz", indent=False)
        self.kz_slider = w.FloatSlider(value=0.6 if kz is None else float(kz), min=0.0, max=3.0, step=0.01,
                                       description="kz", continuous_update=True, layout=w.Layout(width="95%"))
        super().__init__(flow, params=params, presets=presets, figsize=figsize, **kw)
        self.rm_slider.observe(lambda c: self.changed() if moved(c) else None, names="value")
        self.kz_slider.observe(lambda _c: self.changed() if self.kz_toggle.value else None, names="value")
        for control in (self.resolution_picker, self.method_picker, self.kz_toggle):
            control.observe(lambda _c: self._full.trigger(), names="value")
        self._flow_changed()

    def _extra_controls(self) -> list:
        return [self.rm_slider, self.kz_toggle, self.kz_slider, self.resolution_picker, self.method_picker]

    def _flow_changed(self) -> None:
        self.result = None
        fits = (self._base.name in Z_INDEPENDENT or self._base.name not in DYNAMO_PRESETS) and \
            self._base.domain != "ball"
        self.kz_toggle.disabled = not fits
        if not fits:
            self.kz_toggle.value = False

    @property
    def kz(self) -> float | None:
        """The vertical wavenumber solved for, or None for the full 3-D box."""
        return float(self.kz_slider.value) if self.kz_toggle.value else None

    def _curve_key(self, flow: Flow) -> tuple:
        return (flow.name, tuple(flow.param_dict.items()), self.kz, self.resolution_picker.value,
                self.method_picker.value)

    # -- computing ------------------------------------------------------------------------
    def _warm(self, flow: Flow) -> None:
        from flowkit.dynamo import growth_rate

        if flow.domain == "ball":  # the sphere solver compiles nothing of its own: warm the flow's kernels
            flow.family.warm()
            return
        growth_rate(flow, 1.0, 8, check_resolution=None, keep_mode=False)

    def _compute(self, flow: Flow, preview: bool):
        from flowkit.dynamo import growth_rate

        n = self.preview_resolution if preview else self.resolution_picker.value
        extra = {}
        if flow.domain == "ball":  # insulating sphere: (L, N) = (n, n), capped where a solve stays interactive
            from flowkit.dynamo.sphere.warm import WarmStart

            n = (min(n, 24), min(n, 24))
            key = (flow.name, tuple(flow.param_dict.items()), preview)  # preview and full run in their own threads
            extra["warm_start"] = self._warm_starts.setdefault(key, WarmStart())
        res = growth_rate(flow, self.rm_slider.value, n, self.method_picker.value,
                          check_resolution=None if preview else "auto", kz=self.kz, **extra)
        if not preview and math.isfinite(res.growth_rate):
            self.history.setdefault(self._curve_key(flow), {})[res.rm] = (res.growth_rate, res.frequency)
        return res

    def curve(self, flow: Flow | None = None) -> tuple[np.ndarray, np.ndarray]:
        """``(Rm, growth rate)`` of the full results kept for the current settings, sorted by Rm."""
        pts = self.history.get(self._curve_key(flow or self.flow), {})
        rms = np.array(sorted(pts))
        return rms, np.array([pts[r][0] for r in rms])

    # -- drawing ----------------------------------------------------------------------------
    def _build_axes(self) -> None:
        # stacked, so the explorer fits a laptop-width notebook beside its controls or above them
        self.mode_ax, self.curve_ax = self.fig.subplots(2, 1, height_ratios=(1.15, 1))
        two_pi = 2 * np.pi
        self.image = self.mode_ax.imshow(np.zeros((2, 2)), origin="lower", extent=(0, two_pi, 0, two_pi),
                                         cmap="magma", interpolation="bilinear", vmin=0.0, vmax=1.0)
        self.fig.colorbar(self.image, ax=self.mode_ax, label="|B| (max 1)", shrink=0.8)
        self._stream_artists: list = []
        self.mode_ax.set(xlim=(0, two_pi), ylim=(0, two_pi), xlabel="x", ylabel="y", aspect="equal")
        (self.curve_line,) = self.curve_ax.plot([], [], "o-", color="C0", ms=4, lw=1)
        (self.current_point,) = self.curve_ax.plot([], [], "*", color="C3", ms=12)
        self.curve_ax.axhline(0.0, color="0.5", lw=0.8, ls="--")
        self.curve_ax.set(xscale="log", xlabel="magnetic Reynolds number Rm", ylabel="growth rate")
        for fmt in (self.curve_ax.xaxis.set_major_formatter, self.curve_ax.xaxis.set_minor_formatter):
            fmt("{x:g}")  # 8, 10, 20 rather than 8x10^0
        self.curve_ax.grid(alpha=0.3)

    def _draw(self, res, preview: bool) -> None:
        from flowkit.dynamo.plot import mode_slice

        for artist in self._stream_artists:
            artist.remove()
        self._stream_artists = []
        if res.mode is not None:
            if getattr(res, "domain", "box") == "ball":  # the meridional disk y = 0 of the sphere
                from flowkit.dynamo.sphere.mode import ball_slice

                h, v, bh, bv, mag, _ = ball_slice(res, "meridional", resolution=48)
                bh, bv, mag = np.nan_to_num(bh), np.nan_to_num(bv), np.nan_to_num(mag)
                self.image.set_extent((-1, 1, -1, 1))
                self.mode_ax.set(xlim=(-1, 1), ylim=(-1, 1), xlabel="x", ylabel="z")
            else:
                h, v, bh, bv, mag, _ = mode_slice(res, "z", 0.0)
                self.image.set_extent((0, 2 * np.pi, 0, 2 * np.pi))
                self.mode_ax.set(xlim=(0, 2 * np.pi), ylim=(0, 2 * np.pi), xlabel="x", ylabel="y")
            self.image.set_data(mag)
            self.image.set_clim(0.0, max(float(mag.max()), 1e-12))
            lines_before, patches_before = set(self.mode_ax.collections), set(self.mode_ax.patches)
            self.mode_ax.streamplot(h, v, bh, bv, color="white", density=1.0, linewidth=0.6, arrowsize=0.6)
            self._stream_artists = [a for a in self.mode_ax.collections if a not in lines_before] + \
                                   [a for a in self.mode_ax.patches if a not in patches_before]
        else:
            self.image.set_data(np.zeros((2, 2)))
        kz = "" if res.kz is None else f", kz = {res.kz:g}"
        where = "y = 0" if getattr(res, "domain", "box") == "ball" else "z = 0"
        self.mode_ax.set_title(f"leading mode at {where}, N = {res.resolution}{kz}"
                               + ("  (preview)" if preview else ""), fontsize=9)
        rms, rates = self.curve()
        self.curve_line.set_data(rms, rates)
        self.current_point.set_data([res.rm], [res.growth_rate])
        xs = np.concatenate([rms, [res.rm]])
        ys = np.concatenate([rates, [res.growth_rate, 0.0]])
        ys = ys[np.isfinite(ys)]
        pad = 0.08 * max(float(np.ptp(ys)), 1e-3)
        self.curve_ax.set(xlim=(float(xs.min()) / 1.3, float(xs.max()) * 1.3),
                          ylim=(float(ys.min()) - pad, float(ys.max()) + pad))
        self.curve_ax.set_title(f"{self._label(self.flow)}: growth rate {res.growth_rate:.4g}, "
                                f"frequency {res.frequency:.3g}", fontsize=9)

    def _describe(self, res) -> str:
        check = (f", error {res.error_estimate:.1g} vs N = {res.check.get('resolution')}"
                 if res.check else "")
        kz = "" if res.kz is None else f", kz = {res.kz:g}"
        return (f"growth rate {res.growth_rate:.5g}, frequency {res.frequency:.4g} at Rm = {res.rm:.4g}{kz}, "
                f"N = {res.resolution}{check}")

    # -- exports ----------------------------------------------------------------------------
    def paper_figure(self):
        """A new figure: the leading mode at z = 0 and the growth rates gathered so far against Rm."""
        from matplotlib.figure import Figure

        from flowkit.dynamo.plot import plot_mode_slice

        fig = Figure(figsize=(6.4, 2.8), layout="constrained")
        a1, a2 = fig.subplots(1, 2)
        plot_mode_slice(a1, self.result, axis="z", position=0.0, density=1.0)
        rms, rates = self.curve()
        a2.plot(rms, rates, "o-", ms=3, lw=1)
        a2.axhline(0.0, color="0.5", lw=0.8, ls="--")
        a2.set(xscale="log", xlabel="magnetic Reynolds number Rm", ylabel="growth rate", title=self._label(self.flow))
        return fig

    def save_data(self, path) -> None:
        """The current result (mode on the grid, provenance) and the gathered curve in its metadata."""
        rms, rates = self.curve()
        self.result.diagnostics["explored_curve"] = {"rm": rms.tolist(), "growth_rate": rates.tolist()}
        self.result.save(path)
