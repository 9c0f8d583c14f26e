"""Explorers for JupyterLab: thin ipywidgets + ipympl layers over the flowkit API.

>>> from flowkit.lab import SectionExplorer
>>> SectionExplorer("stf", params={"rotation": 0.3})     # doctest: +SKIP

Use ``%matplotlib widget`` (ipympl) in the notebook so clicks reach the figure.
Every explorer builds its figure once and updates the artists on change; it
shows a quick preview while a slider moves and the full result when it rests,
and exports a paper figure (PDF with rasterized points, PNG) and the raw result
with provenance (npz).
"""

from flowkit.lab.controls import Debouncer, quick
from flowkit.lab.dynamo import DynamoExplorer
from flowkit.lab.ftle import FTLEExplorer
from flowkit.lab.growth import GrowthExplorer
from flowkit.lab.loops import LoopExplorer
from flowkit.lab.sections import SectionExplorer

__all__ = ["SectionExplorer", "FTLEExplorer", "GrowthExplorer", "DynamoExplorer", "LoopExplorer", "Debouncer", "quick"]
