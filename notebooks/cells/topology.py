"""Cells of notebooks/topology.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# Stretch, twist, fold: the twist of a flux loop in a stirred droplet

A liquid-metal droplet is stirred by the `stf` flow (stretch, twist and fold in a
sphere, with a small rotation). A closed loop of magnetic flux, frozen into the
metal, is carried along: it is **stretched** (its length grows exponentially) and
**folded**, and it **twists**. Topology keeps the books: the loop and a nearby line
on its surface (a *ribbon*) have a linking number Lk that a smooth flow cannot
change, while the writhe Wr (how much the loop coils on itself) and the twist Tw
(how much the ribbon turns about the loop) trade with each other,
Lk = Tw + Wr (Călugăreanu–White).

We follow such a ribbon over several turnovers, look at the kinetic helicity that
drives the twisting, and finally trace the magnetic field lines of the growing
mode of a box dynamo.
"""),
    code(QUICK),
    code("""
from flowkit.topology import kinetic_helicity, material_ribbon
from flowkit.topology.plot import plot_curve, plot_ribbon, plot_topology_history

droplet = flowkit.flow("stf", rotation=0.3)
T = size(4.0, 2.0)
loop = material_ribbon(droplet, time=T, passes=size(16, 4), max_spacing=size(0.03, 0.06),
                       max_points=size(40_000, 6_000))
print(loop)
print(loop.summary())
assert loop.linking_drift < 1e-6, "the linking number of the loop with its edge is conserved"
"""),
    md("""
The writhe grows while the twist falls by exactly as much; their sum, the linking
number, stays at its integer to round-off. The shaded band is the writhe's
sampling error (from the same loop at half the points).
"""),
    code("""
fig = plt.figure(figsize=(11, 3.6), layout="constrained")
ax = fig.add_subplot(131)
plot_topology_history(ax, loop)
ax.set_title("writhe exchanged with twist")
ax = fig.add_subplot(132)
ax.semilogy(loop.times, loop.lengths / loop.lengths[0], "o-")
ax.set(xlabel="t", ylabel="L(t) / L(0)", title="stretching")
ax3 = fig.add_subplot(133, projection="3d")
plot_ribbon(ax3, loop, width=0.02)
ax3.set_title(f"the ribbon at t = {loop.times[-1]:g}")
plt.show()
"""),
    md("""
## The helicity that twists it

The droplet's kinetic helicity ∫ u·(∇×u) dV is exact for this polynomial flow
(sympy), −8π × rotation; on the equatorial plane its density changes sign, so
the loop picks up twist of both senses.
"""),
    code("""
from flowkit.topology.plot import plot_helicity_density

hel = kinetic_helicity(droplet, plane=("z", 0.0), plane_points=size(96, 32))
print(hel, "  exact formula:", hel.exact)
assert abs(hel.value + 8 * np.pi * 0.3) < 1e-12
fig, ax = plt.subplots(figsize=(4.4, 3.8), layout="constrained")
plot_helicity_density(ax, hel)
plt.show()
"""),
    md("""
## Magnetic field lines of a growing dynamo mode

A liquid-metal cell stirred in the ABC pattern is a dynamo above Rm ≈ 9. We take
its growing mode at Rm = 12, measure the mode's magnetic helicity ∫A·B dV
(bounded by the energy in the 2π box), and trace its field lines: the mode's field,
written as its Fourier sum truncated to a stated share of the energy, is itself a
flow that flowkit integrates, so a Poincaré section of field lines is one call.
"""),
    code("""
from flowkit.topology import mode_helicity
from flowkit.topology.fieldlines import mode_field_flow

mode = flowkit.growth_rate(flowkit.flow("abc"), 12.0, resolution=size(24, 16), check_resolution=None)
hm = mode_helicity(mode)
print(mode.growth_rate, hm)
assert abs(hm.value) <= hm.energy

field = mode_field_flow(mode, energy_fraction=size(0.99, 0.95))
print(field.family.formula[0])
rng = np.random.default_rng(1)
seeds = rng.uniform(0, 2 * np.pi, size=(size(12, 4), 3))
lines = flowkit.poincare_section(field, seeds, flowkit.Plane((0, 0, 1), np.pi), crossings=size(400, 40))
from flowkit.plot import plot_section

fig, ax = plt.subplots(figsize=(4.4, 4), layout="constrained")
plot_section(ax, lines, color_by="orbit")
ax.set_title("field lines of the dynamo mode crossing z = pi")
plt.show()
"""),
    md("""
## Field lines of a dynamo mode in the sphere

The same questions for a dynamo in a ball of liquid metal with an insulating
exterior: the growing mode of the 1989 benchmark flow t2s2 at Rm = 60. Its field
(toroidal and poloidal scalars inside, the decaying potential field outside) is a
flow on all of space, so field lines may leave the sphere and come back. We
measure the mode's relative magnetic helicity (with the potential field outside),
draw a section of its field lines in the plane y = 0, and compute the linking
number of two field lines, each closed by a chord after two returns: the open lines'
Gauss integral differs from the integer by how far the lines are from closed.
"""),
    code("""
from flowkit.dynamo.sphere import benchmark_flow
from flowkit.topology.fieldlinks import field_line_linking

ball_mode = flowkit.growth_rate(benchmark_flow("t2s2"), rm=60, resolution=size((12, 12), (8, 8)),
                                keep_mode=True, check_resolution=None)
print("growth rate", ball_mode.growth_rate, "  ", mode_helicity(ball_mode))
ball_field = mode_field_flow(ball_mode)
print(ball_field.family.formula[0])
ball_lines = flowkit.poincare_section(ball_field, [[0.3, 0, 0.2], [0.5, 0, -0.1], [0.6, 0, 0.4]],
                                      flowkit.Plane((0, 1, 0), 0.0), crossings=size(300, 40))
pair = field_line_linking(ball_field, [0.3, 0, 0.2], [0.6, 0, 0.4], returns=(2, 2), samples=size(2000, 500))
print(pair.summary())
fig, ax = plt.subplots(figsize=(4.4, 4), layout="constrained")
plot_section(ax, ball_lines, color_by="orbit")
ax.add_patch(plt.Circle((0, 0), 1.0, fill=False, ls="--", color="0.5"))
ax.set_title("field lines of the t2s2 mode crossing y = 0")
plt.show()
"""),
]
