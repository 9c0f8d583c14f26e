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
    md("""
# Is the stirred droplet a dynamo? The sphere with an insulating exterior

The same question for a flow confined in a sphere: a liquid-metal droplet
surrounded by an insulator (no currents outside, the field matched to a decaying
potential field at r = 1). Time is in magnetic diffusion times, Rm multiplies
the flow as defined. The solver (`flowkit.dynamo.sphere`, chosen automatically
for a flow with `domain="ball"`) expands B = ∇×(T x) + ∇×∇×(S x) in spherical
harmonics up to degree L and N radial nodes, and every number comes with a
check at a smaller (L, N).

## First, the published benchmark flows

Proc. R. Soc. Lond. A 425 (1989) 407-429 (onsets cited from memory): "t2s2"
(ε = 0.14) starts a steady m = 1 dynamo near Rm = 54, "t1s1" (ε = 0.17) an
oscillating m = 1 dynamo near Rm = 155. The README gives the full (L, N) tables.
"""),
    code("""
from flowkit.dynamo import benchmark_flow

bench = benchmark_flow("t2s2")
res_b = size((16, 16), (10, 10))
curve_b = sweep_rm(bench, size([45, 50, 54, 58, 65], [45, 65]), resolution=res_b, m=1, progress=False)
onset_b = critical_rm(bench, [45, 65], resolution=res_b, m=1, xtol=size(1e-3, 1e-2), progress=False)
print(onset_b)
assert 50 < onset_b.rm_critical < 58, "t2s2 onset near the published Rm = 54"
fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
plot_growth_curve(ax, curve_b, critical=onset_b)
ax.set(title="t2s2 benchmark flow (m = 1)")
ax.legend()
plt.show()"""),
    md("""
## The stirred droplet: stf at two rotations and a levitated droplet

`stf` (stretch-twist-fold Stokes flow, rotation about y couples every order m)
and a Lamb flow of our own scenario: a droplet levitated in a coil, with a
meridional circulation (Hill's-vortex type, pressure harmonic P1_0) and a
differential swirl (toroidal harmonic T2_0). **New results, not published
anywhere** (all orders coupled; `benchmarks/bench_dynamo_sphere.py --stf-only`):

**stf at rotation 0.3 is a dynamo: Rm_c = 141.5 ± 1.5**, a steady mode (frequency 0).
Onset per resolution:

| series | Rm_c at each resolution |
|---|---|
| L = N: (12, 12) … (20, 20), (24, 24), (28, 28) | 136.08, 139.40, 138.68, 139.83, 139.44, 140.24*, 140.74* |
| L = 16, 20, 24, 28 at N = 20 | 137.11, 139.44, 140.53*, 141.12* |
| N = 16, 20, 24 at L = 20 | 141.07, 139.44, 139.14* |

(* from one growth rate near the onset and the slope dσ/dRm = 0.167 of (20, 20); the others by
secant iterations to |σ| < 1e-6.)

Raising N converges fast (−1.63 then −0.30 per 4 nodes), raising L slowly (+2.33, +1.09, +0.59
per 4 degrees, a ratio near 0.5): the finest values are 141.1 at (28, 20) and 140.7 at (28, 28);
with the geometric tails of both series about 141.4, and the ± 1.5 covers a slower L tail.

**stf at rotation 0.1: no onset up to Rm = 240** (growth rate −13.48 / −12.58 / −13.03 at
Rm = 160 with (12, 12) / (14, 14) / (16, 16), −8.75 / −8.35 / −8.59 at Rm = 240 with (16, 16) /
(18, 18) / (20, 20)). At Rm = 240 the coarser (12, 12) and (14, 14) carry spurious growing modes
(rates 300–500, frequencies near 270–310) that change from one resolution to the next, as does
(16, 16) at Rm = 320: the resolution check flags them. The levitated droplet has no dynamo up to
Rm = 200.
The cell below redoes a small scan (quick sizes under FLOWKIT_QUICK=1).
"""),
    code("""
droplets = {
    "stf, rotation 0.1": flowkit.flow("stf", rotation=0.1),
    "stf, rotation 0.3": flowkit.flow("stf", rotation=0.3),
    "levitated droplet": flowkit.lamb_flow({"P1_0": -10.0, "T2_0": 3.0}, name="levitated"),
}
res_d = size((10, 10), (6, 7))
rms_d = size([2, 5, 10, 20, 40], [5, 20])
curves = {name: sweep_rm(f, rms_d, resolution=res_d, check_resolution=size((8, 8), (4, 6)), progress=False)
          for name, f in droplets.items()}
fig, ax = plt.subplots(figsize=(5.4, 3.6), layout="constrained")
for (name, c), colour in zip(curves.items(), ("C0", "C1", "C2")):
    plot_growth_curve(ax, c, color=colour, label=name)
    print(name, "L, N =", res_d, [(float(r), round(float(g), 4), round(float(e), 4))
                                  for r, g, e in zip(c.rm, c.growth_rate, c.error_estimate)])
ax.set(xscale="log", title="growth rate of the leading mode in the insulating sphere")
ax.legend(fontsize=7)
plt.show()"""),
    md("""
## The mode's structure

The leading mode of stf at rotation 0.3 at the largest Rm of the scan:
|B| in the meridional plane y = 0 and the equatorial plane z = 0, with the
in-plane field as stream lines.
"""),
    code("""
lead = growth_rate(droplets["stf, rotation 0.3"], rms_d[-1], resolution=res_d, check_resolution=None)
print(lead)
fig, axes = plt.subplots(1, 2, figsize=(8, 3.8), layout="constrained")
for ax, plane in zip(axes, ("meridional", "equatorial")):
    plot_mode_slice(ax, lead, plane=plane, resolution=size(64, 32))
plt.show()"""),
    md("""
## The onset of stf at rotation 0.3

One resolution of the table above (quick: (10, 10), where the onset is still about
151). Each growth rate costs seconds: the operator is stored as D + Rm K and only
its sum is formed for each Rm of the search.
"""),
    code("""
res_o = size((16, 16), (10, 10))
# guesses=[0j]: shift-invert next to sigma = 0, where the onset's eigenvalue is (no coarse-resolution shifts)
onset_stf = critical_rm(droplets["stf, rotation 0.3"], size([136, 142], [145, 155]), resolution=res_o,
                        xtol=size(1e-4, 2e-2), progress=False, check_resolution=size((14, 14), None),
                        guesses=[0j])
print(onset_stf)"""),
    md("""
## Beside it: the perfect-conductor (ideal) estimates of the same flows

Without diffusion a field carried by a chaotic flow grows at least as fast as
line elements stretch. For each droplet: the largest Lyapunov exponent of one
orbit, the growth rates L(1), L(2) of field-vector moments, and the growth rate
of the net flux through the equatorial disc (flux cancellation makes it smaller).
Compare with the diffusive growth rates above (per unit Rm, since time there is
in diffusion times).
"""),
    code("""
for name, f in droplets.items():
    spec = flowkit.lyapunov_spectrum(f, [0.3, 0.2, 0.1], size(200.0, 20.0), intervals=size(1000, 100), blocks=5,
                                    progress=False)
    st = flowkit.stretch(f, size(1000, 100), size(20.0, 5.0), p=(1.0, 2.0), samples=size(100, 20), progress=False)
    fl = flowkit.flux_growth(f, size(10.0, 3.0), samples=size(4000, 300), progress=False)
    print(name)
    print("  ", spec)
    print("  ", st)
    print("  ", fl)"""),
]
