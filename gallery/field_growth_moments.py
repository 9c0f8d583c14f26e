"""
Frozen-in field growth in a liquid-metal droplet
================================================

An ensemble of particles carries frozen-in magnetic field vectors through the
droplet's stirring flow (ideal limit: no diffusion). The slope of <ln|B|> is the
largest Lyapunov exponent; the slopes of ln<|B|^p> are the generalized exponents
L(p), larger than p times it because rare strongly stretched particles dominate
the moments. Bands: standard errors; dashed: fitted rates over the shaded window.
"""

# %%
# Ensemble statistics
# -------------------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.plot import plot_growth
from flowkit.fields import stretch

res = stretch(flowkit.flow("stf", rotation=0.3), size(4000, 60), size(30.0, 4.0), p=(1.0, 2.0),
              samples=size(120, 16))

fig, ax = plt.subplots(figsize=(5.2, 3.6), layout="constrained")
plot_growth(ax, res)
ax.legend(fontsize=6, loc="upper left")
ax.set_title("frozen-in field moments")
save(fig, "field_growth_moments")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.fields.stretch, flowkit.plot.plot_growth
