"""Cells of notebooks/dynamo.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# Does stirring a liquid metal make a dynamo? Growth rate versus Rm

A liquid-metal cell is stirred in a periodic ABC pattern (A = B = C = 1). At a
finite magnetic Reynolds number Rm the field diffuses as well as being
stretched; a dynamo exists where the fastest magnetic mode grows. For this flow
the first dynamo window opens near Rm = 8.9 (Geophys. Astrophys. Fluid Dyn. 36,
1986, 53-83). We compute the growth rate of the leading mode against Rm with the
spectral solver, find the onset, and look at the mode.
"""),
    code(QUICK),
    code("""
from flowkit.dynamo import critical_rm, growth_rate, sweep_rm
from flowkit.dynamo.plot import plot_growth_curve, plot_mode_slice

stirring = flowkit.flow("abc")
N = size(32, 16)                      # grid points per side
rms = size([2, 4, 6, 8, 10, 12, 15, 18], [6, 14])
curve = sweep_rm(stirring, rms, resolution=N, progress=False)
onset = critical_rm(stirring, rm_list=size((6, 8, 10, 12), (8, 10)), resolution=N, xtol=size(1e-3, 2e-2),
                    progress=False)
print(onset)
assert abs(onset.rm_critical - 8.9) < max(0.3, onset.uncertainty), "onset of the first ABC dynamo window"

fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
plot_growth_curve(ax, curve, critical=onset)
ax.legend()
plt.show()"""),
    md("""
## The growing mode

The leading eigenmode just above onset, sliced at *z* = 0: |B| in colour, the
in-plane field as stream lines. Its frequency is non-zero: the mode oscillates
while it grows.
"""),
    code("""
mode = growth_rate(stirring, size(12.0, 10.0), resolution=N)
print(mode)
fig, ax = plt.subplots(figsize=(4.6, 4), layout="constrained")
plot_mode_slice(ax, mode, axis="z", position=0.0)
plt.show()
assert mode.growth_rate > 0"""),
    md("""
## A cell stirred by a lattice of helical vortices: which vertical scale grows?

A second cell is stirred by a square lattice of counter-rotating helical
vortices that does not vary along *z* (the Roberts flow). Each vertical
wavenumber *kz* is then a separate eigenproblem on a 2-D grid, for any real *kz*,
not only the integers of the 2π box. The growth rate against *kz* is the
dynamo's dispersion relation. At small Rm it must follow the exact limit
σ = −kz²/Rm + Rm (kz − kz²): growth at small Rm, but only for vertical scales
longer than 2π (1 + Rm²)/Rm².
"""),
    code("""
from flowkit.dynamo import sweep_kz

vortices = flowkit.flow("roberts")
kzs = np.linspace(0.05, 1.0, size(12, 3))
fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
for rm, colour in [(0.4, "C0"), (2.0, "C1"), (8.0, "C2")]:
    scan = sweep_kz(vortices, rm, kzs, resolution=size(16, 8), progress=False)
    plot_growth_curve(ax, scan, color=colour, label=f"Rm = {rm:g}, fastest kz = {scan.fastest[0]:.2f}")
    if rm == 0.4:
        limit = -kzs**2 / rm + rm * (kzs - kzs**2)
        ax.plot(kzs, limit, "k:", lw=1, label="small-Rm limit, Rm = 0.4")
        assert np.max(np.abs(scan.growth_rate - limit)) < 2 * rm**3
ax.set(title="Roberts cell: growth rate against kz", ylim=(-0.6, 0.4))
ax.legend(fontsize=7)
plt.show()"""),
]
