"""Figures of dynamo results: ``plot_x(ax, result, ...) -> artists``, composable into panels."""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError

_AXES = {"x": 0, "y": 1, "z": 2}


def mode_slice(result, axis: str = "z", position: float = 0.0, part: str = "real"):
    """The plane ``axis = position`` of a result's mode.

    Returns ``(h, v, B_h, B_v, magnitude, labels)``: in-plane coordinates, in-plane
    field components (arrays indexed ``[v, h]``), ``|B|`` including the normal
    component, and the axis labels.
    """
    if result.mode is None:
        raise FlowkitError("this result has no mode on the grid; compute it with keep_mode=True")
    if axis not in _AXES:
        raise FlowkitError(f"`axis` must be 'x', 'y' or 'z'; got {axis!r}")
    if part not in ("real", "imag"):
        raise FlowkitError(f"`part` must be 'real' or 'imag'; got {part!r}")
    field = result.mode[0 if part == "real" else 1]
    n = field.shape[-1]
    a = _AXES[axis]
    index = int(round((position % (2 * np.pi)) / (2 * np.pi) * n)) % n
    plane = np.take(field, index, axis=a + 1)  # (3, n, n), remaining axes in x, y, z order
    hv = [i for i in range(3) if i != a]
    names = "xyz"
    x = 2 * np.pi * np.arange(n) / n
    bh, bv = plane[hv[0]].T, plane[hv[1]].T  # transpose: rows = vertical coordinate
    mag = np.sqrt(np.sum(plane**2, axis=0)).T
    return x, x, bh, bv, mag, (names[hv[0]], names[hv[1]])


def plot_mode_slice(ax, result, axis: str = "z", position: float = 0.0, part: str = "real",
                    cmap: str = "magma", density: float = 1.2, line_color: str = "white",
                    colorbar: bool = True, plane: str | None = None, resolution: int = 64, **imshow_kw) -> dict:
    """Plot ``|B|`` of the leading mode on a plane, with in-plane field lines.

    Parameters
    ----------
    ax : matplotlib Axes
    result : GrowthResult
        With a mode (``keep_mode=True``).
    axis : {"x", "y", "z"}
        Normal of the slice; ``position`` is its coordinate in ``[0, 2 pi)``.
    part : {"real", "imag"}
        Which part of an oscillating mode.
    cmap, density, line_color, colorbar, **imshow_kw
        Styling: colour map of ``|B|``, streamline density and colour.

    plane : {"meridional", "equatorial"}, optional
        Ball results: the ``y = 0`` meridional disk or the ``z = 0`` equatorial disk
        (default: meridional), sampled
        on ``resolution`` x ``resolution`` points.

    Returns
    -------
    dict
        ``{"image": AxesImage, "lines": StreamplotSet, "colorbar": Colorbar or None}``.
    """
    if getattr(result, "domain", "box") == "ball":
        return _plot_ball_slice(ax, result, plane or "meridional", part, cmap, density, line_color, colorbar,
                                resolution, **imshow_kw)
    h, v, bh, bv, mag, (lh, lv) = mode_slice(result, axis, position, part)
    image = ax.imshow(mag, origin="lower", extent=(0, 2 * np.pi, 0, 2 * np.pi), cmap=cmap,
                      interpolation="bilinear", **imshow_kw)
    lines = ax.streamplot(h, v, bh, bv, color=line_color, density=density, linewidth=0.7,
                          arrowsize=0.7)
    ax.set(xlim=(0, 2 * np.pi), ylim=(0, 2 * np.pi), xlabel=lh, ylabel=lv,
           title=f"{part} part, {axis} = {position:.2f}, Rm = {result.rm:g}"
                 + ("" if getattr(result, "kz", None) is None else f", kz = {result.kz:g}"))
    ax.set_aspect("equal")
    cbar = ax.figure.colorbar(image, ax=ax, label="|B|") if colorbar else None
    return {"image": image, "lines": lines, "colorbar": cbar}


def _plot_ball_slice(ax, result, plane, part, cmap, density, line_color, colorbar, resolution, **imshow_kw):
    """|B| of a ball mode on a disk with in-plane field lines and the sphere's outline."""
    from flowkit.dynamo.sphere.mode import ball_slice

    h, v, bh, bv, mag, (lh, lv) = ball_slice(result, plane, part, resolution)
    image = ax.imshow(mag, origin="lower", extent=(-1, 1, -1, 1), cmap=cmap, interpolation="bilinear",
                      **imshow_kw)
    lines = ax.streamplot(h, v, np.nan_to_num(bh), np.nan_to_num(bv), color=line_color, density=density,
                          linewidth=0.7, arrowsize=0.7)
    t = np.linspace(0, 2 * np.pi, 200)
    ax.plot(np.cos(t), np.sin(t), color="0.3", lw=0.8)
    m = result.diagnostics.get("m")
    ax.set(xlim=(-1.02, 1.02), ylim=(-1.02, 1.02), xlabel=lh, ylabel=lv,
           title=f"{plane} plane, {part} part, Rm = {result.rm:g}" + ("" if m is None else f", m = {m}"))
    ax.set_aspect("equal")
    cbar = ax.figure.colorbar(image, ax=ax, label="|B|") if colorbar else None
    return {"image": image, "lines": lines, "colorbar": cbar}


def plot_growth_curve(ax, sweep, critical=None, color: str = "C0", **line_kw) -> dict:
    """Growth rate against ``Rm`` (an :class:`RmSweep`) or against ``kz`` (a :class:`KzScan`),
    with resolution error bars; optional critical-``Rm`` marker.

    Returns ``{"line": ErrorbarContainer, "zero": Line2D, "critical": artist or None}``.
    """
    by_kz = getattr(sweep, "axis", "rm") == "kz"
    x = np.asarray(sweep.kz if by_kz else sweep.rm)
    err = np.nan_to_num(np.asarray(sweep.error_estimate, dtype=float), nan=0.0)
    line = ax.errorbar(x, sweep.growth_rate, yerr=err, marker="o", color=color, capsize=2, **line_kw)
    zero = ax.axhline(0.0, color="0.5", lw=0.8, ls="--")
    mark = None
    if critical is not None:
        mark = ax.axvspan(critical.rm_critical - critical.uncertainty, critical.rm_critical + critical.uncertainty,
                          color="C3", alpha=0.25, label=f"Rm_c = {critical.rm_critical:.3f}")
    if by_kz:
        ax.set(xlabel="vertical wavenumber kz", ylabel="growth rate", title=f"Rm = {sweep.rm:g}")
    else:
        ax.set(xlabel="magnetic Reynolds number Rm", ylabel="growth rate")
    return {"line": line, "zero": zero, "critical": mark}
