"""All periodic orbits of period <= k in a region: Newton from a seed grid, duplicates merged.

Every grid seed (inside the domain, returning to the section) starts a batched
Newton run for each period 1..k. Converged points are grouped into orbits: two
points belong to the same orbit when one is within ``merge`` of a point of the
other's orbit; an orbit is kept once, under its minimal period (a period-1
point found again as a fixed point of P^2 is the same orbit).
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.sections.geometry import Plane, Stroboscopic
from flowkit.sections.periodic import newton, make_map
from flowkit.validation import count, positive


def scan_periodic_orbits(flow, section: Plane | Stroboscopic | None = None, *, region=None, grid: int = 20,
                         max_period: int = 3, tol: float = 1e-10, max_iter: int = 15, merge: float | None = None,
                         rtol: float = 1e-12, atol: float = 1e-12, max_time: float | None = None,
                         parabolic_tol: float = 1e-6, threads: int | None = None, progress: bool = False):
    """Find the periodic orbits of period <= ``max_period`` seeded from a grid over ``region``.

    Parameters
    ----------
    flow, section : as for :func:`~flowkit.sections.periodic.find_periodic_orbit`.
    region : (u_min, u_max, v_min, v_max), optional
        Seed rectangle in section coordinates (default: the unit disc's square for the
        ball, [0, 2 pi]^2 for the box, [-1, 1]^2 otherwise). Seeds outside the domain are dropped.
    grid : int
        Seeds per direction (grid x grid).
    max_period : int
        Largest number of returns k.
    merge : float, optional
        Distance below which two periodic points are one (default 1e-6 x region size).

    Returns
    -------
    OrbitSet
    """
    from flowkit.sections.orbit_results import OrbitSet, PeriodicOrbit

    rm = make_map(flow, section, rtol=rtol, atol=atol, max_time=max_time)
    if rm.dim != 2:
        raise FlowkitError("a scan seeds a 2-D grid; this stroboscopic map acts on 3-D states (the flow depends "
                           "on the coordinate along the view normal); use find_periodic_orbit from 3-D starts")
    grid = count(grid, "grid", minimum=2)
    max_period = count(max_period, "max_period", what=" (largest period to look for)")
    if region is None:
        region = (-1.0, 1.0, -1.0, 1.0) if flow.domain != "periodic" else (0.0, 2 * np.pi, 0.0, 2 * np.pi)
    region = tuple(float(r) for r in region)
    if len(region) != 4 or not (region[1] > region[0] and region[3] > region[2]):
        raise FlowkitError(f"`region` must be (u_min, u_max, v_min, v_max) with max > min; got {region!r}")
    size = max(region[1] - region[0], region[3] - region[2])
    merge = positive(merge, "merge") if merge is not None else 1e-6 * size
    frac = (np.arange(grid) + 0.5) / grid  # cell centres keep seeds off the region's edges
    U, V = np.meshgrid(region[0] + frac * (region[1] - region[0]), region[2] + frac * (region[3] - region[2]))
    seeds = np.stack([U.ravel(), V.ravel()], axis=1)
    seeds = seeds[flow.contains(rm.embed(seeds))]
    if seeds.shape[0] == 0:
        raise FlowkitError(f"no seed of `region` {region} lies inside the domain of '{flow.name}'")
    found: list = []
    tried = 0
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=max_period, desc="scan periods", unit="period")
    for k in range(1, max_period + 1):
        run = newton(rm, seeds, k, tol=tol, max_iter=max_iter, threads=threads)
        tried += seeds.shape[0]
        for i in np.flatnonzero(run.converged):
            if any(_same(o, run.xi[i], merge) for o in found):
                continue
            orb = PeriodicOrbit.from_newton(rm, seeds[i], run, k, parabolic_tol, index=i, prov={})
            if not orb.converged or orb.minimal_period != k:
                continue  # a lower-period orbit not seen at its own period: it would be found there
            found.append(orb)
        if bar is not None:
            bar.update(1)
    if bar is not None:
        bar.close()
    prov = rm.flow.provenance()
    prov.update(return_map=rm.describe(), region=list(region), grid=grid, max_period=max_period, tol=tol,
                merge=merge, seeds_tried=tried)
    return OrbitSet.from_orbits(found, prov)


def _same(orbit, xi: np.ndarray, merge: float) -> bool:
    return bool(np.min(np.linalg.norm(orbit.xi - xi[None], axis=1)) <= merge)
