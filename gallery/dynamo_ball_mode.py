"""
The growing magnetic mode of a dynamo in an insulating sphere
==============================================================

The leading magnetic mode of the sphere-dynamo benchmark flow t2s2 (Proc. R. Soc.
Lond. A 425, 1989, 407-429) just above its onset near Rm = 54: a steady mode of
azimuthal order m = 1, solved in toroidal and poloidal scalars with an insulating
exterior. The panels show |B| of the mode's real part in the meridional plane
y = 0 and the equatorial plane z = 0, with the in-plane field lines drawn over it.
"""

# %%
# The leading mode just above onset
# ---------------------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.dynamo import growth_rate
from flowkit.dynamo.plot import plot_mode_slice

flow = flowkit.flow("t2s2")
L = size(20, 8)
mode = growth_rate(flow, rm=60.0, resolution=(L, L), m=1, check_resolution=None)

# %%
# Meridional and equatorial slices
# --------------------------------
fig, axes = plt.subplots(1, 2, figsize=(8, 3.8), layout="constrained")
for ax, plane in zip(axes, ("meridional", "equatorial")):
    plot_mode_slice(ax, mode, plane=plane, resolution=size(128, 32), density=size(1.4, 0.6))
    ax.set_title(f"{plane} plane")
fig.suptitle(f"t2s2, Rm = {mode.rm:g}: growth rate {mode.growth_rate:.3f} (m = {mode.diagnostics['m']}, "
             f"(L, N) = ({L}, {L}))", fontsize=10)
save(fig, "dynamo_ball_mode")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.dynamo.growth_rate (ball flows: resolution=(L, N), m=),
#    flowkit.dynamo.plot.plot_mode_slice (plane="meridional" / "equatorial")
