"""
Running Lyapunov exponents: a known system and the micro-reactor
================================================================

Running estimates of the full Lyapunov spectrum, with bands of two standard
errors from block averages. Left: the Lorenz system, whose largest exponent is
about 0.906 (Physica D 16, 1985, 285-317) and whose exponents add up to
-(sigma + 1 + beta). Right: the stirred micro-reactor, incompressible, so its
exponents add up to zero.
"""

# %%
# Two spectra
# -----------
import matplotlib.pyplot as plt
from _common import save, size

import flowkit
from flowkit.chaos import lyapunov_spectrum
from flowkit.plot import plot_lyapunov_running

runs = [("Lorenz system", lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], size(1000.0, 20.0))),
        ("micro-reactor (stf, rotation 0.5)",
         lyapunov_spectrum(flowkit.flow("stf", rotation=0.5), [0.3, 0.1, -0.2], size(1000.0, 20.0)))]

fig, axes = plt.subplots(1, 2, figsize=(9, 3.4), layout="constrained")
for ax, (title, spec) in zip(axes, runs):
    plot_lyapunov_running(ax, spec)
    ax.set_title(f"{title}: sum {spec.exponents.sum():+.3f}", fontsize=9)
save(fig, "lyapunov_running")

# %%
# .. admonition:: API used
#
#    flowkit.flow, flowkit.chaos.lyapunov_spectrum, flowkit.plot.plot_lyapunov_running
