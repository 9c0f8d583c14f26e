"""Cells of notebooks/frozen_in.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# Magnetic field lines in a liquid-metal droplet: the ideal limit

In a perfectly conducting droplet a magnetic field is frozen into the flow:
each field vector is stretched and turned like a material line element. Its
ensemble statistics grow exponentially: <ln|B|> at the largest Lyapunov
exponent, the moments <|B|^p> at the generalized exponents L(p), which are convex
in p with L(p)/p non-decreasing. What a magnetometer outside sees is a flux
through a surface, and there folding brings field of both signs together: the
net flux grows more slowly than the unsigned one.
"""),
    code(QUICK),
    code("""
from flowkit.plot import plot_growth
from flowkit.fields import stretch

droplet = flowkit.flow("stf", rotation=0.3)   # the stirring pattern of the droplet
res = stretch(droplet, size(4000, 120), size(30.0, 6.0), p=(0.5, 1.0, 2.0), samples=size(120, 24))
print(res)

fig, ax = plt.subplots(figsize=(5.5, 3.6), layout="constrained")
plot_growth(ax, res, p=[1.0, 2.0])
ax.legend(fontsize=7, loc="upper left")
plt.show()"""),
    md("""
Sanity checks from the theory of generalized exponents: L(p) is convex, L(p)/p
does not decrease, and L(p) >= p * lambda (Jensen). The checks allow for the
statistical error bars.
"""),
    code("""
L = {p: res.rate(p) for p in (0.5, 1.0, 2.0)}
lam = res.field_rate                      # slope of <ln|B|>


def slack(*rates):
    \"\"\"Three standard errors of the rates involved.\"\"\"
    return 3 * sum(r.stderr for r in rates)


# convex: L(1) lies below the chord through L(0.5) and L(2)
chord = (L[0.5].value + 0.5 * L[2.0].value) / 1.5
assert L[1.0].value <= chord + slack(*L.values()), (L, chord)
# L(p)/p does not decrease, and L(p) >= p * lambda (Jensen's inequality)
assert L[0.5].value / 0.5 <= L[1.0].value + slack(L[0.5], L[1.0]) * 2
assert L[1.0].value <= L[2.0].value / 2 + slack(L[2.0], L[1.0])
for p in (0.5, 1.0, 2.0):
    assert L[p].value >= p * lam.value - slack(L[p], lam), (p, L[p], lam)
print({p: f"{r.value:.3f} ± {r.stderr:.2g}" for p, r in L.items()}, "lambda", lam)"""),
    md("""
## A material line and the flux through the equator

A material line (for instance a field line, or a dye streak) grows in length at
a rate bounded below by the topological entropy of the flow. The flux through the
droplet's equatorial disc separates stretching (unsigned flux) from cancellation
(net flux).
"""),
    code("""
from flowkit.fields import flux_growth, material_line

line = material_line(droplet, size(12.0, 3.0), max_points=size(400_000, 20_000))
flux = flux_growth(droplet, size(10.0, 2.0), samples=size(4000, 200))
print(line.rate, "(material line)")
print(flux.unsigned_rate, "(unsigned flux)")
print(flux.flux_rate, "(net flux)")

fig, axes = plt.subplots(1, 2, figsize=(9, 3.4), layout="constrained")
plot_growth(axes[0], line)
plot_growth(axes[1], flux)
for ax in axes:
    ax.legend(fontsize=6, loc="upper left")
plt.show()"""),
]
