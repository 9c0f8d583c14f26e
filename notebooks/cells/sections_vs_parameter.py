"""Cells of notebooks/sections_vs_parameter.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# Islands in the micro-reactor as the stirring rotation grows

The stirred spherical micro-reactor of `explore.ipynb`: a stretch-twist-fold
flow plus a rigid rotation about *y*. Without rotation the reactor has large
regular regions where reagents stay trapped; the rotation breaks them up. Here
we follow the Poincaré section on *y* = 0 and the chaotic fraction of the
reactor as the rotation grows.
"""),
    code(QUICK),
    code("""
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section, tolerance_check
from flowkit.seeding import across_domain

rotations = np.linspace(0.02, 0.5, size(6, 3))
plane = Plane((0, 1, 0), 0.0, "+")
base = flowkit.flow("stf")
seeds = across_domain(base, plane, size(12, 4))

sections = [poincare_section(base.with_params(rotation=r), seeds, plane, crossings=size(600, 50))
            for r in rotations]
fig, axes = plt.subplots(1, len(rotations), figsize=(3 * len(rotations), 3.2), layout="constrained")
for ax, r, sec in zip(np.atleast_1d(axes), rotations, sections):
    plot_section(ax, sec, size=0.6, labels=False)
    ax.set(title=f"rotation = {r:.2f}", aspect="equal", xticks=[], yticks=[])
plt.show()
for r, sec in zip(rotations, sections):
    print(f"rotation {r:.2f}: {sec.summary()['outcomes']}")"""),
    md("""
## Are the sections converged?

A section computed at two tolerances, crossing by crossing: regular orbits agree
to near the tolerance; on chaotic orbits the difference grows with the crossing
number (nearby orbits separate), which is expected and says how many crossings
can be trusted point by point.
"""),
    code("""
check = tolerance_check(base.with_params(rotation=0.3), seeds[:size(4, 2)], plane, crossings=size(100, 20))
print(check)"""),
    md("""
## Chaotic fraction of the reactor

Each of many random seeds is classified by its finite-time largest Lyapunov
exponent; the fraction of chaotic orbits estimates the chaotic volume fraction,
with its binomial standard error.
"""),
    code("""
from flowkit.chaos import chaotic_fraction

fractions = [chaotic_fraction(base.with_params(rotation=r), size(200, 12), size(100.0, 10.0), seed=3)
             for r in rotations]
f = np.array([c.fraction for c in fractions])
e = np.array([c.stderr for c in fractions])
assert np.all((0 <= f) & (f <= 1)) and np.all(e <= 0.5)

fig, ax = plt.subplots(figsize=(4.5, 3), layout="constrained")
ax.errorbar(rotations, f, yerr=e, fmt="o-", capsize=3)
ax.set(xlabel="rotation", ylabel="chaotic fraction", ylim=(-0.05, 1.05))
plt.show()
for r, c in zip(rotations, fractions):
    print(f"rotation {r:.2f}: {c}")"""),
]
