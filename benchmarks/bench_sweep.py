"""Sweep task overhead on the dask backend, and scaling from one to two workers.

Compute time of the default chunking (tasks of ~0.5 s) is measured in-process on
one thread; the same tasks then run on a dask LocalCluster with one worker and
with two workers (single-threaded processes, kernels warmed first). Overhead per
point = (dask wall time with one worker - in-process compute) / in-process compute.
"""

import sys
import time

sys.path.insert(0, str(__import__("pathlib").Path(__file__).parent))
from _common import save  # noqa: E402

from flowkit.sweep import SweepSpec  # noqa: E402
from flowkit.sweep.runner import WORKER_ENV, _warm_worker, chunk, compute_point, compute_task  # noqa: E402


def main():
    import numba

    numba.set_num_threads(1)
    spec = SweepSpec(flow={"preset": "stf"}, axes={"rotation": [i / 95 for i in range(96)]},
                     measures=["mean_ftle"], options={"mean_ftle": {"particles": 128, "time": 10.0}})
    sd = spec.as_dict()
    compute_point(sd, 0)  # warm (compiles)
    probe = compute_point(sd, 1)  # the runner sizes tasks from one warm point, like this
    tasks = chunk(list(range(96)), probe["seconds"])
    t0 = time.perf_counter()
    for t in tasks:
        compute_task(sd, t)
    inproc = time.perf_counter() - t0

    from distributed import Client, LocalCluster

    walls = {}
    for workers in (1, 2):
        with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=":0",
                          silence_logs=40, env=WORKER_ENV) as cluster, Client(cluster) as client:
            client.run(_warm_worker, sd)
            client.run(compute_task, sd, [0])  # every worker loads its measure kernels
            t0 = time.perf_counter()
            client.gather([client.submit(compute_task, sd, t, pure=False) for t in tasks])
            walls[workers] = time.perf_counter() - t0
    out = {
        "points": 96,
        "tasks": len(tasks),
        "points_per_task": len(tasks[0]),
        "in_process_seconds": inproc,
        "dask_1_worker_seconds": walls[1],
        "dask_2_workers_seconds": walls[2],
        "overhead_fraction_1_worker": (walls[1] - inproc) / inproc,
        "speedup_2_workers": walls[1] / walls[2],
    }
    for k, v in out.items():
        print(f"{k:>28}: {v:.4g}" if isinstance(v, float) else f"{k:>28}: {v}")
    save("sweep", out)


if __name__ == "__main__":
    main()
