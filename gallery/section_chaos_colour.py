"""
Regular and chaotic orbits in a liquid-metal droplet
====================================================

A droplet stirred through its skin: the interior Stokes flow is built from a
prescribed surface velocity (poles-to-equator drag, counter-rotating hemispheres
and a slow tumble about *x*). Its Poincaré section on *y* = 0 is coloured by each
orbit's finite-time largest Lyapunov exponent: dark orbits are regular (tori),
bright ones chaotic.
"""

# %%
# The droplet flow from its surface velocity
# ------------------------------------------
import matplotlib.pyplot as plt
import numpy as np
from _common import save, size

import flowkit
from flowkit.chaos import orbit_indicator
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section
from flowkit.seeding import across_domain


def skin_velocity(p):
    z = p[:, 2:3]
    zhat, xhat = np.array([0.0, 0.0, 1.0]), np.array([1.0, 0.0, 0.0])
    return -2 * z * (zhat - z * p) + 0.8 * z * np.cross(zhat, p) + 0.3 * np.cross(xhat, p)


droplet = flowkit.surface_flow(skin_velocity, max_degree=3, name="droplet")

# %%
# Section and chaos indicator
# ---------------------------
plane = Plane((0, 1, 0), 0.0, "+")
sec = poincare_section(droplet, across_domain(droplet, plane, size(20, 3)), plane, crossings=size(1200, 30))
sec.attach("ftle", orbit_indicator(droplet, sec.seeds, size(100.0, 5.0)))

fig, ax = plt.subplots(figsize=(4.6, 4), layout="constrained")
art = plot_section(ax, sec, color_by="ftle", size=0.5, colorbar=False)
fig.colorbar(art[0], ax=ax, shrink=0.85, label="finite-time largest exponent")
ax.set_title("droplet stirred through its skin, y = 0")
save(fig, "section_chaos_colour")

# %%
# .. admonition:: API used
#
#    flowkit.surface_flow, flowkit.sections.poincare_section, Section.attach,
#    flowkit.chaos.orbit_indicator, flowkit.seeding.across_domain, flowkit.plot.plot_section
