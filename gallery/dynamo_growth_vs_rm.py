"""
Dynamo onset in a stirred liquid-metal cell
===========================================

Growth rate of the fastest magnetic mode of the ABC flow (A = B = C = 1) against
the magnetic Reynolds number, from the pseudo-spectral induction solver, with
error bars from a second resolution. The growth rate crosses zero near Rm = 8.9,
the opening of the first dynamo window (Geophys. Astrophys. Fluid Dyn. 36, 1986,
53-83); the shaded band is the computed onset with its uncertainty.
"""

# %%
# Growth rate against Rm, and the onset
# -------------------------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.dynamo import critical_rm, sweep_rm
from flowkit.dynamo.plot import plot_growth_curve

cell = flowkit.flow("abc")
N = size(32, 16)
curve = sweep_rm(cell, size([2, 4, 6, 8, 10, 12, 15, 18], [6, 12]), resolution=N, progress=False)
onset = critical_rm(cell, rm_list=(8, 10), resolution=N, xtol=size(1e-3, 5e-2), progress=False)

fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
plot_growth_curve(ax, curve, critical=onset)
ax.legend(fontsize=8)
ax.set_title("ABC flow: leading magnetic mode")
save(fig, "dynamo_growth_vs_rm")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.dynamo.sweep_rm, flowkit.dynamo.critical_rm,
#    flowkit.dynamo.plot.plot_growth_curve
