"""Memory stays flat over a long clip: resident memory while averaging a generated 1080p clip.

Writes a long 1920 x 1080 clip (default 10 minutes at 1 frame/s = 600 frames;
a particle texture drifting 3 px right and 2 px up per frame, H.264), then
runs ``averaging.mean_displacement_field`` over every pair of the whole clip
and, for comparison, over its first tenth. A sampler thread reads the
process's resident set size (``VmRSS`` in ``/proc/self/status``) every 0.2 s.
ffmpeg decodes in its own process and streams one frame at a time through a
pipe. Run:

    /tmp/venv/bin/python plugins/ventflux-video/benchmarks/bench_memory_long_clip.py [--minutes 10 --fps 1]

Not a test; prints the figures.
"""

from __future__ import annotations

import argparse
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

from ventflux_video import synthetic as syn
from ventflux_video.averaging import mean_displacement_field
from ventflux_video.frames import FrameStream


def rss_mib():
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


class Sampler(threading.Thread):
    def __init__(self, period=0.2):
        super().__init__(daemon=True)
        self.period, self.samples, self.stop = period, [], threading.Event()

    def run(self):
        t0 = time.perf_counter()
        while not self.stop.is_set():
            self.samples.append((time.perf_counter() - t0, rss_mib()))
            time.sleep(self.period)


def write_clip(path, frames, fps, shape=(1080, 1920), shift=(3, -2)):
    import imageio_ffmpeg

    h, w = shape
    # One texture tile, reused: frame k is the tile moved by k * shift (x right, y down).
    tile = syn.render_particles((h + 64, w + 64), *np.random.default_rng(0).uniform(0, [w + 64, h + 64],
                                (int(0.02 * (h + 64) * (w + 64)), 2)).T, diameter=3.0)
    tile = np.clip(tile * 200 + 10, 0, 255).astype(np.uint8)
    writer = imageio_ffmpeg.write_frames(str(path), (w, h), pix_fmt_in="gray", fps=fps, codec="libx264",
                                         macro_block_size=8,
                                         output_params=["-crf", "18", "-preset", "ultrafast"],
                                         ffmpeg_log_level="error")
    writer.send(None)
    for k in range(frames):  # the tile wraps around: a seam crosses the view, a few edge windows see it
        writer.send(np.ascontiguousarray(np.roll(tile, (shift[1] * k, shift[0] * k), axis=(0, 1))[:h, :w]))
    writer.close()


def run(path, stop=None, passes=(64, 32)):
    sampler = Sampler()
    base = rss_mib()
    sampler.start()
    t = time.perf_counter()
    field = mean_displacement_field(FrameStream(path, stop=stop), passes=passes, overlap=0.5)
    elapsed = time.perf_counter() - t
    sampler.stop.set()
    sampler.join()
    rss = np.array([r for _, r in sampler.samples])
    n = len(rss)
    return field, elapsed, base, rss, [rss[: max(1, int(n * q))].max() for q in (0.1, 0.5, 1.0)]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--fps", type=float, default=1.0)
    args = ap.parse_args()
    frames = int(round(args.minutes * 60 * args.fps))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "long_1080p.mp4"
        t = time.perf_counter()
        write_clip(path, frames, args.fps)
        print(f"wrote {frames} frames 1920 x 1080 ({args.minutes:g} min at {args.fps:g}/s), "
              f"{path.stat().st_size / 2**20:.1f} MiB, in {time.perf_counter() - t:.0f} s")
        short = max(3, frames // 10)
        for label, stop in ((f"first {short} frames", short), (f"all {frames} frames", None)):
            field, elapsed, base, rss, peaks = run(path, stop)
            w = -field.dy.mean()
            print(f"{label:>18}: {field.pairs} pairs in {elapsed:.0f} s ({field.pairs / elapsed:.1f} pairs/s); "
                  f"mean displacement ({field.dx.mean():.3f}, {w:.3f}) px (truth 3, 2 up); "
                  f"RSS before {base:.0f} MiB, peak after 10 % / 50 % / 100 % of the run: "
                  f"{peaks[0]:.0f} / {peaks[1]:.0f} / {peaks[2]:.0f} MiB")


if __name__ == "__main__":
    main()
