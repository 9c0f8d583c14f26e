"""Cells of notebooks/periodic_orbits.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# The skeleton of the stirred droplet's section

A liquid-metal droplet stirred by a stretch-twist-fold flow and spun about *y*
(`stf` with parameter `rotation`). Its Poincaré section on the plane *y* = 0 is
read through its skeleton: the elliptic periodic orbits at the centres of the
islands, the hyperbolic ones between them, and the stable and unstable
manifolds of the hyperbolic orbits, whose tangle is the chaotic sea.

Periodic orbits are found by Newton's method on P^k(ξ) − ξ with the exact
Jacobian of the section map (the monodromy matrix projected on the plane);
the type comes from the trace of DP^k, with Greene's residue
R = (2 − tr)/4 (J. Math. Phys. 20, 1979, 1183): 0 < R < 1 elliptic, R < 0 or
R > 1 hyperbolic.
"""),
    code(QUICK),
    code("""
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section, scan_periodic_orbits
from flowkit.seeding import across_domain

plane = Plane((0, 1, 0), 0.0, "+")
base = flowkit.flow("stf")
rotations = [1.0, 2.0, 3.0]
seeds = across_domain(base, plane, size(12, 4))
fig, axes = plt.subplots(1, 3, figsize=(12, 4.2), layout="constrained")
scans = {}
for ax, r in zip(axes, rotations):
    f = base.with_params(rotation=r)
    sec = poincare_section(f, seeds, plane, crossings=size(400, 40))
    scans[r] = scan_periodic_orbits(f, plane, grid=size(14, 5), max_period=2)
    plot_section(ax, sec, size=0.5, skeleton=scans[r], c="0.6")
    ax.set(title=f"rotation = {r:g}: {len(scans[r])} periodic orbits")
axes[-1].legend(loc="lower left", fontsize=7) if len(scans[rotations[-1]]) else None
plt.show()
for r in rotations:
    print(f"rotation {r:g}:", scans[r].counts())"""),
    md("""
## The tangle at rotation 1

The period-2 saddle near the wall, its stable (blue) and unstable (red)
manifolds grown from the eigenvectors, and their homoclinic points. Each
manifold is mapped onto itself by the section map (tests/test_periodic_orbits.py
checks that points between the computed ones land back on the curve).
"""),
    code("""
from flowkit.sections import find_periodic_orbit, invariant_manifolds

f1 = base.with_params(rotation=1.0)
saddle = find_periodic_orbit(f1, (-0.93, 0.0), plane, period=2)
print(saddle)
tangle = invariant_manifolds(saddle, length=size(2.5, 0.4), max_points=size(4000, 400))
print(tangle)
fig, ax = plt.subplots(figsize=(5.5, 5.5))
sec = poincare_section(f1, seeds, plane, crossings=size(400, 40))
plot_section(ax, sec, size=0.4, c="0.75", skeleton=[saddle, tangle])
ax.legend(loc="lower left", fontsize=7)
plt.show()"""),
    md("""
## Following the saddle as the rotation grows

Continuation in `rotation`: the trace of DP^2 falls through +2 and the saddle
turns elliptic, opening an island; the crossing is located by the secant method.
"""),
    code("""
from flowkit.sections import continue_orbit
from flowkit.sections.plot_skeleton import plot_continuation, plot_rotation

curve = continue_orbit(base.with_params(rotation=1.0), (-0.93, 0.0), "rotation",
                       np.linspace(1.0, 3.2, size(12, 4)), plane, period=2)
print(curve.summary()["bifurcations"])
fig, ax = plt.subplots(figsize=(5, 3.2))
plot_continuation(ax, curve)
plt.show()"""),
    md("""
## Rotation-number profile across an island

Around an elliptic orbit, regular orbits turn about the centre at a rate that
changes with the distance from it; resonances show as plateaus. Near the
centre the profile tends to arccos(tr/2)/2π of the linearized map.
"""),
    code("""
from flowkit.sections import rotation_profile

r_end, centre = curve.values[-1], curve.xi[-1]   # the saddle, now the centre of a period-2 island
island = find_periodic_orbit(base.with_params(rotation=r_end), centre, plane, period=2)
print(island)
prof = rotation_profile(base.with_params(rotation=r_end), island, plane, towards=(1.0, 0.0),
                        radius=size(0.08, 0.04), seeds=size(24, 4), iterations=size(300, 30))
fig, ax = plt.subplots(figsize=(5, 3.2))
plot_rotation(ax, prof)
linear = np.arccos(island.trace / 2) / (2 * np.pi)   # the linearized map's rotation at the centre
ax.axhline(np.sign(prof.rotation[0]) * linear, color="0.6", ls="--", lw=0.8)
plt.show()
print(prof)"""),
]
