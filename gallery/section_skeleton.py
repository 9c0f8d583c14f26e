"""
The skeleton of a stirred droplet's section
===========================================

The stretch-twist-fold droplet spun about *y* (rotation 1) on the plane *y* = 0:
a period-2 saddle near the wall found by Newton's method on the section map,
its unstable (red) and stable (blue) manifolds grown from the eigenvectors, and
their homoclinic points, over the section's points. The manifolds' tangle is
the chaotic sea.
"""

# %%
# Periodic orbit and manifolds
# ----------------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.plot import plot_section
from flowkit.sections import Plane, find_periodic_orbit, invariant_manifolds, poincare_section
from flowkit.seeding import across_domain

droplet = flowkit.flow("stf", rotation=1.0)
plane = Plane((0, 1, 0), 0.0, "+")
saddle = find_periodic_orbit(droplet, (-0.93, 0.0), plane, period=2)
tangle = invariant_manifolds(saddle, length=size(2.5, 0.4), max_points=size(4000, 300))
sec = poincare_section(droplet, across_domain(droplet, plane, size(16, 3)), plane, crossings=size(600, 30))

fig, ax = plt.subplots(figsize=(4.8, 4.6), layout="constrained")
plot_section(ax, sec, size=0.4, c="0.7", skeleton=[saddle, tangle])
ax.legend(loc="lower left", fontsize=6)
ax.set_title(f"stf, rotation 1: period-2 saddle, residue {saddle.residue:.3f}")
save(fig, "section_skeleton")

# %%
# .. admonition:: API used
#
#    flowkit.sections.find_periodic_orbit, flowkit.sections.invariant_manifolds,
#    flowkit.plot.plot_section (skeleton=), flowkit.sections.poincare_section
