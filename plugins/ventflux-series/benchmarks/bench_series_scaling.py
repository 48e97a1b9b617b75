"""Items per second of ``ventflux series``: a plain serial loop over items against Dask with 1 and 2 workers.

One interleaved run (``--rounds`` rounds, each timing every mode once on the same items, no cache), so machine
noise hits every mode alike. Prints items/s per mode, the 2-worker/1-worker scaling, the 1-worker overhead
against the serial loop, and each worker's peak memory. The serial loop calls the same estimator (the fair
baseline: what a user would write without Dask). Cluster start-up is excluded from the per-item rate and
printed separately.

    python plugins/ventflux-series/benchmarks/bench_series_scaling.py --items 24 --rounds 2
"""

from __future__ import annotations

import argparse
import resource
import sys
import tempfile
import time
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


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--items", type=int, default=40)
    ap.add_argument("--rounds", type=int, default=2)
    ap.add_argument("--samples", type=int, default=4320, help="one-minute samples per item (default 3 days)")
    args = ap.parse_args()
    from distributed import Client, LocalCluster

    from ventflux_series.execute import _task
    from ventflux_series.inputs import series_input_draws, site_state
    from ventflux_series.manifest import read_manifest

    folder = Path(tempfile.mkdtemp())
    m = read_manifest(_records(folder, args.items, args.samples))
    draws, _ = series_input_draws(m)
    site = site_state(m)
    task_args = [(it, m.vents[it.vent], site, draws[it.vent], m.draws, m.interval_s, m.max_unphysical, m.seed, None, "")
                 for it in m.items]
    _task(*task_args[0])  # warm the property table in this process
    clusters, startup = {}, {}
    for n in (1, 2):
        t0 = time.perf_counter()
        cl = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None, silence_logs=40)
        c = Client(cl)
        c.run(lambda: _task(*task_args[0]))  # warm each worker's property table
        startup[n] = time.perf_counter() - t0
        clusters[n] = (cl, c)
    rates = {"serial loop": [], "dask, 1 worker": [], "dask, 2 workers": []}
    for _ in range(args.rounds):
        t0 = time.perf_counter()
        for a in task_args:
            _task(*a)
        rates["serial loop"].append(len(task_args) / (time.perf_counter() - t0))
        for n, key in ((1, "dask, 1 worker"), (2, "dask, 2 workers")):
            c = clusters[n][1]
            t0 = time.perf_counter()
            futs = [c.submit(_task, *a, pure=False) for a in task_args]
            c.gather(futs)
            rates[key].append(len(task_args) / (time.perf_counter() - t0))
            del futs
    mem = {n: clusters[n][1].run(_peak_rss_mib) for n in (1, 2)}
    for cl, c in clusters.values():
        c.close()
        cl.close()
    med = {k: float(np.median(v)) for k, v in rates.items()}
    print(f"{len(task_args)} items ({args.samples} one-minute logger samples each, 1000 draws), {args.rounds} "
          "interleaved rounds")
    for k, v in med.items():
        print(f"  {k:<16} {v:6.2f} items/s")
    print(f"  scaling 2 workers / 1 worker: {med['dask, 2 workers'] / med['dask, 1 worker']:.2f}x (ideal 2)")
    print(f"  overhead of 1 worker vs serial loop: {100 * (1 - med['dask, 1 worker'] / med['serial loop']):+.1f} %")
    print(f"  cluster start-up: {startup[1]:.1f} s (1 worker), {startup[2]:.1f} s (2 workers)")
    print("  peak memory per worker [MiB]: " + ", ".join(f"{v:.0f}" for n in (1, 2) for v in mem[n].values()))
    print(f"  peak memory of the serial loop's process [MiB]: {_peak_rss_mib():.0f}")


if __name__ == "__main__":
    main()
