"""Benchmark: interactive latency of ``ventflux --help`` and ``ventflux orifice … --json``.

Each command runs in a fresh interpreter (warm disk cache, warm property
table), interleaved over ``--rounds`` with the baseline every scientific
Python user pays anyway, ``python -c "import numpy, scipy, pint"``; medians
are compared. Goals (issue: interactive latency): ``--help`` under 0.7 s,
``orifice --json`` under 1 s and at most 4x the baseline. The secondary line
is ``python -c "pass"``, the interpreter alone.

Run:  python tests/benchmarks/bench_startup.py [--rounds 7]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

ORIFICE = ["orifice", "--temperature", "352 ± 3 degC", "--velocity", "1.4 ± 0.2 m/s", "--diameter", "12 cm",
           "--depth", "2550 m", "--ambient-temperature", "2.1 degC", "--json"]


def _ventflux():
    exe = Path(sys.executable).with_name("ventflux")
    return [str(exe)] if exe.exists() else [sys.executable, "-m", "ventflux"]


def _time(cmd) -> float:
    t0 = time.perf_counter()
    res = subprocess.run(cmd, capture_output=True, text=True, check=False)
    t = time.perf_counter() - t0
    if res.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed: {res.stderr.strip().splitlines()[-1:]}")
    return t


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=7)
    a = ap.parse_args(argv)
    vf = _ventflux()
    cmds = {
        "python -c 'pass'": [sys.executable, "-c", "pass"],
        "python -c 'import numpy, scipy, pint'": [sys.executable, "-c", "import numpy, scipy, pint"],
        "ventflux --help": vf + ["--help"],
        "ventflux orifice ... --json": vf + ORIFICE,
    }
    for cmd in cmds.values():  # warm the disk cache, the unit registry's and the property table's caches
        _time(cmd)
    times: dict[str, list[float]] = {k: [] for k in cmds}
    for _ in range(a.rounds):
        for k, cmd in cmds.items():
            times[k].append(_time(cmd))
    med = {k: sorted(v)[len(v) // 2] for k, v in times.items()}
    base = med["python -c 'import numpy, scipy, pint'"]
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"shared machine: 2 cores, about 9 engineers working at once (load average {load:.1f}); "
          f"medians of {a.rounds} interleaved rounds")
    for k, t in med.items():
        print(f"  {k:40s} {t:6.2f} s   ({t / base:4.2f} x numpy+scipy+pint)")
    h, o = med["ventflux --help"], med["ventflux orifice ... --json"]
    print(f"ratio orifice --json / import numpy, scipy, pint: {o / base:.2f} x (goal <= 4 x; < 1 s: "
          f"{'yes' if o < 1 else 'NO'}); --help < 0.7 s: {'yes' if h < 0.7 else 'NO'}")
    bare = med["python -c 'pass'"]
    print(f"secondary: ventflux --help / python alone: {h / bare:.1f} x")


if __name__ == "__main__":
    main()
