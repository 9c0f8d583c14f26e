"""Where each result kind is defined, so :func:`flowkit.load` imports only what it needs.

Add a line here for every new :class:`~flowkit.results.Result` subclass.
"""

MODULES: dict[str, str] = {
    "Section": "flowkit.sections.result",
    "GrowthResult": "flowkit.dynamo.results",
    "RmSweep": "flowkit.dynamo.results",
    "KzScan": "flowkit.dynamo.results",
    "CriticalRm": "flowkit.dynamo.results",
    "Spectrum": "flowkit.chaos.spectrum",
    "OrbitExponents": "flowkit.chaos.indicator",
    "ChaoticFraction": "flowkit.chaos.indicator",
    "FTLEField": "flowkit.chaos.ftle",
    "StretchResult": "flowkit.fields.results",
    "LineResult": "flowkit.fields.results",
    "FluxResult": "flowkit.fields.results",
    "PeriodicOrbit": "flowkit.sections.orbit_results",
    "OrbitSet": "flowkit.sections.orbit_results",
    "Manifold": "flowkit.sections.orbit_results",
    "ContinuationCurve": "flowkit.sections.orbit_results",
    "RotationProfile": "flowkit.sections.rotation",
    "CurveGeometry": "flowkit.topology.results",
    "Writhe": "flowkit.topology.results",
    "Linking": "flowkit.topology.results",
    "RibbonTopology": "flowkit.topology.results",
    "RibbonHistory": "flowkit.topology.results",
    "Helicity": "flowkit.topology.results",
}
