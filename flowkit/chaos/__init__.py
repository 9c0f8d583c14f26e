"""Chaos measures: Lyapunov spectra, the per-orbit chaos indicator and chaotic fraction, FTLE fields.

Modules
-------
tangent    tangent-space runs and checks shared by the measures below
spectrum   :func:`lyapunov_spectrum` -> :class:`Spectrum` (QR method, error bars, convergence)
indicator  :func:`orbit_indicator`, :func:`attach_indicator`, :func:`chaotic_fraction`
grid       :class:`GridPlane` (where an FTLE grid lies)
ftle       :func:`ftle_field` -> :class:`FTLEField`
"""

from flowkit.chaos.ftle import FTLE_SETTINGS, FTLEField, ftle_field, ftle_from_states
from flowkit.chaos.grid import GridPlane
from flowkit.chaos.indicator import (
    ChaoticFraction, OrbitExponents, attach_indicator, chaotic_fraction, default_threshold, orbit_ftle,
    orbit_indicator, random_seeds,
)
from flowkit.chaos.spectrum import Spectrum, lyapunov_spectrum
from flowkit.chaos.tangent import n_exponents, require_flow, run_tangent

__all__ = ["Spectrum", "lyapunov_spectrum", "orbit_ftle", "orbit_indicator", "attach_indicator",
           "default_threshold", "ChaoticFraction", "chaotic_fraction", "OrbitExponents", "random_seeds",
           "GridPlane", "FTLEField", "ftle_field", "ftle_from_states", "FTLE_SETTINGS", "require_flow",
           "run_tangent", "n_exponents"]
