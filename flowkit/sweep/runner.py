"""Run a sweep in-process or on a dask cluster, writing each finished point at once."""

from __future__ import annotations

import math
import sys
import time
from typing import Sequence

from flowkit.errors import FlowkitError
from flowkit.sweep.spec import SweepSpec
from flowkit.sweep.store import SweepStore

#: Environment of worker processes: one compute thread each, and OpenMP threads that sleep
#: instead of spinning between parallel regions (spinning threads of one worker otherwise
#: steal the core of the next; measured 2.4x slower points with two workers on two cores).
WORKER_ENV = {"NUMBA_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "OMP_WAIT_POLICY": "PASSIVE"}

#: target wall time of one task (several points per task keeps scheduler overhead small)
TASK_SECONDS = 1.0


def compute_point(spec_dict: dict, index: int) -> dict:
    """Compute every measure at one point; importable, so dask workers can run it."""
    from flowkit.flows.registry import rebuild_flow
    from flowkit.sweep.measures import MEASURES

    spec = SweepSpec.from_dict(spec_dict, "sweep task payload")
    params = spec.points()[index]
    flow = rebuild_flow(spec.flow, {**spec.base, **params})
    t0 = time.perf_counter()
    measures = {}
    for name in spec.measures:
        out = MEASURES[name](flow, spec.seed + index, **spec.options.get(name, {}))
        measures[name] = {k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in out.items()}
    return {"index": index, "params": params, "measures": measures, "seconds": time.perf_counter() - t0}


def compute_task(spec_dict: dict, indices: Sequence[int]) -> list[dict]:
    """A task: several points computed one after another."""
    return [compute_point(spec_dict, i) for i in indices]


def _warm_worker(spec_dict: dict) -> float:
    """Compile the flow's kernels on a worker before tasks arrive."""
    from flowkit.flows.registry import rebuild_flow

    spec = SweepSpec.from_dict(spec_dict, "sweep task payload")
    return rebuild_flow(spec.flow, dict(spec.base)).family.warm()


def chunk(indices: list[int], seconds_per_point: float, task_seconds: float = TASK_SECONDS) -> list[list[int]]:
    """Group point indices so that each task takes about ``task_seconds``."""
    size = max(1, int(round(task_seconds / max(seconds_per_point, 1e-6))))
    return [indices[i:i + size] for i in range(0, len(indices), size)]


def run_sweep(
    spec: SweepSpec,
    store_path,
    scheduler: str | None = None,
    local_cluster: int | None = None,
    progress: bool = True,
    task_seconds: float = TASK_SECONDS,
) -> dict:
    """Compute every unfinished point of ``spec`` into the store at ``store_path``.

    Parameters
    ----------
    spec : SweepSpec
        What to compute.
    store_path : path
        Store folder; an existing store of the same sweep is resumed.
    scheduler : str, optional
        Address of a running dask scheduler (e.g. ``tcp://10.0.0.5:8786``).
    local_cluster : int, optional
        Start a dask ``LocalCluster`` with this many single-threaded worker processes.
    progress : bool
        Show a tqdm progress bar.
    task_seconds : float
        Target duration of one task.

    Returns
    -------
    dict
        ``points`` (records in sweep order), ``computed`` (indices computed now),
        ``reused`` (count found in the store), ``seconds``, ``backend``,
        ``dashboard`` (dask only), ``store``.
    """
    from tqdm.auto import tqdm

    if scheduler and local_cluster:
        raise FlowkitError("give either --scheduler or --local-cluster, not both")
    if local_cluster is not None and local_cluster < 1:
        raise FlowkitError(f"--local-cluster needs at least 1 worker; got {local_cluster}")
    backend = "in-process" if not (scheduler or local_cluster) else "dask"
    client = cluster = None
    if backend == "dask":  # connect before touching the store: an unreachable scheduler fails fast
        client, cluster = _connect(scheduler, local_cluster)
    try:
        store = SweepStore(store_path, spec)
        done = store.done()
        todo = [i for i in range(len(spec.points())) if i not in done]
        spec_dict = spec.as_dict()
        t0 = time.perf_counter()
        computed: list[int] = []
        dashboard = client.dashboard_link if client is not None else None
        if dashboard:
            print(f"flowkit sweep: dask dashboard at {dashboard}", file=sys.stderr, flush=True)
        bar = tqdm(total=len(spec.points()), initial=len(done), desc="sweep", disable=not progress)

        def keep(records):
            for rec in records:
                store.write(rec)
                computed.append(rec["index"])
                bar.update(1)

        try:
            if todo:
                if client is None:
                    first = compute_task(spec_dict, todo[:1])  # also warms this process's kernels
                else:
                    client.run(_warm_worker, spec_dict)
                    first = client.submit(compute_task, spec_dict, todo[:1], pure=False).result()
                keep(first)
                rest = todo[1:]
                if rest:  # time one warm point to size the tasks (the first one paid for compilation)
                    probe = compute_task(spec_dict, rest[:1]) if client is None else \
                        client.submit(compute_task, spec_dict, rest[:1], pure=False).result()
                    keep(probe)
                    rest = rest[1:]
                    per_point = probe[0]["seconds"]
                else:
                    per_point = first[0]["seconds"]
                tasks = chunk(rest, max(per_point, 1e-4), task_seconds)
                if client is None:  # in-process: store each point the moment it is done
                    for task in tasks:
                        for index in task:
                            keep([compute_point(spec_dict, index)])
                else:
                    from distributed import as_completed

                    futures = [client.submit(compute_task, spec_dict, t, pure=False) for t in tasks]
                    for fut in as_completed(futures):
                        keep(fut.result())
        finally:
            bar.close()
            store.log_run({"backend": backend, "computed": computed, "seconds": time.perf_counter() - t0})
            store.write_netcdf()
    finally:
        if client is not None:
            client.close()
        if cluster is not None:
            cluster.close()
    records = store.done()
    return {
        "points": [records[i] for i in sorted(records)],
        "computed": computed,
        "reused": len(done),
        "seconds": time.perf_counter() - t0,
        "backend": backend,
        "dashboard": dashboard,
        "store": str(store.path),
    }


def _connect(scheduler, local_cluster):
    """A dask client (and the cluster it started, if any)."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise FlowkitError("the dask backend needs dask.distributed: pip install 'flowkit[cluster]'") from None
    if scheduler:
        try:
            return Client(scheduler, timeout="5s"), None
        except (OSError, TimeoutError) as exc:
            raise FlowkitError(
                f"cannot reach the dask scheduler at {scheduler!r} within 5 s ({type(exc).__name__}); "
                "check the address and that the scheduler is running"
            ) from None
    cluster = LocalCluster(n_workers=local_cluster, threads_per_worker=1, processes=True,
                           dashboard_address=":0", silence_logs=40, env=WORKER_ENV)
    return Client(cluster), cluster
