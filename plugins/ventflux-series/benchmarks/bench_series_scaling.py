"""Items per second of ``ventflux series``: plain serial loops over items against Dask with 1 and 2 workers.

One interleaved run (``--rounds`` rounds, each timing every mode once on the same items, no cache), so machine
noise hits every mode alike. The modes:

* ``serial loop``: ``estimate_item`` in a loop in this process, the C allocator as Python leaves it (what a user
  writes without Dask);
* ``serial loop, tuned alloc``: the same loop in a fresh process whose allocator keeps freed blocks
  (``dask_executor.tune_allocator``): the fair competitor, the best a user could pick without Dask;
* ``dask, 1 worker`` and ``dask, 2 workers``: ``DaskExecutor`` on a local cluster started as ``ventflux series``
  starts it (``dask_executor.start_local_cluster``), the shared draws and site scattered once per round.

Printed: wall-clock items/s per mode (median over rounds), CPU seconds per item (summed over the processes
that ran the items: contention-free cost), the 2-worker/1-worker scaling, the 1-worker overhead against the
fair serial loop, cluster start-up, each worker's peak memory, and the load average before and after (the
machines are shared: with more runnable processes than cores, wall-clock scaling is capped by what the other
users leave free).

    python plugins/ventflux-series/benchmarks/bench_series_scaling.py --items 24 --rounds 2
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import tempfile
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))


def _records(folder: Path, n: int, samples: int) -> Path:
    """``n`` logger downloads of ``samples`` one-minute samples each (a tidal temperature signal)."""
    from test_series import _manifest, _write_logger

    rng = np.random.default_rng(1)
    files = []
    for i in range(n):
        t_h = (i * samples + np.arange(samples)) / 60.0
        T = 320 + 3 * np.cos(2 * np.pi * t_h / 12.42) + rng.normal(0, 0.3, samples)
        _write_logger(folder / f"r{i:03d}.csv", t_h, T)
        files.append(f"r{i:03d}.csv")
    return _manifest(folder, files, velocity="1.0 ± 0.1 m/s", draws=1000)


def _peak_rss_mib():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _timed(*args):
    """One item, and the CPU seconds this process spent on it."""
    from ventflux_series.execute import _task

    c0 = time.process_time()
    _task(*args)
    return time.process_time() - c0


def _loop(task_args):
    """A plain serial loop over the items: wall seconds and CPU seconds."""
    t0, c0 = time.perf_counter(), time.process_time()
    for a in task_args:
        _timed(*a)
    return time.perf_counter() - t0, time.process_time() - c0


def _child_init():
    from ventflux_series.dask_executor import tune_allocator

    tune_allocator()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--items", type=int, default=24)
    ap.add_argument("--rounds", type=int, default=2)
    ap.add_argument("--samples", type=int, default=4320, help="one-minute samples per item (default 3 days)")
    args = ap.parse_args()
    from distributed import Client

    from ventflux_series.dask_executor import DaskExecutor, start_local_cluster
    from ventflux_series.inputs import series_input_draws, site_state
    from ventflux_series.manifest import read_manifest

    load0 = os.getloadavg()
    folder = Path(tempfile.mkdtemp())
    m = read_manifest(_records(folder, args.items, args.samples))
    draws, _ = series_input_draws(m)
    site = site_state(m)
    settings = {"draws": m.draws, "seed": m.seed, "interval_s": m.interval_s, "max_unphysical": m.max_unphysical}

    def task_args(shared_site, shared_draws):
        return [(it, m.vents[it.vent], shared_site, shared_draws[it.vent], settings, None, False)
                for it in m.items]

    plain = task_args(site, draws)
    _timed(*plain[0])  # warm the property table in this process
    tuned = ProcessPoolExecutor(1, initializer=_child_init)
    tuned.submit(_timed, *plain[0]).result()
    clusters, startup = {}, {}
    for n in (1, 2):
        t0 = time.perf_counter()
        cl = start_local_cluster(n)
        c = Client(cl)
        c.run(_timed, *plain[0])  # warm each worker's property table
        startup[n] = time.perf_counter() - t0
        clusters[n] = (cl, c, DaskExecutor(f"{n} workers", c))
    names = ["serial loop", "serial loop, tuned alloc", "dask, 1 worker", "dask, 2 workers"]
    wall: dict[str, list[float]] = {k: [] for k in names}
    cpu: dict[str, list[float]] = {k: [] for k in names}
    for _ in range(args.rounds):
        w, c = _loop(plain)
        wall[names[0]].append(w)
        cpu[names[0]].append(c)
        w, c = tuned.submit(_loop, plain).result()
        wall[names[1]].append(w)
        cpu[names[1]].append(c)
        for n, key in ((1, names[2]), (2, names[3])):
            ex = clusters[n][2]
            t0 = time.perf_counter()
            share_draws = {v: ex.share(d) for v, d in draws.items()}
            cpus = ex.map(_timed, task_args(ex.share(site), share_draws))
            wall[key].append(time.perf_counter() - t0)
            cpu[key].append(float(np.sum(cpus)))
    mem = {n: clusters[n][1].run(_peak_rss_mib) for n in (1, 2)}
    tuned_rss = tuned.submit(_peak_rss_mib).result()
    tuned.shutdown()
    for cl, c, _ex in clusters.values():
        c.close()
        cl.close()
    n_items = len(plain)
    rate = {k: float(np.median([n_items / w for w in v])) for k, v in wall.items()}
    cpu_item = {k: float(np.median(v)) / n_items for k, v in cpu.items()}
    load1 = os.getloadavg()
    print(f"{n_items} items ({args.samples} one-minute logger samples each, {m.draws} draws), {args.rounds} "
          f"interleaved rounds; {os.cpu_count()} cores, load average {load0[0]:.1f} before, {load1[0]:.1f} after "
          "(machine shared with other users)")
    print(f"  {'mode':<26} {'items/s':>8} {'CPU s/item':>11}")
    for k in names:
        print(f"  {k:<26} {rate[k]:8.3f} {cpu_item[k]:11.2f}")
    print(f"  scaling 2 workers / 1 worker: {rate[names[3]] / rate[names[2]]:.2f}x (ideal 2)")
    for base in names[:2]:
        print(f"  overhead of 1 worker vs {base}: {100 * (1 - rate[names[2]] / rate[base]):+.1f} % wall, "
              f"{100 * (cpu_item[names[2]] / cpu_item[base] - 1):+.1f} % CPU per item")
    print(f"  cluster start-up: {startup[1]:.1f} s (1 worker), {startup[2]:.1f} s (2 workers)")
    print("  peak memory per worker [MiB]: " + ", ".join(f"{v:.0f}" for n in (1, 2) for v in mem[n].values()))
    print(f"  peak memory of the serial loops' processes [MiB]: {_peak_rss_mib():.0f} (default alloc), "
          f"{tuned_rss:.0f} (tuned alloc)")


if __name__ == "__main__":
    main()
