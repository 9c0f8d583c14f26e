"""Sweep figures: a measure against one parameter with error bars, or a 2-D parameter map."""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError


def plot_measure(ax, results, measure: str, along: str | None = None, **style) -> dict:
    """Measure with its standard error against one varied parameter.

    Parameters
    ----------
    ax : matplotlib Axes
    results : xarray.Dataset
        From :func:`flowkit.sweep.open_results`. With two or more axes, the other
        axes must be fixed first (``results.sel(...)``).
    measure : str
        Measure name (``results[measure]``, ``results[measure + "_stderr"]``).
    along : str, optional
        The parameter on the horizontal axis (default: the only one).

    Returns
    -------
    dict with ``"errorbar"``: the ErrorbarContainer.
    """
    if measure not in results:
        raise FlowkitError(f"measure '{measure}' is not in these results; they hold: "
                           f"{', '.join(v for v in results.data_vars if not v.endswith('_stderr') and v != 'done')}")
    da = results[measure]
    along = along or da.dims[0]
    if da.ndim != 1:
        raise FlowkitError(f"'{measure}' varies over {da.dims}; select the others first, e.g. results.sel(...)")
    err = results.get(f"{measure}_stderr")
    style = {"fmt": "o-", "capsize": 3, "ms": 4, **style}
    eb = ax.errorbar(da[along].values, da.values, yerr=None if err is None else np.nan_to_num(err.values), **style)
    ax.set(xlabel=along, ylabel=measure.replace("_", " "))
    return {"errorbar": eb}


def plot_measure_map(ax, results, measure: str, cmap: str = "viridis", colorbar: bool = True, **style) -> dict:
    """A measure over two varied parameters as a colour map (pcolormesh, rasterized)."""
    da = results[measure]
    if da.ndim != 2:
        raise FlowkitError(f"a map needs exactly two varied parameters; '{measure}' has {da.dims}")
    ydim, xdim = da.dims
    mesh = ax.pcolormesh(da[xdim].values, da[ydim].values, da.values, cmap=cmap, shading="nearest",
                         rasterized=True, **style)
    ax.set(xlabel=xdim, ylabel=ydim)
    out = {"mesh": mesh}
    if colorbar:
        out["colorbar"] = ax.figure.colorbar(mesh, ax=ax, label=measure.replace("_", " "))
    return out
