"""What the ball solver must know about a flow before it starts, with errors that name the fix.

- the domain is the unit ball (a box flow goes to the periodic solver, an unbounded
  one is refused: there is no boundary to put the insulator on);
- ``u . n = 0`` on ``r = 1`` (the induction equation with an insulating exterior
  assumes no fluid crosses the surface);
- the angular degree ``d`` of the Cartesian velocity components (measured by
  projecting them on spherical harmonics on three spheres), which sizes the
  dealiased grid and sets the smallest meaningful truncation;
- whether the flow is axisymmetric about ``z`` (then every order ``m`` decouples).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from flowkit.dynamo.sphere.harmonics import SphereGrid
from flowkit.errors import FlowkitError

#: Degree up to which the flow's angular content is measured.
PROBE_DEGREE = 24
_PROBE_RADII = (0.37, 0.71, 1.0)


@dataclass
class FlowFacts:
    degree: int
    axisymmetric: bool
    max_speed: float
    surface_normal_speed: float
    radial_degree: int | None


def check_ball_flow(flow) -> None:
    """Refuse flows that are not confined in the unit ball."""
    domain = getattr(flow, "domain", None)
    if domain == "ball":
        return
    if domain == "unbounded":
        raise FlowkitError(
            f"flow '{flow.name}' is unbounded (domain='unbounded'): the sphere dynamo needs a flow confined in "
            "the unit ball with u.n = 0 on r = 1. Build it with flowkit.lamb_flow(...) or "
            "flowkit.custom_flow(..., domain='ball'), or use a periodic flow for the box solver")
    raise FlowkitError(f"flow '{getattr(flow, 'name', flow)}' has domain {domain!r}; the sphere dynamo needs "
                       "domain='ball'")


def probe_flow(flow, t: float = 0.0) -> FlowFacts:
    """Measure degree, axisymmetry and surface normal speed of a ball flow (see the module docstring)."""
    L = PROBE_DEGREE
    grid = SphereGrid(L, range(-L, L + 1), L + 2, 2 * L + 4)
    pts = grid.points(np.array(_PROBE_RADII))
    u = flow.velocity(pts.reshape(-1, 3), t).reshape(pts.shape)
    if not np.all(np.isfinite(u)):
        raise FlowkitError(f"flow '{flow.name}' gives non-finite velocities inside the unit ball; fix its formula")
    umax = float(np.abs(u).max())
    rhat, that, phat = grid.frames()
    ur = np.einsum("atpc,tpc->atp", u, rhat)
    normal = float(np.abs(ur[-1]).max())
    power = np.zeros(L + 1)
    zero = np.zeros_like(ur)
    for c in range(3):
        cr, _, _ = grid.analyse_vector(u[..., c].astype(complex), zero, zero)
        power = np.maximum(power, np.abs(cr).max(axis=(0, 2)))  # (M, L+1, R) -> per degree
    significant = np.flatnonzero(power > 1e-9 * max(power.max(), 1e-300))
    degree = int(significant.max()) if significant.size else 0
    comps = [ur, np.einsum("atpc,tpc->atp", u, that), np.einsum("atpc,tpc->atp", u, phat)]
    spread = max(float(np.abs(c - c[..., :1]).max()) for c in comps)
    axisymmetric = spread <= 1e-10 * max(umax, 1e-300)
    structure = getattr(flow.family, "structure", {}) or {}
    radial = degree if structure.get("representation") == "Lamb harmonic coefficients" else None
    return FlowFacts(degree, axisymmetric, umax, normal, radial)


def check_facts(flow, facts: FlowFacts, lmax: int, n: int) -> None:
    """Refuse a flow crossing the surface or a truncation too small for the flow's degree."""
    if facts.surface_normal_speed > 1e-8 * max(facts.max_speed, 1e-300):
        raise FlowkitError(
            f"flow '{flow.name}' crosses the sphere: max |u.n| on r = 1 is {facts.surface_normal_speed:.3g} "
            f"(max |u| = {facts.max_speed:.3g}); the insulating-sphere dynamo needs u.n = 0 on r = 1. "
            "Build the flow with flowkit.lamb_flow or flowkit.surface_flow (they satisfy it), or fix the formula")
    if facts.degree >= PROBE_DEGREE - 1:
        raise FlowkitError(
            f"flow '{flow.name}' is not band-limited in angle (content above degree {PROBE_DEGREE - 2}); the "
            "transform grid cannot be sized for it. Use a flow with finite harmonic content")
    need_l = max(2, facts.degree + 2)
    need_n = max(6, (facts.radial_degree or 0) + 4)
    if lmax < need_l or n < need_n:
        raise FlowkitError(
            f"`resolution` = ({lmax}, {n}) is too small for flow '{flow.name}' (angular degree {facts.degree}): "
            f"it couples degree l to l +- {facts.degree}; use at least resolution=({max(need_l, lmax)}, "
            f"{max(need_n, n)}), better (L, N) >= ({need_l + 8}, {need_n + 8})")
