"""Parameter sweeps that survive interruption, in-process or on a dask cluster.

>>> from flowkit.sweep import SweepSpec, run_sweep
>>> spec = SweepSpec(flow={"preset": "stf"}, axes={"rotation": [0.0, 0.5, 1.0]}, measures=["mean_ftle"])
>>> out = run_sweep(spec, "sweep-store")          # doctest: +SKIP
"""

from flowkit.sweep.measures import MEASURES, register
from flowkit.sweep.runner import run_sweep
from flowkit.sweep.spec import SweepSpec, parse_range
from flowkit.sweep.store import SweepStore


def open_results(store_path):
    """The finished points of a sweep store as an ``xarray.Dataset``.

    The store is data: its manifest is checked key by key and no formula in it is evaluated.
    """
    from flowkit.sweep.store import read_manifest

    manifest, where = read_manifest(store_path)
    return SweepStore(store_path, SweepSpec.from_dict(manifest["spec"], f"{where}: key 'spec'")).to_xarray()


__all__ = ["MEASURES", "register", "run_sweep", "SweepSpec", "SweepStore", "parse_range", "open_results"]
