"""
Which vertical scale grows in a cell stirred by helical vortices?
=================================================================

A liquid-metal cell is stirred by a square lattice of helical vortices that does
not vary along z (the Roberts flow). Each vertical wavenumber kz of the magnetic
field is then a separate eigenproblem on a 2-D grid, for any real kz. The figure
is the dynamo's dispersion relation at three magnetic Reynolds numbers, with the
exact small-Rm limit sigma = -kz^2/Rm + Rm (kz - kz^2) drawn for the smallest.
Even there the longest scales grow.
"""

# %%
# Growth rate against kz at three Rm
# ----------------------------------
import matplotlib.pyplot as plt
import numpy as np
from _common import save, size

import flowkit
from flowkit.dynamo import sweep_kz
from flowkit.dynamo.plot import plot_growth_curve

vortices = flowkit.flow("roberts")
kzs = np.linspace(0.04, 1.0, size(25, 4))
fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
for rm, colour in [(0.4, "C0"), (2.0, "C1"), (8.0, "C2")]:
    scan = sweep_kz(vortices, rm, kzs, resolution=size(24, 8), progress=False)
    plot_growth_curve(ax, scan, color=colour, markersize=3,
                      label=f"Rm = {rm:g} (fastest kz = {scan.fastest[0]:.2f})")
    if rm == 0.4:
        fine = np.linspace(kzs[0], kzs[-1], 200)
        ax.plot(fine, -fine**2 / rm + rm * (fine - fine**2), "k:", lw=1, label="small-Rm limit at Rm = 0.4")
ax.set(title="Helical-vortex lattice: growth rate against kz", ylim=(-0.6, 0.35))
ax.legend(fontsize=7, loc="lower left")
save(fig, "dynamo_dispersion_vortex_lattice")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.dynamo.sweep_kz, flowkit.dynamo.plot.plot_growth_curve
