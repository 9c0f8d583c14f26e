"""Publication figures: each helper takes an ``ax`` and a result and returns its artists.

Helpers are shaped ``plot_thing(ax, result, **style) -> artists`` so they compose
into multi-panel figures. Each part of the package keeps its helpers in its own
clearly headed block below.
"""

from __future__ import annotations

import numpy as np


# ======================================================================================
# Lyapunov exponents and FTLE fields (flowkit.lyapunov, flowkit.ftle)
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
    """Draw an :class:`~flowkit.ftle.FTLEField` as an image with a colorbar.

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
    ax.set(xlabel=xl, ylabel=yl, title=f"{field.direction} FTLE, T = {field.time:g}" + (f" ({label})" if label else ""))
    ax.set_aspect("equal")
    cbar = None
    if colorbar:
        cbar = ax.figure.colorbar(img, ax=ax, shrink=0.85)
        cbar.set_label(f"{field.direction} FTLE (1/time)")
    return {"image": img, "colorbar": cbar}


def plot_lyapunov_running(ax, spectrum, **style) -> list:
    """Running estimate of each exponent of a :class:`~flowkit.lyapunov.Spectrum` vs time.

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
