"""Wall-clock and CPU time of the demo survey, forked workers against one process, and where the time goes.

Run: python tests/benchmarks/bench_survey.py [--rounds R]

1. ``ventflux survey examples/oskeran-ridge/survey.toml --quiet`` with ``--scheduler auto`` (the default:
   forked worker processes on Linux with two or more cores) and ``--scheduler serial`` (one process; the
   figures are still rendered in forked workers), run alternately ``R`` times each, as a user runs them:
   a new interpreter every time, byte-compiled modules warm. Printed: the median wall time of each, their
   ratio, and the CPU time (user + system of the command and every process it started). The competitor is
   the same survey in one process: no other program computes this survey.
2. One run with progress messages, time-stamped: how long each phase takes (start-up and reading the
   files, the estimates, writing the results).

3. How much work the machine's cores do together: the same pure-Python loop in one process, then in one
   process per core at once. On shared virtual cores ``cores`` busy processes do less than ``cores`` times the
   work of one (two of these machines' vCPUs do 1.3 to 1.9 times, measured, depending on the other tenants);
   the wall time of a run cannot go below its one-process CPU time over that factor.

These machines are shared (2 cores): expect tens of per cent of noise in absolute times; the two modes are
measured side by side.
"""

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
SURVEY = ROOT / "examples" / "oskeran-ridge" / "survey.toml"


def _command(out, scheduler, quiet=True):
    return [sys.executable, "-m", "ventflux", "survey", str(SURVEY), "--out", str(out), "--scheduler", scheduler] + (
        ["--quiet"] if quiet else [])


def _timed(cmd):
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def _spin(seconds_of_work=20_000_000):
    """A fixed amount of pure-Python work (no I/O, no memory traffic to speak of)."""
    x = 0
    for i in range(seconds_of_work):
        x += i
    return x


def throughput(cores, rounds=3):
    """Work of ``cores`` processes at once over the work of one in the same time (ideal: ``cores``)."""
    code = f"import sys; sys.path.insert(0, {str(Path(__file__).parent)!r}); import bench_survey as b; b._spin()"
    ratios = []
    for _ in range(rounds):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", code], check=True)
        one = time.perf_counter() - t0
        t0 = time.perf_counter()
        procs = [subprocess.Popen([sys.executable, "-c", code]) for _ in range(cores)]
        for p in procs:
            p.wait()
        together = time.perf_counter() - t0
        ratios.append(cores * one / together)
    return statistics.median(ratios)


def compare(rounds, out):
    subprocess.run(_command(out, "serial"), check=True, stdout=subprocess.DEVNULL)  # warm: byte code, caches
    times = {"auto": [], "serial": []}
    for _ in range(rounds):
        for mode in times:
            times[mode].append(_timed(_command(out, mode)))
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    together = throughput(cores) if cores > 1 else 1.0
    print(f"demo survey, {rounds} alternate runs of each, {cores} cores (median wall; median CPU of all processes)")
    for mode, t in times.items():
        wall, cpu = statistics.median(w for w, _ in t), statistics.median(c for _, c in t)
        print(f"  --scheduler {mode:6s} {wall:6.2f} s wall   {cpu:6.2f} s CPU")
    ratio = statistics.median(s for s, _ in times["serial"]) / statistics.median(a for a, _ in times["auto"])
    print(f"  one process / forked: {ratio:.2f}x")
    serial_cpu = statistics.median(c for _, c in times["serial"])
    print(f"  {cores} busy processes do {together:.2f}x the work of one on this machine (ideal {cores}x): no "
          f"schedule of this run's work goes below about {serial_cpu / together:.1f} s here")


def phases(out):
    t0 = time.perf_counter()
    p = subprocess.Popen(_command(out, "auto", quiet=False), stderr=subprocess.PIPE, stdout=subprocess.DEVNULL,
                         text=True)
    marks = []
    for line in p.stderr:
        marks.append((time.perf_counter() - t0, line.strip()))
    p.wait()
    end = time.perf_counter() - t0
    start = next((t for t, m in marks if "estimating" in m), None)
    written = next((t for t, m in marks if "writing tables" in m), None)
    if start is None or written is None:
        print("  (no progress messages to time the phases)")
        return
    print(f"phases of one forked run ({end:.2f} s): start-up and reading the files {start:.2f} s, "
          f"estimates and totals {written - start:.2f} s, writing the results {end - written:.2f} s")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "results"
        compare(args.rounds, out)
        phases(out)


if __name__ == "__main__":
    main()
