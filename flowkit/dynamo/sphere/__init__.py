"""Kinematic dynamo in the unit ball with an insulating exterior.

``B = curl(T x) + curl curl(S x)``, ``T, S`` in orthonormal spherical harmonics up
to degree ``L`` and a parity-folded Chebyshev collocation in ``r`` on ``N`` nodes;
``T(1) = 0`` and ``S'(1) + (l+1) S(1) = 0`` (a decaying potential field outside).
Diffusion is exact per degree; the induction term ``Rm curl(u x B)`` is formed by
the transform method on a Gauss-Legendre x longitude grid sized so the products
of a band-limited flow are integrated exactly.

Module map: ``basis`` (radial basis, boundary conditions, diffusion), ``harmonics``
(Legendre tables, vector transforms, grid sizes), ``flowcheck`` (what the solver
needs of a flow), ``operator`` (the induction operator), ``sparse`` (the operator
as a sparse matrix by colouring), ``parts`` (``D + Rm K`` built once per flow and
resolution), ``families`` (real form and decoupled families), ``eigen`` (shift-invert
and propagator Arnoldi), ``warm`` (the last eigenpair as shift and start vector of the
next solve), ``threads`` (BLAS limited to one thread during the eigen work),
``march`` (time stepping and fit), ``growth`` (the public solve with its
resolution check), ``mode`` (the field of a mode anywhere), ``flows`` (the
benchmark flows t1s1 and t2s2 of Proc. R. Soc. Lond. A 425, 1989; their formulas are
presets in :mod:`flowkit.flows.sphere_benchmarks`).
Use it through :func:`flowkit.dynamo.growth_rate` (it dispatches on ``flow.domain``).
"""

from flowkit.dynamo.sphere.flows import BENCHMARK_FLOWS, benchmark_flow
from flowkit.dynamo.sphere.growth import ball_growth_rate
from flowkit.dynamo.sphere.mode import ball_slice, mode_field
from flowkit.dynamo.sphere.operator import BallOperator

__all__ = ["ball_growth_rate", "benchmark_flow", "BENCHMARK_FLOWS", "BallOperator", "mode_field", "ball_slice"]
