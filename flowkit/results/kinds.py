"""Where each result kind is defined, so :func:`flowkit.load` imports only what it needs.

Add a line here for every new :class:`~flowkit.results.Result` subclass.
"""

MODULES: dict[str, str] = {
    "Section": "flowkit.sections.result",
    "PeriodicOrbit": "flowkit.sections.orbit_results",
    "OrbitSet": "flowkit.sections.orbit_results",
    "Manifold": "flowkit.sections.orbit_results",
}
