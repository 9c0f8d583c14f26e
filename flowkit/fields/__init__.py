"""Frozen-in fields: field vectors and their moment growth rates, material lines, flux through a surface.

Modules
-------
vectors    :func:`stretch` -> :class:`StretchResult` (field vectors, generalized Lyapunov exponents)
lines      :func:`material_line` -> :class:`LineResult` (curves from :mod:`~flowkit.fields.curves`)
flux       :func:`flux_growth` -> :class:`FluxResult` (surfaces from :mod:`~flowkit.fields.surfaces`)
results    the three result types
rates      growth rates with error bars (least-squares slopes, jackknife, block errors)
particles  flows and maps alike: checks, checkpoints, seeds, advancing particles

Flows and discrete-time maps (:mod:`flowkit.flows.maps`) are accepted alike.
"""

from flowkit.fields.curves import Curve, circle, curve, segment
from flowkit.fields.flux import flux_growth
from flowkit.fields.lines import material_line
from flowkit.fields.rates import RateEstimate, fit_slope
from flowkit.fields.results import FluxResult, LineResult, StretchResult
from flowkit.fields.surfaces import Surface, disc, patch
from flowkit.fields.vectors import stretch

__all__ = ["stretch", "StretchResult", "RateEstimate", "fit_slope", "material_line", "LineResult", "Curve",
           "segment", "circle", "curve", "flux_growth", "FluxResult", "Surface", "disc", "patch"]
