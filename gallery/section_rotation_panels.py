"""
Islands breaking up as a micro-reactor turns
============================================

Poincaré sections of a stirred spherical micro-reactor (the stretch-twist-fold
Stokes flow plus a rigid rotation about *y*) on the plane *y* = 0, for three
rotation rates. Without rotation large regular islands trap reagents; as the
rotation grows the islands shrink and the chaotic sea takes over. Each colour is
one orbit; the point layers are rasterized so the PDF stays light.
"""

# %%
# Setup: the flow, the plane and the seeds
# ----------------------------------------
import matplotlib.pyplot as plt
import numpy as np
from _common import save, size

import flowkit
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section
from flowkit.seeding import across_domain

plane = Plane((0, 1, 0), 0.0, "+")
base = flowkit.flow("stf")
seeds = across_domain(base, plane, size(14, 3))
rotations = [0.02, 0.1, 0.3]

# %%
# One section per rotation rate
# -----------------------------
fig, axes = plt.subplots(1, 3, figsize=(9, 3.3), layout="constrained", sharey=True)
for ax, rot in zip(axes, rotations):
    sec = poincare_section(base.with_params(rotation=rot), seeds, plane, crossings=size(1500, 30))
    plot_section(ax, sec, size=0.4)
    ax.set_title(f"rotation = {rot:g}")
    ax.set(xlim=(-1.05, 1.05), ylim=(-1.05, 1.05))
for ax in axes[1:]:
    ax.set_ylabel("")
fig.suptitle("stirred micro-reactor: Poincaré sections on y = 0")
save(fig, "section_rotation_panels")

# %%
# .. admonition:: API used
#
#    flowkit.flow, Flow.with_params, flowkit.sections.Plane, flowkit.sections.poincare_section,
#    flowkit.seeding.across_domain, flowkit.plot.plot_section
