"""Plots of curves, ribbons and their topology, shaped ``plot_x(ax, result, ...) -> artists``."""

from __future__ import annotations

import numpy as np


def _curvature(P: np.ndarray) -> np.ndarray:
    """Discrete curvature at the points of a closed polygon (turning angle / mean adjacent length)."""
    seg = np.roll(P, -1, axis=0) - P
    L = np.linalg.norm(seg, axis=1)
    T = seg / L[:, None]
    c = np.clip(np.einsum("ij,ij->i", np.roll(T, 1, axis=0), T), -1, 1)
    return np.arccos(c) / (0.5 * (L + np.roll(L, 1)))


def plot_curve(ax, curve, *, color_by: str = "curvature", cmap: str = "viridis", linewidth: float = 2.0,
               colorbar: bool = True):
    """A closed curve in 3-D (``ax`` with ``projection="3d"``) coloured by its curvature.

    ``curve``: a CurveGeometry (spectral curvature), any result with ``points``, a
    ClosedCurve, or an (N, 3) array (discrete curvature).
    """
    from mpl_toolkits.mplot3d.art3d import Line3DCollection

    P = np.asarray(getattr(curve, "points", curve), dtype=float)
    kappa = np.asarray(getattr(curve, "curvature", None) if hasattr(curve, "curvature") else _curvature(P))
    Q = np.vstack([P, P[:1]])
    segs = np.stack([Q[:-1], Q[1:]], axis=1)
    lc = Line3DCollection(segs, cmap=cmap, linewidths=linewidth)
    lc.set_array(0.5 * (kappa + np.roll(kappa, -1)) if color_by == "curvature" else np.arange(len(P)))
    ax.add_collection(lc)
    lo, hi = P.min(axis=0), P.max(axis=0)
    pad = 0.05 * (hi - lo).max()
    ax.set(xlim=(lo[0] - pad, hi[0] + pad), ylim=(lo[1] - pad, hi[1] + pad), zlim=(lo[2] - pad, hi[2] + pad),
           xlabel="x", ylabel="y", zlabel="z")
    artists = [lc]
    if colorbar:
        artists.append(ax.figure.colorbar(lc, ax=ax, shrink=0.6, label="curvature"))
    return artists


def plot_ribbon(ax, ribbon, *, width: float | None = None, color="tab:orange", alpha: float = 0.8,
                edge_color="k"):
    """A ribbon as a strip between its curve and curve + width * normal (3-D axes).

    ``ribbon``: a Ribbon, a RibbonTopology, or a RibbonHistory (its final state).
    """
    from mpl_toolkits.mplot3d.art3d import Poly3DCollection

    P = np.asarray(getattr(ribbon, "points", None) if hasattr(ribbon, "points") else ribbon.positions)
    N = np.asarray(ribbon.normals)
    if width is None:
        width = 0.05 * float(np.ptp(P, axis=0).max())
    E = P + width * N
    P1, E1 = np.roll(P, -1, axis=0), np.roll(E, -1, axis=0)
    quads = np.stack([P, P1, E1, E], axis=1)
    pc = Poly3DCollection(quads, facecolors=color, edgecolors="none", alpha=alpha)
    ax.add_collection3d(pc)
    Q = np.vstack([P, P[:1]])
    (line,) = ax.plot(Q[:, 0], Q[:, 1], Q[:, 2], color=edge_color, lw=0.8)
    lo, hi = P.min(axis=0) - width, P.max(axis=0) + width
    ax.set(xlim=(lo[0], hi[0]), ylim=(lo[1], hi[1]), zlim=(lo[2], hi[2]), xlabel="x", ylabel="y", zlabel="z")
    return [pc, line]


def plot_topology_history(ax, history, *, show_error: bool = True):
    """Wr(t), Tw(t) and Lk(t) of a material ribbon (a RibbonHistory) on one axes."""
    t = history.times
    artists = []
    (a,) = ax.plot(t, history.writhe, "o-", label="Wr (writhe)")
    artists.append(a)
    if show_error:
        artists.append(ax.fill_between(t, history.writhe - history.writhe_error, history.writhe + history.writhe_error,
                                       alpha=0.3, color=a.get_color()))
    artists += ax.plot(t, history.twist, "s-", label="Tw (twist)")
    artists += ax.plot(t, history.linking, "k--", label="Lk (linking)")
    ax.set(xlabel="t", ylabel="turns")
    ax.legend(loc="best")
    return artists


def plot_helicity_density(ax, helicity, *, cmap: str = "RdBu_r", colorbar: bool = True):
    """The helicity density u . curl u on the plane stored in a Helicity result."""
    if helicity.density is None:
        from flowkit.errors import FlowkitError

        raise FlowkitError("this Helicity result holds no density plane; pass plane=(axis, offset)")
    a, b = helicity.plane["first"], helicity.plane["second"]
    d = helicity.density
    lim = float(np.nanmax(np.abs(d))) or 1.0
    im = ax.pcolormesh(a, b, d.T, cmap=cmap, vmin=-lim, vmax=lim, shading="auto")
    names = "xyz"
    ax0, ax1, k = (int(v) for v in helicity.plane["axes"])
    ax.set(xlabel=names[ax0], ylabel=names[ax1], aspect="equal",
           title=f"u . curl u on {names[k]} = {float(helicity.plane['offset']):g}")
    artists = [im]
    if colorbar:
        artists.append(ax.figure.colorbar(im, ax=ax, label="helicity density"))
    return artists
