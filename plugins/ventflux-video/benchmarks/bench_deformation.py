"""Window-deformation multi-pass: ventflux-video against OpenPIV's, side by side (time ratio and RMS errors).

1024 x 1024 rendered particle pairs (uniform sub-pixel displacements up to
4 px, known exactly; 2.5 px particles, 0.05 per pixel), passes 64, 32, 32 px,
final windows 32 px at 50 % overlap. The reference is OpenPIV's
window-deformation multi-pass (``openpiv.windef.simple_multipass``, window
sizes 64, 32, 32 with overlaps 32, 16, 16, symmetric deformation, cubic
spline image interpolation, Gaussian sub-pixel peak: its defaults otherwise),
on the same pairs in the same process, the repeats of the two interleaved,
best of ``--repeat`` kept for each. Run:

    python plugins/ventflux-video/benchmarks/bench_deformation.py [--pairs 3 --repeat 2]

Not a test; prints the figures. Shared 2-core machines move the times by tens
of per cent from run to run; the ratio is measured side by side.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import time

import numpy as np

from ventflux_video import correlation as cc
from ventflux_video import synthetic as syn


def _rms(dx, dy, tx, ty):
    inner = (slice(1, -1), slice(1, -1))  # edge windows reach past the frame in both methods
    return float(np.sqrt(np.mean((dx - tx)[inner] ** 2 + (dy - ty)[inner] ** 2)))


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pairs", type=int, default=3)
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--size", type=int, default=1024)
    args = ap.parse_args()
    from openpiv import windef

    rng = np.random.default_rng(2026)
    pairs = []
    for k in range(args.pairs):
        d = tuple(rng.uniform(-4, 4, 2))
        a, b = syn.render_pair((args.size, args.size), syn.uniform_displacement(*d), density=0.05, diameter=2.5,
                               seed=k)
        pairs.append((a.astype(np.float32), b.astype(np.float32), d))
    settings = windef.PIVSettings()
    settings.windowsizes, settings.overlap, settings.num_iterations = (64, 32, 32), (32, 16, 16), 3
    settings.show_plot = settings.save_plot = False

    def ours(a, b):
        f = cc.displacement_field(a, b, passes=(64, 32, 32), overlap=0.5)
        return f.dx, f.dy

    def reference(a, b):
        with contextlib.redirect_stdout(io.StringIO()):  # it prints a line per pass
            out = windef.simple_multipass(a, b, settings)
        return out[2], -out[3]  # its v is up-positive

    methods = {"ventflux-video deformation 64,32,32": ours, "OpenPIV windef 64,32,32": reference}
    ours(*pairs[0][:2])  # first use measures the thread count (about 0.1 s), not part of the timing
    best = dict.fromkeys(methods, np.inf)
    errors = {}
    for _ in range(args.repeat):
        for name, fn in methods.items():
            t = time.perf_counter()
            out = [fn(a, b) for a, b, _ in pairs]
            best[name] = min(best[name], time.perf_counter() - t)
            errors[name] = float(np.mean([_rms(u, v, *d) for (u, v), (_, _, d) in zip(out, pairs)]))
    print(f"{args.pairs} pairs {args.size} x {args.size}, uniform displacements up to 4 px, final windows 32 px, "
          f"50 % overlap; {os.cpu_count()} cores (shared with other work), ventflux-video threads: "
          f"{cc._thread_count()}")
    for name in methods:
        print(f"  {name:<40} {best[name] / args.pairs:7.3f} s/pair   RMS error {errors[name]:.4f} px")
    ours_name, ref_name = list(methods)
    print(f"time ratio (OpenPIV / ventflux-video): {best[ref_name] / best[ours_name]:.1f}x;  RMS "
          f"{errors[ours_name]:.4f} px vs {errors[ref_name]:.4f} px; goal >= 3x at equal or lower RMS")


if __name__ == "__main__":
    main()
