"""Kinematic dynamo growth rates at finite magnetic Reynolds number (periodic box or insulating ball).

Every function below dispatches on ``flow.domain``: a ball flow goes to
:mod:`flowkit.dynamo.sphere` (toroidal-poloidal spectral solver with an insulating
exterior, ``resolution=(L, N)``, time in diffusion times), a periodic one to the
pseudo-spectral solver of ``dB/dt = curl(u x B) + Rm^-1 lap B`` in the 2*pi box
for any steady or time-periodic periodic flow of the library:

- :func:`growth_rate`: leading growth rate and frequency, by Arnoldi on the
  operator (``method="eigen"``; Floquet multiplier for time-periodic flows) or by
  time stepping and a fit with the oscillation in the model (``method="march"``),
  with a resolution-convergence estimate;
- :func:`sweep_rm`, :func:`critical_rm`: curves against ``Rm`` and the onset;
- ``kz=...`` (any function above) and :func:`sweep_kz`: for flows independent of
  ``z``, one vertical wavenumber at a time, any real value (dispersion relation);
- :class:`GrowthResult`, :class:`RmSweep`, :class:`KzScan`, :class:`CriticalRm`: results with
  provenance, ``save``/``load`` (npz, no pickle), ``to_xarray``;
- :mod:`flowkit.dynamo.plot`: ``plot_mode_slice``, ``plot_growth_curve``.

Module map: ``spectral`` (grid, FFTs, packing), ``induction`` (operator,
integrating-factor RK4), ``fit`` (oscillating exponential fit), ``growth``
(the two methods), ``curves`` (sweeps, critical Rm), ``results``, ``plot``.
"""

from flowkit.dynamo.curves import critical_rm, sweep_kz, sweep_rm
from flowkit.dynamo.growth import growth_rate
from flowkit.dynamo.induction import InductionOperator
from flowkit.dynamo.results import CriticalRm, GrowthResult, KzScan, RmSweep
from flowkit.dynamo.sphere import benchmark_flow

__all__ = ["growth_rate", "sweep_rm", "sweep_kz", "critical_rm", "InductionOperator", "GrowthResult", "RmSweep",
           "KzScan", "CriticalRm", "benchmark_flow"]
