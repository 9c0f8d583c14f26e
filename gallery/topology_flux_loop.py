"""
A flux loop in a stirred droplet: writhe traded for twist, linking kept
=======================================================================

A closed loop of magnetic flux frozen into a liquid-metal droplet (the stf
stirring, rotation 0.3) carries a ribbon: a nearby line on its surface. The flow
stretches the loop and coils it up, so its writhe Wr grows, while the ribbon's
twist Tw falls by exactly as much: their sum, the linking number Lk of the loop
with the ribbon's edge, is a topological invariant of the smooth flow. Left: the
loop at the end, coloured by curvature. Right: Wr, Tw and Lk against time (band:
the writhe's sampling error).
"""

# %%
# The ribbon's history
# --------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.topology import material_ribbon
from flowkit.topology.plot import plot_curve, plot_topology_history

loop = material_ribbon(flowkit.flow("stf", rotation=0.3), time=size(4.0, 1.0), passes=size(16, 2),
                       max_spacing=size(0.03, 0.08), max_points=size(40_000, 3_000))
print(loop)

fig = plt.figure(figsize=(8.4, 3.6), layout="constrained")
ax3 = fig.add_subplot(121, projection="3d")
plot_curve(ax3, loop.positions, linewidth=0.8)
ax3.set_title(f"the loop at t = {loop.times[-1]:g}")
ax = fig.add_subplot(122)
plot_topology_history(ax, loop)
ax.set_title("Lk = Tw + Wr")
save(fig, "topology_flux_loop")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.topology.material_ribbon, flowkit.topology.plot.plot_curve,
#    flowkit.topology.plot.plot_topology_history
