"""The section explorer's periodic-orbit mode: a click finds the nearest periodic orbit.

:class:`SkeletonMarks` is a helper the section explorer holds. With its toggle on,
a click at in-plane (u, v) starts Newton's method on the section map there
(:func:`flowkit.sections.find_periodic_orbit`, period from the period box); a
converged orbit is marked by type (the marks of
:mod:`flowkit.sections.plot_skeleton`) with its period, and, if asked, the
manifolds of a hyperbolic orbit are grown and drawn. When the parameters change,
every marked orbit is followed by one continuation step (Newton from its last
point on the new flow); orbits that are lost are dropped and the figure says so.
Artists are created once and updated in place.
"""

from __future__ import annotations

import numpy as np

from flowkit.sections.plot_skeleton import MARKS

#: manifold length (section units) and point budget grown from a click: quick enough to feel interactive
MANIFOLD_LENGTH = 1.2
MANIFOLD_POINTS = 1500


class SkeletonMarks:
    """Periodic orbits (and manifolds) marked on an explorer's axes.

    Parameters
    ----------
    widgets : bool
        Build the ipywidgets controls (toggle, period, manifolds); False for headless use.
    """

    def __init__(self, widgets: bool = True):
        self.orbits: list = []
        self.manifolds: dict = {}
        self.ax = None
        self._marks: dict = {}
        self._lines: dict = {}
        self._labels: list = []
        self.toggle = self.period_box = self.manifold_box = None
        if widgets:
            import ipywidgets as w

            self.toggle = w.ToggleButton(value=False, description="click: periodic orbit",
                                         tooltip="a click finds the nearest periodic orbit instead of adding a seed")
            self.period_box = w.BoundedIntText(value=1, min=1, max=12, description="period",
                                               layout=w.Layout(width="130px"))
            self.manifold_box = w.Checkbox(value=False, description="manifolds", indent=False)
            self.clear_button = w.Button(description="clear orbits")
            self.clear_button.on_click(lambda _: self.clear())

    @property
    def widgets(self) -> list:
        return [] if self.toggle is None else [self.toggle, self.period_box, self.manifold_box, self.clear_button]

    @property
    def active(self) -> bool:
        return bool(self.toggle is not None and self.toggle.value)

    def attach(self, ax) -> None:
        """Create the (empty) artists on ``ax``: one mark layer per type, two manifold layers."""
        self.ax = ax
        for kind, style in MARKS.items():
            (self._marks[kind],) = ax.plot([], [], ls="none", zorder=6, label=kind, **style)
        for kind, colour in (("unstable", "tab:red"), ("stable", "tab:blue")):
            (self._lines[kind],) = ax.plot([], [], color=colour, lw=0.8, zorder=4)

    # -- actions ----------------------------------------------------------------------------
    def click(self, flow, section, uv, period: int | None = None, manifolds: bool | None = None) -> str:
        """Find the periodic orbit nearest a click at in-plane ``uv``; return a message for the status line."""
        from flowkit.sections.periodic import find_periodic_orbit

        k = int(period if period is not None else (self.period_box.value if self.period_box else 1))
        want = bool(manifolds if manifolds is not None else (self.manifold_box.value if self.manifold_box else False))
        orbit = find_periodic_orbit(flow, np.asarray(uv, float), section, period=k, max_step=0.05)
        if not orbit.converged:
            return f"no periodic orbit of period {k} from ({uv[0]:.3g}, {uv[1]:.3g}): {orbit.message}"
        for old in self.orbits:  # the same orbit clicked twice: keep one
            if old.minimal_period == orbit.minimal_period and \
                    np.min(np.linalg.norm(old.xi - orbit.xi[0], axis=1)) < 1e-6:
                return f"already marked: {orbit.type} orbit of period {orbit.minimal_period}"
        self.orbits.append(orbit)
        msg = (f"{orbit.type} orbit of period {orbit.minimal_period} at ({orbit.xi[0][0]:.5g}, {orbit.xi[0][1]:.5g}), "
               f"T = {orbit.period_time:.5g}, residue {orbit.residue:.4g}")
        if want and orbit.type == "hyperbolic":
            self._grow(orbit)
            msg += f"; manifolds: {self.manifolds[id(orbit)].intersections.shape[0]} homoclinic points"
        self.redraw()
        return msg

    def _grow(self, orbit) -> None:
        from flowkit.sections.manifolds import invariant_manifolds

        self.manifolds[id(orbit)] = invariant_manifolds(orbit, length=MANIFOLD_LENGTH, max_points=MANIFOLD_POINTS)

    def follow(self, flow, section) -> str:
        """One continuation step of every marked orbit onto ``flow``; return a note (empty if nothing marked)."""
        from flowkit.sections.orbit_results import PeriodicOrbit
        from flowkit.sections.periodic import make_map, newton

        if not self.orbits:
            return ""
        rm = make_map(flow, section)
        kept, lost = [], 0
        starts = np.array([o.xi[0] for o in self.orbits])
        # one batch per period (orbits of one period share a Newton run)
        for k in sorted({o.period for o in self.orbits}):
            idx = [i for i, o in enumerate(self.orbits) if o.period == k]
            run = newton(rm, starts[idx], k, max_step=0.05)
            for j, i in enumerate(idx):
                new = PeriodicOrbit.from_newton(rm, starts[i], run, k, index=j)
                if new.converged:
                    if id(self.orbits[i]) in self.manifolds:
                        self.manifolds.pop(id(self.orbits[i]))
                        if new.type == "hyperbolic":
                            self._grow(new)
                    kept.append(new)
                else:
                    lost += 1
        self.orbits = kept
        self.redraw()
        return f"followed {len(kept)} periodic orbit(s)" + (f", lost {lost}" if lost else "")

    def clear(self) -> None:
        self.orbits, self.manifolds = [], {}
        self.redraw()

    # -- drawing ----------------------------------------------------------------------------
    def redraw(self) -> None:
        """Update the artists in place from the marked orbits and manifolds."""
        if self.ax is None:
            return
        for kind, art in self._marks.items():
            pts = [o.xi for o in self.orbits if o.type == kind]
            xy = np.vstack(pts) if pts else np.zeros((0, 2))
            art.set_data(xy[:, 0], xy[:, 1])
        for kind, art in self._lines.items():
            segs = []
            for man in self.manifolds.values():
                for i in range(man.n_branches):
                    if man.branch_kind[i] == kind:
                        segs += [man.curve(i), np.full((1, 2), np.nan)]
            xy = np.vstack(segs) if segs else np.zeros((0, 2))
            art.set_data(xy[:, 0], xy[:, 1])
        for t in self._labels:
            t.remove()
        self._labels = [self.ax.annotate(str(o.minimal_period), tuple(p), xytext=(4, 4), textcoords="offset points",
                                         fontsize=7) for o in self.orbits if o.minimal_period > 1 for p in o.xi]
