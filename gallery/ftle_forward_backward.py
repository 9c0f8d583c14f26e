"""
Where the micro-reactor stretches: forward and backward FTLE
============================================================

Finite-time Lyapunov exponent maps of the stirred micro-reactor on the plane
*y* = 0. Ridges of the forward map repel neighbouring fluid (they cut reagent
blobs apart), ridges of the backward map attract it (filaments line up along
them). The deformation gradient comes from the variational equations with the
exact velocity gradient.
"""

# %%
# Two maps on one plane
# ---------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.chaos import GridPlane, ftle_field
from flowkit.plot import plot_ftle

reactor = flowkit.flow("stf", rotation=0.5)
plane = GridPlane.coordinate("y", 0.0, (-1, 1, -1, 1))
n = size(200, 12)

fig, axes = plt.subplots(1, 2, figsize=(8.4, 3.6), layout="constrained")
for ax, direction in zip(axes, ("forward", "backward")):
    field = ftle_field(reactor, plane, (n, n), size(4.0, 0.5), direction=direction)
    plot_ftle(ax, field)
save(fig, "ftle_forward_backward")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.chaos.GridPlane.coordinate, flowkit.chaos.ftle_field, flowkit.plot.plot_ftle
