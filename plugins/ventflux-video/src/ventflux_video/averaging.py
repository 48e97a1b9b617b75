"""Time averaging of displacement fields over many frame pairs, in constant memory.

Running sums (count, sum, sum of squares) per grid point are all that is
kept, so a ten-minute clip costs what a ten-second one does. Vectors the
outlier test replaced are left out of the averages (their count is reported).

Static background. Dive video shows motionless chimney walls, sediment and
lit haze behind the tracer; correlated with the moving tracer, they pull the
correlation peak towards zero displacement. By default the temporal median
of up to ``BACKGROUND_FRAMES`` frames spread over the clip's range is
subtracted from every frame before correlation (a moving tracer seldom sits
on one pixel in most frames, a fixed object always does; common practice, no
source). It costs one extra read of those frames.

Variable frame rate. When the container's frame intervals differ, each pair's
displacement is rescaled to the clip's median interval by its own timestamp
difference before averaging.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude

from .correlation import VectorField, check_passes, displacement_field, pattern_width
from .frames import frame_pairs

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint

#: Frames taken, evenly spread over the clip's range, for the median background (a choice: a median of
#: 21 values is robust to a tracer on a pixel in up to 10 of them).
BACKGROUND_FRAMES = 21
BACKGROUND_METHODS = ("median", "none")


@dataclass
class MeanField:
    """Time-averaged displacement per frame interval ``interval`` on a grid (pixels)."""

    x: np.ndarray
    y: np.ndarray
    dx: np.ndarray  # mean, right
    dy: np.ndarray  # mean, down the image
    dx_sd: np.ndarray  # standard deviation over pairs
    dy_sd: np.ndarray
    count: np.ndarray  # valid vectors per point
    pairs: int
    replaced_fraction: float
    snr: np.ndarray  # mean peak ratio (correlation) or NaN (tracking)
    interval: pint.Quantity  # pint time between the two frames of a pair
    background: np.ndarray | None = None  # a frame of the clip, for figures
    origin: tuple = (0, 0)
    skipped_frames: int = 0
    missing_frames: int = 0
    mode: str = "correlation"
    frame_gaps: tuple = ()  # frame numbers missing from an image sequence
    duplicate_frames: tuple = ()  # image files left out: their number repeats an earlier file's
    variable_rate: bool = False
    background_removed: str = "none"
    pattern_width: float = float("nan")  # px, sd of the tracer pattern's autocorrelation peak (first pair)

    def velocity(self, metres_per_pixel):
        """Mean and sd of ``u`` (right) and ``w`` (up) in m/s: ``(u, w, u_sd, w_sd)``."""
        s = magnitude(metres_per_pixel, "m", "length", "metres per pixel") / magnitude(self.interval, "s", "time")
        return (Q_(self.dx * s, "m/s"), Q_(-self.dy * s, "m/s"), Q_(self.dx_sd * s, "m/s"), Q_(self.dy_sd * s, "m/s"))


class FieldAccumulator:
    """Running count, sum and sum of squares of valid vectors on a fixed grid."""

    def __init__(self):
        self.n: np.ndarray | None = None  # no grid before the first pair

    def add(self, dx, dy, valid, snr=None):
        if self.n is None:
            shape = dx.shape
            self.n = np.zeros(shape)
            self.sx, self.sy, self.sxx, self.syy, self.ssnr = (np.zeros(shape) for _ in range(5))
            self.pairs = 0
            self.invalid = 0
        v = valid.astype(float)
        self.n += v
        self.sx += np.where(valid, dx, 0.0)
        self.sy += np.where(valid, dy, 0.0)
        self.sxx += np.where(valid, dx * dx, 0.0)
        self.syy += np.where(valid, dy * dy, 0.0)
        if snr is not None:
            self.ssnr += np.where(valid & np.isfinite(snr), snr, 0.0)
        self.pairs += 1
        self.invalid += int((~valid).sum())

    def moments(self):
        assert self.n is not None  # _finish refuses a clip without pairs before asking for the moments
        with np.errstate(invalid="ignore", divide="ignore"):
            n = self.n
            mx, my = self.sx / n, self.sy / n
            var_x = (self.sxx - n * mx * mx) / (n - 1)
            var_y = (self.syy - n * my * my) / (n - 1)
            sd_x = np.sqrt(np.clip(var_x, 0, None))
            sd_y = np.sqrt(np.clip(var_y, 0, None))
            snr = self.ssnr / n
        return mx, my, sd_x, sd_y, snr


def check_pairs(pairs, available, field="--pairs"):
    """Refuse averaging over more pairs than a clip holds."""
    if pairs is None:
        if available is not None and available < 1:
            raise InputError(field, "(all)", "a clip with at least two frames in the range for one frame pair")
        return
    if not (isinstance(pairs, int) and pairs >= 1):
        raise InputError(field, pairs, "a whole number of frame pairs ≥ 1")
    if available is not None and pairs > available:
        raise InputError(field, pairs, f"at most {max(available, 0)} frame pairs, all this clip's range holds")


def static_background(stream, frames=BACKGROUND_FRAMES):
    """Temporal median of up to ``frames`` frames spread evenly over the stream's range (float32), or None."""
    from .frames import FrameStream

    total = stream.expected_frames
    stride = max(1, (total or frames) // frames)
    sub = FrameStream(stream.source, frame_rate=stream.frame_rate, region=stream.region, start=stream.start,
                      stop=stream.stop, step=stream.step * stride)
    held = []
    for _, frame in sub:
        held.append(frame.astype(np.float16))  # half the memory; 11 bits of mantissa hold 8-bit video exactly
        if len(held) >= frames:
            break
    if len(held) < 3:
        return None
    return np.median(np.stack(held), axis=0).astype(np.float32)


def mean_displacement_field(stream, passes=(64, 32, 32), overlap=0.5, gap=1, pairs=None, background="median",
                            **options) -> MeanField:
    """Average the correlation displacement field over the frame pairs of a stream.

    Parameters
    ----------
    stream : ventflux_video.frames.FrameStream
    passes, overlap, options
        As for ``correlation.displacement_field``.
    gap : int
        Pair frames ``gap`` (delivered) frames apart.
    pairs : int, optional
        Average over this many pairs (all if not given); more than the clip
        holds is an error.
    background : {"median", "none"}
        Subtract the clip's temporal median before correlation (module notes).

    Returns
    -------
    MeanField
    """
    check_passes(passes, overlap)
    if background not in BACKGROUND_METHODS:
        raise InputError("background", background, "one of " + ", ".join(BACKGROUND_METHODS))
    if not (isinstance(gap, int) and gap >= 1):
        raise InputError("--gap", gap, "a whole number of frames ≥ 1")
    available = None if stream.expected_frames is None else stream.expected_frames - gap
    check_pairs(pairs, available)
    still = static_background(stream) if background == "median" else None
    acc = FieldAccumulator()
    last = None
    picture = None
    width = float("nan")
    nominal = gap * stream.step / float(stream.frame_rate.to("1/s").magnitude)
    for i, a, b in frame_pairs(stream, gap):
        if picture is None:
            picture = a.copy()
        if still is not None:
            a, b = a - still, b - still
        if not np.isfinite(width):
            width = pattern_width(a, passes[-1])
        last = displacement_field(a, b, passes, overlap, origin=stream.origin, **options)
        dx, dy = last.dx, last.dy
        if stream.variable_rate:
            r = nominal / stream.interval(i, i + gap * stream.step)
            dx, dy = dx * r, dy * r
        acc.add(dx, dy, ~last.replaced, last.snr)
        if pairs is not None and acc.pairs >= pairs:
            break
    out = _finish(acc, last, stream, gap, pairs, picture)
    out.background_removed = "temporal median" if still is not None else "none"
    out.pattern_width = width
    return out


def _finish(acc, last, stream, gap, pairs, background, mode="correlation"):
    got = 0 if acc.n is None else acc.pairs
    if got == 0 or (pairs is not None and got < pairs):
        raise InputError("--pairs" if pairs else "clip", pairs if pairs else stream.source,
                         f"a clip whose range yields {'the requested' if pairs else 'at least one'} frame pair"
                         f"{'s' if pairs else ''} (got {got}; {stream.skipped} frames skipped)")
    mx, my, sx, sy, snr = acc.moments()
    x, y = (last.x, last.y) if isinstance(last, VectorField) else last
    return MeanField(x=x, y=y, dx=mx, dy=my, dx_sd=sx, dy_sd=sy, count=acc.n, pairs=got,
                     replaced_fraction=acc.invalid / max(acc.n.size * got, 1), snr=snr if mode == "correlation" else
                     np.full(mx.shape, np.nan), interval=(gap * stream.step / stream.frame_rate).to("s"),
                     background=background, origin=stream.origin, skipped_frames=stream.skipped,
                     missing_frames=stream.missing, mode=mode, frame_gaps=tuple(stream.gaps),
                     duplicate_frames=tuple(stream.duplicates), variable_rate=stream.variable_rate)


def mean_field_of_clip(stream, mode="correlation", passes=(64, 32, 32), overlap=0.5, gap=1, pairs=None,
                       max_distance=3.0, background="median") -> MeanField:
    """Time-averaged field of a stream by window correlation or particle tracking (``mode``)."""
    from .tracking import mean_tracked_field

    if mode == "correlation":
        from .correlation import release_threads

        try:
            return mean_displacement_field(stream, passes, overlap, gap, pairs, background)
        finally:
            release_threads()
    if mode == "tracking":
        check_passes(passes, overlap)
        return mean_tracked_field(stream, cell=passes[-1], overlap=overlap, gap=gap, pairs=pairs,
                                  max_distance=max_distance)
    raise InputError("mode", mode, "correlation or tracking")
