"""Cells of notebooks/lyapunov_ftle.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# How fast does the micro-reactor mix? Lyapunov spectra and FTLE maps

The mixing rate of a chaotic reactor is its largest Lyapunov exponent: a blob
of reagent is stretched by a factor e every 1/λ time units. We first check the
machinery on a system whose numbers are known, then measure the reactor, then
map where it stretches (FTLE, forward and backward in time).
"""),
    code(QUICK),
    md("""
## Check: the Lorenz system

For sigma = 10, rho = 28, beta = 8/3 the largest exponent is about 0.906 (Physica
D 16, 1985, 285-317), and the exponents add up to the divergence,
-(sigma + 1 + beta) = -13.667 exactly.
"""),
    code("""
from flowkit.chaos import lyapunov_spectrum
from flowkit.plot import plot_lyapunov_running

lorenz = lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], size(2000.0, 200.0), transient=size(50.0, 10.0))
print(lorenz)
assert abs(lorenz.exponents.sum() + (10 + 1 + 8 / 3)) < 1e-6 * 13.667 + 3 * lorenz.sum_stderr + 1e-6
assert abs(lorenz.exponents[0] - 0.906) < size(0.03, 0.25)"""),
    md("""
## The reactor

The reactor flow is incompressible, so its exponents add up to zero; a steady
flow also has one zero exponent (along the orbit).
"""),
    code("""
reactor = flowkit.flow("stf", rotation=0.5)
spec = lyapunov_spectrum(reactor, [0.3, 0.1, -0.2], size(2000.0, 150.0))
print(spec)
assert abs(spec.exponents.sum()) < 1e-6 + 3 * spec.sum_stderr
print(f"a reagent blob is stretched e-fold every {1 / spec.exponents[0]:.2f} time units")

fig, ax = plt.subplots(figsize=(5, 3.2), layout="constrained")
plot_lyapunov_running(ax, spec)
ax.set_title("running estimates (band: 2 standard errors)")
plt.show()"""),
    md("""
## Where the reactor stretches

Forward-time FTLE ridges repel nearby fluid (they cut blobs apart), backward-time
ridges attract it (filaments line up along them). The gradient comes from the
variational equations, so no finite-difference spacing is involved.
"""),
    code("""
from flowkit.chaos import GridPlane, ftle_field
from flowkit.plot import plot_ftle

plane = GridPlane.coordinate("y", 0.0, (-1, 1, -1, 1))
res = (size(160, 16), size(160, 16))
T = size(4.0, 1.0)
fields = [ftle_field(reactor, plane, res, T, direction=d) for d in ("forward", "backward")]
fig, axes = plt.subplots(1, 2, figsize=(9, 3.8), layout="constrained")
for ax, fld in zip(axes, fields):
    plot_ftle(ax, fld)
plt.show()
for fld in fields:
    print(fld)"""),
    md("""
A check on both maps: the reactor flow is reversible. The map (x, y, z, t) ->
(-x, -y, z, -t) takes it to itself (u(-x, -y, z) = (u, v, -w)(x, y, z) with signs
flipped accordingly), so on the plane *y* = 0 the backward map is the forward map
mirrored in *x*.
"""),
    code("""
fwd, bwd = (fld.values for fld in fields)
assert np.allclose(bwd, fwd[:, ::-1], rtol=1e-6, atol=1e-6, equal_nan=True)
print("backward FTLE = forward FTLE mirrored in x: largest difference",
      f"{np.nanmax(np.abs(bwd - fwd[:, ::-1])):.1e}")"""),
]
