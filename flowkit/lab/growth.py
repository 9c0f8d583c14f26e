"""The field-growth explorer: how fast a frozen-in field grows, redrawn as parameters move.

The curves are the ensemble statistics of :func:`flowkit.fields.stretch`:
the mean log-field <ln|B|> (slope: the largest Lyapunov exponent) and the log
moments ln<|B|^p> (slopes: the generalized exponents L(p)), with the fitted
rates in the legend. The explorer keeps one line per curve and updates it with
``set_data``; while a slider moves it uses a small ensemble.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.lab.base import EXPLORER_PRESETS, Explorer
from flowkit.lab.controls import log_slider, moved

#: Particles x samples above which the full run shows a progress bar.
_LONG_WORK = 200_000


class GrowthExplorer(Explorer):
    """Growth curves of a frozen-in field carried by an ensemble of particles.

    Parameters
    ----------
    flow : str or Flow
        Preset name or your own flow.
    params : dict, optional
        Starting parameter values.
    time : float
        Duration of the run.
    particles : int
        Ensemble size of the full run.
    preview_particles : int
        Ensemble size while a slider moves.
    p : sequence of float
        Moment orders shown (1 and 2 are always computed).
    samples : int
        Checkpoints along the run.
    **kw
        ``presets``, ``figsize``, ``export_dir``, ``delays``: see :class:`~flowkit.lab.base.Explorer`.
    """

    kind = "growth"

    def __init__(self, flow="stf", *, params=None, time: float = 20.0, particles: int = 1000,
                 preview_particles: int = 64, p=(1.0, 2.0), samples: int = 60, presets=EXPLORER_PRESETS, **kw):
        import ipywidgets as w

        for name, val in (("particles", particles), ("preview_particles", preview_particles), ("samples", samples)):
            if not (isinstance(val, (int, np.integer)) and val >= 1):
                raise FlowkitError(f"`{name}` must be a positive integer; got {val!r}")
        if not (math.isfinite(time) and time > 0):
            raise FlowkitError(f"`time` must be a positive number; got {time!r}")
        self.orders = tuple(float(q) for q in p)
        self.samples = int(samples)
        self.preview_particles = int(preview_particles)
        self.time_slider = log_slider(float(time), 0, 3, 0.02, "T")
        self.particles_box = w.BoundedIntText(value=int(particles), min=1, max=10_000_000, step=100,
                                              description="particles")
        super().__init__(flow, params=params, presets=presets, **kw)
        self.time_slider.observe(lambda c: self.changed() if moved(c) else None, names="value")
        self.particles_box.observe(lambda _c: self._full.trigger(), names="value")

    def _extra_controls(self) -> list:
        return [self.time_slider, self.particles_box]

    def _flow_changed(self) -> None:
        self.result = None

    # -- computing ------------------------------------------------------------------------
    def _run_stretch(self, flow: Flow, particles: int, time: float, samples: int, progress: bool = False):
        from flowkit.fields import stretch

        return stretch(flow, particles, time, p=self.orders, samples=samples, progress=progress)

    def _warm(self, flow: Flow) -> None:
        self._run_stretch(flow, 2, 0.1, 8)

    def _compute(self, flow: Flow, preview: bool):
        T = self.time_slider.value
        if preview:
            return self._run_stretch(flow, min(self.preview_particles, self.particles_box.value), T,
                                     min(self.samples, 20))
        n = self.particles_box.value
        if n * self.samples > _LONG_WORK:
            with self.long_job():
                return self._run_stretch(flow, n, T, self.samples, progress=True)
        return self._run_stretch(flow, n, T, self.samples)

    # -- drawing ----------------------------------------------------------------------------
    def _build_axes(self) -> None:
        self.ax = self.fig.add_subplot()
        (self.mean_line,) = self.ax.plot([], [], color="k", lw=1.5)
        self.moment_lines = {q: self.ax.plot([], [], lw=1.2)[0] for q in self.orders}
        # the fit window, shaded (a rectangle in data x, axes y)
        self.window_patch = self.ax.axvspan(0.0, 0.0, color="0.9", zorder=0)
        self.ax.set(xlabel="time", ylabel="log of field statistic")
        self.ax.grid(alpha=0.3)

    def _draw(self, res, preview: bool) -> None:
        t = res.times
        lam = res.lyapunov
        self.mean_line.set_data(t, res.mean_log)
        self.mean_line.set_label(f"<ln|B|>: slope {lam.value:.3g} ± {lam.stderr:.1g}")
        for q, line in self.moment_lines.items():
            j = int(np.flatnonzero(np.isclose(res.p, q))[0])
            rate = res.rate(q)
            line.set_data(t, res.log_moments[:, j])
            line.set_label(f"ln<|B|^{q:g}>: L({q:g}) = {rate.value:.3g} ± {rate.stderr:.1g}")
        ys = np.concatenate([res.mean_log, res.log_moments[:, [list(res.p).index(q) for q in self.orders]].ravel()])
        ys = ys[np.isfinite(ys)]
        top = float(ys.max()) if ys.size else 1.0
        low = float(ys.min()) if ys.size else 0.0
        pad = 0.05 * max(top - low, 1.0)
        self.ax.set(xlim=(0, t[-1]), ylim=(low - pad, top + pad))
        self.window_patch.set_x(res.window[0])
        self.window_patch.set_width(res.window[1] - res.window[0])
        self.ax.legend(loc="upper left", fontsize=8)
        self.ax.set_title(f"{self._label(self.flow)}; {res.n_used} particles"
                          + ("  (preview)" if preview else ""), fontsize=10)

    def _describe(self, res) -> str:
        rates = ", ".join(f"L({q:g}) = {res.rate(q).value:.3g}" for q in self.orders)
        return f"{res.n_used} particles: Lyapunov {res.lyapunov.value:.3g} ± {res.lyapunov.stderr:.1g}; {rates}"

    # -- exports ----------------------------------------------------------------------------
    def paper_figure(self):
        """A new figure of the current full run (:func:`flowkit.plot.plot_growth`: bands, fits, window)."""
        from matplotlib.figure import Figure

        from flowkit.plot import plot_growth

        fig = Figure(figsize=(3.6, 2.8), layout="constrained")
        ax = fig.add_subplot()
        plot_growth(ax, self.result, p=list(self.orders))
        ax.set_title(self._label(self.flow))
        ax.legend(loc="upper left", fontsize=6)
        return fig

    def save_data(self, path) -> None:
        """The stretching statistics with provenance (:meth:`flowkit.fields.StretchResult.save`)."""
        self.result.save(path)
