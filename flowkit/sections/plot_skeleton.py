"""Plots of the section skeleton: periodic orbits marked by type, manifolds as curves,
continuation curves and rotation-number profiles. Each helper is ``plot_x(ax, result) -> artists``.

Marks (also in the legend): elliptic - open green circle, hyperbolic - red cross,
parabolic - orange square, attracting - blue down-triangle, repelling - purple up-triangle.
Unstable manifolds are red curves, stable ones blue, homoclinic points black dots.
"""

from __future__ import annotations

import numpy as np

#: marker style per orbit type
MARKS = {
    "elliptic": dict(marker="o", mfc="none", mec="tab:green", ms=7, mew=1.6),
    "hyperbolic": dict(marker="x", color="tab:red", ms=7, mew=1.8),
    "parabolic": dict(marker="s", mfc="none", mec="tab:orange", ms=6, mew=1.5),
    "attracting": dict(marker="v", color="tab:blue", ms=6),
    "repelling": dict(marker="^", color="tab:purple", ms=6),
}
_SYMBOL = {"elliptic": "o", "hyperbolic": "x", "parabolic": "square", "attracting": "down-triangle",
           "repelling": "up-triangle"}


def _display(xi: np.ndarray, prov: dict) -> np.ndarray:
    if (prov or {}).get("domain") == "periodic":
        return np.mod(xi, 2 * np.pi)
    return xi


def _orbit_list(orbits):
    """(type, period, points) for a PeriodicOrbit, an OrbitSet or a list of PeriodicOrbits."""
    if hasattr(orbits, "orbit_points"):
        return [(str(orbits.type[i]), int(orbits.period[i]), orbits.orbit_points(i), orbits.provenance)
                for i in range(len(orbits))]
    items = orbits if isinstance(orbits, (list, tuple)) else [orbits]
    return [(o.type, int(o.minimal_period), o.xi, o.provenance) for o in items if o.converged]


def plot_periodic_orbits(ax, orbits, *, label_periods: bool = True, legend_labels: bool = True) -> list:
    """Mark periodic orbits by type (see the module notes for the marks); return the artists.

    ``label_periods`` writes the period next to each orbit of period > 1.
    """
    artists = []
    seen = set()
    for kind, period, pts, prov in _orbit_list(orbits):
        uv = _display(pts, prov)
        style = MARKS.get(kind, dict(marker="+", color="k"))
        lab = None
        if legend_labels and kind not in seen:
            lab = f"{kind} ({_SYMBOL.get(kind, '+')})"
            seen.add(kind)
        (ln,) = ax.plot(uv[:, 0], uv[:, 1], ls="none", label=lab, zorder=5, **style)
        artists.append(ln)
        if label_periods and period > 1:
            for u, v in uv:
                artists.append(ax.annotate(str(period), (u, v), xytext=(4, 4), textcoords="offset points",
                                           fontsize=7, color=style.get("mec", style.get("color", "k"))))
    return artists


def plot_manifold(ax, manifold, *, lw: float = 0.8, homoclinic: bool = True) -> list:
    """Draw the branches of a Manifold (unstable red, stable blue) and its homoclinic points."""
    artists = []
    labelled = set()
    for i in range(manifold.n_branches):
        kind = str(manifold.branch_kind[i])
        c = manifold.curve(i)
        color = "tab:red" if kind == "unstable" else "tab:blue"
        lab = f"{kind} manifold" if kind not in labelled else None
        labelled.add(kind)
        (ln,) = ax.plot(c[:, 0], c[:, 1], color=color, lw=lw, label=lab, zorder=3)
        artists.append(ln)
    if homoclinic and manifold.intersections.shape[0]:
        (pts,) = ax.plot(*manifold.intersections.T, ls="none", marker=".", ms=3, color="k",
                         label="homoclinic points", zorder=4)
        artists.append(pts)
    return artists


def plot_skeleton(ax, skeleton) -> list:
    """Orbits and manifolds given as one result or a list of them (used by ``plot_section``)."""
    items = skeleton if isinstance(skeleton, (list, tuple)) else [skeleton]
    artists = []
    for item in items:
        if hasattr(item, "branch_kind"):
            artists += plot_manifold(ax, item)
        else:
            artists += plot_periodic_orbits(ax, item)
    return artists


def plot_continuation(ax, curve) -> list:
    """tr DP^k against the parameter, with the lines tr = +-2 and the located bifurcations."""
    ok = curve.converged
    artists = list(ax.plot(curve.values[ok], curve.trace[ok], "-o", ms=3, color="k", label="tr DP^k"))
    for level in (2.0, -2.0):
        artists.append(ax.axhline(level, color="0.6", lw=0.8, ls="--"))
    for b in curve.bifurcations:
        artists += ax.plot([b["parameter"]], [2.0 if b["kind"].startswith("tangent") else -2.0], "r*", ms=10)
    ax.set_xlabel(curve.parameter)
    ax.set_ylabel(f"trace of DP^{curve.period}")
    return artists


def plot_rotation(ax, profile) -> list:
    """Rotation number against distance from the island centre."""
    artists = list(ax.plot(profile.distance, profile.rotation, ".-", color="k"))
    ax.set_xlabel("distance from the island centre")
    ax.set_ylabel(f"rotation number (turns per P^{profile.period})")
    return artists
