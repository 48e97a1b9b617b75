"""A 10-hour station record at 1 Hz, 20 penetrations, 11 sensors, reduced end to end (run as a script).

``reduce_station`` (read once, detect every penetration, fits, Monte Carlo) against the plain loop a user
would write without it: the penetrations cut out at their known times, each written as its own record with
its header, and ``reduce_penetration`` called on each. Wall times are measured side by side, interleaved,
best of ``--repeat`` (default 3); peak Python memory by ``tracemalloc`` in a separate pass. The record is
synthetic (cylinder solution, Carslaw & Jaeger 1959 §13.7, 10 s pulses by superposition, 1 mK noise) and
is written once to a temporary folder.

    python plugins/ventflux-thermal/benchmarks/bench_station.py [--repeat N]
"""

import argparse
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from thermal_synthetic import make_station_record  # noqa: E402

from ventflux_thermal.probe import reduce_penetration  # noqa: E402
from ventflux_thermal.station import reduce_station  # noqa: E402

N_SENSORS, N_PEN, HOURS = 11, 20, 10
DEPTHS = np.linspace(0.4, 4.4, N_SENSORS)


def scenario(folder: Path):
    rng = np.random.default_rng(11)
    pens = []
    cycle = HOURS * 3600.0 / N_PEN  # 30 min per penetration: 7 min of friction, 9 min of pulse decay, moving
    for i in range(N_PEN):
        t_pen = 300.0 + i * cycle
        pens.append(dict(t_pen=t_pen, t_hp=t_pen + 420.0, t_out=t_pen + 420.0 + 560.0,
                         k=rng.uniform(0.8, 1.2, N_SENSORS), q=float(rng.uniform(0.05, 0.8))))
    path = folder / "station.csv"
    if not path.exists():
        make_station_record(path, pens, depths=DEPTHS, t_end=HOURS * 3600.0 - 1, pulse_duration=10.0, seed=3)
    return path, pens


def plain_loop(path, pens, folder: Path):
    """The competitor: cut each penetration out at its known times and reduce it as its own record."""
    lines = path.read_text().splitlines()
    head = [ln for ln in lines if ln.startswith("#")]
    data = [ln for ln in lines if not ln.startswith("#")]
    header, rows = data[0], data[1:]
    out = []
    for i, p in enumerate(pens):  # one penetration per iteration
        part = rows[int(p["t_pen"]) - 1:int(p["t_out"]) - 2]
        rec = folder / f"pen{i:02d}.csv"
        body = [ln.split(",", 1) for ln in part]
        t0 = int(p["t_pen"]) - 1
        rec.write_text("\n".join(head + [f"# penetration_time [s]: {p['t_pen'] - 1 - t0}",
                                         f"# heat_pulse_time [s]: {p['t_hp'] - t0}",
                                         header.replace("time,", "time [s],")]
                                 + [f"{j},{b[1]}" for j, b in enumerate(body)]) + "\n")
        out.append(reduce_penetration(rec))
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    folder = Path(tempfile.gettempdir()) / "ventflux_bench_station"
    folder.mkdir(exist_ok=True)
    t0 = time.perf_counter()
    path, pens = scenario(folder)
    print(f"record: {path} ({HOURS} h at 1 Hz, {N_PEN} penetrations, {N_SENSORS} sensors; "
          f"written in {time.perf_counter() - t0:.1f} s)")
    reduce_station(path)  # warm the decay tables once (per α), as any second run would find them
    ts, tl, cs, cl = [], [], [], []
    for _ in range(args.repeat):  # interleaved
        t0, c0 = time.perf_counter(), time.process_time()
        st = reduce_station(path)
        ts.append(time.perf_counter() - t0)
        cs.append(time.process_time() - c0)
        t0, c0 = time.perf_counter(), time.process_time()
        loop = plain_loop(path, pens, folder)
        tl.append(time.perf_counter() - t0)
        cl.append(time.process_time() - c0)
    q_true = np.array([p["q"] for p in pens])
    q_st = np.array([r.heat_flow for r in st.results])
    q_loop = np.array([r.heat_flow for r in loop])
    tracemalloc.start()
    reduce_station(path)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"penetrations found and reduced: {len(st.results)} of {N_PEN} (skipped: {st.skipped or 'none'})")
    print(f"heat flow, largest error against the truth: station {100 * np.max(np.abs(q_st / q_true - 1)):.2f} %, "
          f"plain loop {100 * np.max(np.abs(q_loop / q_true - 1)):.2f} %")
    print(f"reduce_station end to end: best {min(ts):.2f} s (runs {', '.join(f'{t:.2f}' for t in ts)})")
    print(f"plain per-penetration loop: best {min(tl):.2f} s (runs {', '.join(f'{t:.2f}' for t in tl)})")
    print(f"CPU time (this process; less sensitive to other jobs): station {min(cs):.2f} s, loop {min(cl):.2f} s")
    print(f"ratio loop / station (wall): {min(tl) / min(ts):.2f}; goal: station under 10 s")
    print(f"peak Python memory of reduce_station (tracemalloc): {peak / 2**20:.1f} MiB")
    print("(2 shared cores, several engineers running jobs at the same time: timings are noisy)")


if __name__ == "__main__":
    main()
