"""Cells of notebooks/surface_flow.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# A liquid-metal droplet stirred through its skin

A gallium droplet sits in an alternating magnetic field. The induced currents
live in a thin skin, so the Lorentz force acts at the surface: it drags the
surface from both poles toward the equator, makes the two hemispheres swirl in
opposite senses, and, because the field is tilted, tumbles the droplet slowly
about the *x* axis. Inside, the flow is slow and viscous: a Stokes flow in the
unit ball fixed by that surface velocity.

We build the interior flow from the surface velocity (Lamb's general solution,
`flowkit.surface_flow`), check it, and look at how it stirs the droplet.
"""),
    code(QUICK),
    code("""
U, W, TUMBLE = 1.0, 0.8, 0.3   # poloidal drag, counter-swirl, tumble (units of the surface speed)


def skin_velocity(p):
    \"\"\"Tangential velocity on r = 1 for points p (N, 3).\"\"\"
    z = p[:, 2:3]
    zhat, xhat = np.array([0.0, 0.0, 1.0]), np.array([1.0, 0.0, 0.0])
    poloidal = -2 * U * z * (zhat - z * p)           # -U grad_s(z^2): poles -> equator
    swirl = W * z * np.cross(zhat, p)                # hemispheres turning in opposite senses
    tumble = TUMBLE * np.cross(xhat, p)              # slow rigid tumble about x
    return poloidal + swirl + tumble


droplet = flowkit.surface_flow(skin_velocity, max_degree=3, name="droplet")
print(droplet)
print("projection:", droplet.family.structure["projection"])"""),
    md("""
## Is it the flow we asked for?

Three checks against facts outside the construction: on the surface the flow
reproduces the prescribed velocity (it is polynomial of degree 2, so the degree-3
projection is exact); the flow is divergence-free, tangent to the wall, and a
Stokes flow (the curl of its Laplacian vanishes).
"""),
    code("""
rng = np.random.default_rng(1)
s = rng.normal(size=(size(2000, 200), 3))
s /= np.linalg.norm(s, axis=1)[:, None]
mismatch = np.abs(droplet.velocity(s) - skin_velocity(s)).max()
print(f"largest surface mismatch: {mismatch:.2e}")
assert mismatch < 1e-10

from flowkit.flows.checks import check_flow

report = check_flow(droplet, n=size(2000, 200))
print({k: report[k] for k in ("divergence_max", "boundary_normal_max", "stokes_residual_max")})
assert report["divergence_max"] < 1e-10 and report["boundary_normal_max"] < 1e-10"""),
    md("""
## How does it stir?

A Poincaré section on the plane *y* = 0, orbits coloured by their finite-time
largest Lyapunov exponent: regular orbits (islands) stay dark.
"""),
    code("""
from flowkit.chaos import orbit_indicator
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section
from flowkit.seeding import across_domain

plane = Plane((0, 1, 0), 0.0, "+")
seeds = across_domain(droplet, plane, size(16, 4))
sec = poincare_section(droplet, seeds, plane, crossings=size(800, 60))
sec.attach("ftle", orbit_indicator(droplet, sec.seeds, size(100.0, 10.0)))
print(sec)

fig, ax = plt.subplots(figsize=(5, 4.4), layout="constrained")
plot_section(ax, sec, color_by="ftle", size=1.0)
ax.set_title("droplet: section y = 0, colour = finite-time exponent")
plt.show()"""),
    md("""
The section's crossings and provenance (surface velocity projection included)
can be saved for later without pickle:
"""),
    code("""
import tempfile
from pathlib import Path

path = sec.save(Path(tempfile.mkdtemp()) / "droplet-section.npz")
print(path, sec.provenance["structure"].get("projection"))"""),
]
