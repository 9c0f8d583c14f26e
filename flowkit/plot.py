"""Publication figures: each helper takes an ``ax`` and a result and returns its artists.

Helpers are shaped ``plot_thing(ax, result, **style) -> artists`` so they compose
into multi-panel figures. Each part of the package keeps its helpers in its own
clearly headed block below.
"""

from __future__ import annotations

import numpy as np


# ======================================================================================
# Lyapunov exponents and FTLE fields (flowkit.chaos)
# ======================================================================================
def _plane_axis_labels(plane: dict) -> tuple[str, str]:
    """Axis names for a grid plane: coordinate names when the axes are coordinate axes."""
    names = []
    for key, sym in (("u", "s"), ("v", "r")):
        vec = np.asarray(plane[key], dtype=float)
        hit = np.flatnonzero(np.isclose(np.abs(vec), 1.0))
        names.append("xyz"[hit[0]] if hit.size == 1 else f"{sym} along ({', '.join(f'{c:.3g}' for c in vec)})")
    return names[0], names[1]


def plot_ftle(ax, field, *, cmap: str = "magma", colorbar: bool = True, vmin=None, vmax=None,
              bad_color: str = "0.85", **style) -> dict:
    """Draw an :class:`~flowkit.chaos.FTLEField` as an image with a colorbar.

    Grid points outside the domain or whose orbit failed are NaN and shown in
    ``bad_color``. Extra keyword arguments go to ``ax.imshow``. The image is
    rasterized (the axes stay vector in PDF output).

    Returns
    -------
    dict
        ``{"image": AxesImage, "colorbar": Colorbar or None}``.
    """
    import matplotlib as mpl

    cm = mpl.colormaps[cmap].with_extremes(bad=bad_color)
    s, r = field.s, field.r
    ds = (s[-1] - s[0]) / max(len(s) - 1, 1) / 2
    dr = (r[-1] - r[0]) / max(len(r) - 1, 1) / 2
    img = ax.imshow(np.ma.masked_invalid(field.values), origin="lower", cmap=cm, vmin=vmin, vmax=vmax,
                    extent=(s[0] - ds, s[-1] + ds, r[0] - dr, r[-1] + dr), interpolation="nearest",
                    rasterized=True, **style)
    xl, yl = _plane_axis_labels(field.plane)
    label = field.plane.get("label", "")
    short = label if len(label) <= 24 else ""  # a coordinate plane ("z = 0"); general planes are in the axis labels
    ax.set(xlabel=xl, ylabel=yl, title=f"{field.direction} FTLE, T = {field.time:g}" + (f" ({short})" if short else ""))
    ax.set_aspect("equal")
    cbar = None
    if colorbar:
        cbar = ax.figure.colorbar(img, ax=ax, shrink=0.85)
        cbar.set_label(f"{field.direction} FTLE (1/time)")
    return {"image": img, "colorbar": cbar}


def plot_lyapunov_running(ax, spectrum, **style) -> list:
    """Running estimate of each exponent of a :class:`~flowkit.chaos.Spectrum` vs time.

    A dashed line per exponent marks the final estimate; the shaded band is
    ± 2 standard errors.
    """
    lines = []
    for i in range(spectrum.running.shape[1]):
        (ln,) = ax.plot(spectrum.times, spectrum.running[:, i], label=f"λ{i + 1}", **style)
        e, s = spectrum.exponents[i], spectrum.stderr[i]
        ax.axhline(e, color=ln.get_color(), ls="--", lw=0.8)
        ax.axhspan(e - 2 * s, e + 2 * s, color=ln.get_color(), alpha=0.15, lw=0)
        lines.append(ln)
    ax.set(xlabel="time", ylabel="running estimate", xscale="log")
    ax.legend(loc="best")
    return lines


# ======================================================================================
# Poincaré sections (flowkit.sections.Section)
# ======================================================================================
import math  # noqa: E402  (imports of this block kept with it)

from flowkit.errors import FlowkitError  # noqa: E402


def _orbit_colors(n: int, cmap) -> np.ndarray:
    """One distinct colour per orbit: a qualitative map for few orbits, a cyclic one beyond."""
    import matplotlib as mpl

    if cmap is None:
        cmap = "tab10" if n <= 10 else ("tab20" if n <= 20 else "hsv")
    cm = mpl.colormaps[cmap] if isinstance(cmap, str) else cmap
    if getattr(cm, "N", 256) < 64:  # qualitative map: take its entries in order
        return np.array([cm(i % cm.N) for i in range(n)])
    return cm(np.linspace(0.0, 1.0, n, endpoint=False) if n > 1 else [0.0])


def section_boundary(section) -> tuple[np.ndarray, np.ndarray] | None:
    """In-plane outline of the domain in the section plane (unit ball: a circle), or None."""
    geom = section.geometry
    if section.provenance.get("domain") != "ball" or geom.get("kind") != "plane":
        return None
    rad2 = 1.0 - geom["offset"] ** 2
    if rad2 <= 0:
        return None
    phi = np.linspace(0.0, 2 * math.pi, 361)
    return math.sqrt(rad2) * np.cos(phi), math.sqrt(rad2) * np.sin(phi)


def plot_section(
    ax,
    section,
    color_by=None,
    *,
    cmap=None,
    size: float = 0.6,
    boundary: bool = True,
    colorbar: bool = True,
    rasterized: bool = True,
    labels: bool = True,
    skeleton=None,
    **scatter_kw,
) -> list:
    """Draw a Poincaré section on ``ax``; return the artists.

    Parameters
    ----------
    ax : matplotlib Axes
    section : Section
    color_by : None, "orbit", str or array (n_orbits,)
        None or "orbit": one colour per orbit. A name: a per-orbit value attached
        with ``section.attach(name, values)`` (e.g. a chaos indicator), mapped
        through ``cmap``. An array: per-orbit values given directly.
    cmap : str or Colormap, optional
        Colour map (qualitative default for orbits, "viridis" for values).
    size : float
        Marker area in points^2 (small: sections have many points).
    boundary : bool
        Draw the domain's outline in the plane (unit ball: a circle), as a vector line.
    colorbar : bool
        Add a colour bar when colouring by value.
    rasterized : bool
        Rasterize the point layer (keep True for PDFs with many points).
    labels : bool
        Label the axes with the in-plane directions and set equal aspect.
    skeleton : PeriodicOrbit, OrbitSet, Manifold or a list of them, optional
        Periodic orbits marked by type and manifolds drawn as curves on top
        (:mod:`flowkit.sections.plot_skeleton` names the marks; they go in the legend).
    **scatter_kw
        Passed to :meth:`matplotlib.axes.Axes.scatter`.

    Returns
    -------
    list of Artist
        The point layer (a PathCollection) first, then the outline and colour bar if drawn.
    """
    uv = section.display_coords()
    artists = []
    values = None
    if color_by is None or (isinstance(color_by, str) and color_by == "orbit"):
        colors = _orbit_colors(section.n_orbits, cmap)[section.orbit] if section.crossings_total else "k"
        kw = {"c": colors}
    else:
        if isinstance(color_by, str):
            if color_by not in section.orbit_values:
                known = ", ".join(section.orbit_values) or "(none attached)"
                raise FlowkitError(f"`color_by` {color_by!r} is not an attached per-orbit value; known: {known}. "
                                   "Attach one with section.attach(name, values).")
            values = np.asarray(section.orbit_values[color_by], dtype=np.float64)
        else:
            values = np.asarray(color_by, dtype=np.float64)
            if values.shape != (section.n_orbits,):
                raise FlowkitError(f"`color_by` array must have one value per orbit ({section.n_orbits}); got shape {values.shape}")
        finite = values[np.isfinite(values)]
        kw = {"c": values[section.orbit], "cmap": cmap or "viridis",
              "vmin": float(finite.min()) if finite.size else None, "vmax": float(finite.max()) if finite.size else None}
    kw.update(s=size, linewidths=0, marker="o")
    kw.update(scatter_kw)
    pts = ax.scatter(uv[:, 0], uv[:, 1], **kw)
    pts.set_rasterized(rasterized)
    artists.append(pts)
    if boundary:
        outline = section_boundary(section)
        if outline is not None:
            (line,) = ax.plot(*outline, color="0.3", lw=0.8)
            artists.append(line)
    if values is not None and colorbar:
        cb = ax.figure.colorbar(pts, ax=ax, shrink=0.85)
        cb.set_label(color_by if isinstance(color_by, str) else "per-orbit value")
        artists.append(cb)
    if labels:
        e1, e2 = section.geometry["e1"], section.geometry["e2"]
        ax.set_xlabel(f"u along {_vec_label(e1)}")
        ax.set_ylabel(f"v along {_vec_label(e2)}")
        ax.set_aspect("equal", adjustable="box")
    if skeleton is not None:
        from flowkit.sections.plot_skeleton import plot_skeleton

        artists += plot_skeleton(ax, skeleton)
    return artists


def _vec_label(e) -> str:
    names = "xyz"
    nz = [i for i in range(3) if abs(e[i]) > 1e-12]
    if len(nz) == 1:
        return ("-" if e[nz[0]] < 0 else "") + names[nz[0]]
    return "(" + ", ".join(f"{c:.3g}" for c in e) + ")"


# ======================================================================================
# Frozen-in fields: growth curves and material lines
# (flowkit.fields: StretchResult, LineResult, FluxResult)
# ======================================================================================
import math  # noqa: E402,F811  (this block's imports kept with it)

from flowkit.errors import FlowkitError  # noqa: E402,F811


def _growth_curves(result, p) -> list:
    """(label, t, y, band, RateEstimate) for each curve of a frozen-in-field result."""
    kind = type(result).__name__
    t = np.asarray(result.times, dtype=float)
    if kind == "StretchResult":
        orders = list(result.p) if p is None else [float(q) for q in np.atleast_1d(p)]
        out = [("<ln|B|>", t, result.mean_log, result.mean_log_stderr, result.field_rate)]
        for q in orders:
            j = int(np.flatnonzero(np.isclose(result.p, q))[0]) if np.any(np.isclose(result.p, q)) else None
            if j is None:
                raise FlowkitError(f"no moment of order {q} in this result; it has p = {list(result.p)}")
            out.append((f"ln<|B|^{q:g}>", t, result.log_moments[:, j], result.log_moments_stderr[:, j],
                        result.rate(q)))
        return out
    if kind == "LineResult":
        return [("ln L (material line)", t, np.log(result.lengths), np.abs(result.length_error), result.rate)]
    if kind == "FluxResult":
        with np.errstate(divide="ignore", invalid="ignore"):
            net = result.log_unsigned + np.log(np.abs(result.ratio))
            band = result.ratio_stderr / np.abs(result.ratio)
        return [("ln(unsigned flux)", t, result.log_unsigned, np.zeros_like(t), result.unsigned_rate),
                ("ln|net flux|", t, net, band, result.flux_rate)]
    raise FlowkitError(f"plot_growth takes a StretchResult, LineResult or FluxResult; got {kind}")


def plot_growth(ax, result, *, p=None, bands: bool = True, fits: bool = True, window: bool = True,
                colors=None, **line_kw) -> list:
    """Growth curves with their error bands and fitted straight lines (with the rate's band).

    Parameters
    ----------
    ax : matplotlib Axes
    result : StretchResult, LineResult or FluxResult
        Stretching statistics (<ln|B|> and ln<|B|^p>), a material line (ln L) or
        a flux history (ln of unsigned and of |net| flux).
    p : float or sequence, optional
        Moment orders to draw (StretchResult; default all).
    bands : bool
        Shade +- one standard error around each curve (relative errors for lengths and net flux).
    fits : bool
        Draw the fitted line over its window, slope = the reported rate, shaded by +- its standard error.
    window : bool
        Shade the fit window.
    colors : sequence, optional
        One colour per curve.
    **line_kw
        Passed to ``ax.plot`` for the curves.

    Returns
    -------
    list of artists
    """
    curves = _growth_curves(result, p)
    colors = colors or [f"C{i}" for i in range(len(curves))]
    artists = []
    if window and curves:
        win = curves[-1][4].window
        artists.append(ax.axvspan(win[0], win[1], color="0.93", zorder=0, label="fit window"))
    for (label, t, y, band, rate), color in zip(curves, colors):
        ok = np.isfinite(y)
        (ln,) = ax.plot(t[ok], y[ok], color=color, label=label, **line_kw)
        artists.append(ln)
        if bands and np.any(np.isfinite(band[ok]) & (band[ok] > 0)):
            e = np.where(np.isfinite(band), band, 0.0)[ok]
            artists.append(ax.fill_between(t[ok], y[ok] - e, y[ok] + e, color=color, alpha=0.2, lw=0))
        if fits and math.isfinite(rate.value):
            a, b = rate.window
            sel = ok & (t >= a - 1e-12 * max(1.0, abs(a))) & (t <= b + 1e-12 * max(1.0, abs(b)))
            if sel.sum() >= 2:
                tm = t[sel].mean()
                y0 = y[sel].mean()  # least-squares line through the centroid, slope = rate
                tt = np.linspace(a, b, 50)
                (fl,) = ax.plot(tt, y0 + rate.value * (tt - tm), color=color, ls="--", lw=1.0,
                                label=f"rate {rate.value:.4g} ± {rate.stderr:.2g}")
                artists.append(fl)
                if bands and math.isfinite(rate.stderr):
                    spread = rate.stderr * np.abs(tt - tm)
                    artists.append(ax.fill_between(tt, y0 + rate.value * (tt - tm) - spread,
                                                   y0 + rate.value * (tt - tm) + spread, color=color, alpha=0.12,
                                                   lw=0))
    units = getattr(result, "units", "per unit time")
    ax.set_xlabel("iteration" if units == "per iteration" else "time")
    ax.set_ylabel("log of growing quantity")
    return artists


def plot_material_line(ax, result, *, times=None, cmap: str = "viridis", max_jump: float | None = None,
                       **line_kw) -> list:
    """A material line drawn in 3-D at several times (the stored snapshots of a LineResult).

    Parameters
    ----------
    ax : 3-D Axes (``fig.add_subplot(projection="3d")``)
    result : LineResult
    times : sequence of float, optional
        Draw the snapshots nearest these times (default: every stored snapshot).
    cmap : str
        Colour map over time.
    max_jump : float, optional
        Break the polyline where consecutive points are farther apart than this
        (wrap-around on a torus, cuts of a discontinuous map). Default: 0.5 for
        maps (half the unit cell), no breaks for flows.
    **line_kw
        Passed to ``ax.plot``.

    Returns
    -------
    list of artists
    """
    from matplotlib import colormaps

    if type(result).__name__ != "LineResult":
        raise FlowkitError(f"plot_material_line takes a LineResult; got {type(result).__name__}")
    if getattr(ax, "name", "") != "3d":
        raise FlowkitError("plot_material_line needs 3-D axes: fig.add_subplot(projection='3d')")
    snaps = list(result.snapshots)
    if times is not None:
        st = np.array([t for t, _ in snaps])
        snaps = [snaps[int(np.argmin(np.abs(st - t)))] for t in np.atleast_1d(times)]
    if max_jump is None and result.units == "per iteration":
        max_jump = 0.5
    tmax = max((t for t, _ in snaps), default=1.0) or 1.0
    cm = colormaps[cmap]
    artists = []
    for t, pts in snaps:
        P = np.array(pts, dtype=float)
        if max_jump is not None and len(P) > 1:
            jump = np.flatnonzero(np.linalg.norm(np.diff(P, axis=0), axis=1) > max_jump)
            P = np.insert(P, jump + 1, np.nan, axis=0)
        kw = {"lw": 0.6, "color": cm(t / tmax)}
        kw.update(line_kw)
        (ln,) = ax.plot(P[:, 0], P[:, 1], P[:, 2], label=f"t = {t:g}", **kw)
        artists.append(ln)
    ax.set(xlabel="x", ylabel="y", zlabel="z")
    return artists
