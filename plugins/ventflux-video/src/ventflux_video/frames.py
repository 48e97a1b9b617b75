"""Streamed gray frames from a video file or an image sequence.

Video containers (mp4, mov, avi, mkv, ...) are decoded by the ffmpeg binary
that ships with ``imageio-ffmpeg``, which pipes one gray frame at a time, so
memory stays flat whatever the clip's length. Image sequences are a folder of
images or a glob pattern (``"dive/frame_*.png"``), read one file at a time with
``imageio``; colour images are converted to luma with the ITU-R BT.601
weights [1] (what ffmpeg's ``gray`` output uses).

A frame that cannot be decoded (a damaged image file, a frame of the wrong
size) is skipped and counted; it does not stop the run. ffmpeg conceals
damaged packets inside a video itself; frames it drops are reported as the
difference between the frames the container announces and those delivered.

References
----------
.. [1] ITU-R Recommendation BT.601-7 (2011). Studio encoding parameters of
   digital television, luma weights 0.299, 0.587, 0.114.
"""

from __future__ import annotations

import glob
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude

VIDEO_SUFFIXES = (".mp4", ".mov", ".avi", ".mkv", ".m4v", ".mpg", ".mpeg", ".wmv", ".webm")
IMAGE_SUFFIXES = (".png", ".tif", ".tiff", ".jpg", ".jpeg", ".bmp", ".pgm")
_LUMA = np.array([0.299, 0.587, 0.114])


@dataclass(frozen=True)
class Region:
    """A rectangle of the frame in pixels: left column, top row, width, height."""

    left: int
    top: int
    width: int
    height: int

    @classmethod
    def parse(cls, text, field="--region"):
        """From ``"LEFT,TOP,WIDTH,HEIGHT"`` (pixels) or a 4-sequence."""
        parts = text.split(",") if isinstance(text, str) else list(text)
        try:
            vals = [int(round(float(p))) for p in parts]
        except (TypeError, ValueError):
            vals = []
        if len(vals) != 4:
            raise InputError(field, text, "LEFT,TOP,WIDTH,HEIGHT in pixels, e.g. 100,40,320,480")
        if vals[2] <= 0 or vals[3] <= 0:
            raise InputError(field, text, "a region with width and height > 0 (it holds no pixels)")
        if vals[0] < 0 or vals[1] < 0:
            raise InputError(field, text, "a region with LEFT and TOP ≥ 0")
        return cls(*vals)

    def check(self, frame_shape, field="--region"):
        h, w = frame_shape
        if self.left + self.width > w or self.top + self.height > h:
            raise InputError(field, f"{self.left},{self.top},{self.width},{self.height}",
                             f"a region inside the {w} x {h} frame (LEFT + WIDTH ≤ {w}, TOP + HEIGHT ≤ {h})")

    def crop(self, frame):
        return frame[self.top:self.top + self.height, self.left:self.left + self.width]


class FrameStream:
    """Iterate over ``(index, frame)`` of a clip; ``frame`` is a float32 gray array of the region.

    Parameters
    ----------
    source : str or path
        A video file, a folder of images or a glob pattern of images.
    frame_rate : pint.Quantity, optional
        Overrides the rate stored in the file (required for image sequences).
    region : Region or str, optional
        Region of interest; the whole frame if not given.
    start, stop, step : int
        Frame range (``stop`` exclusive, ``None`` to the end), as for ``range``.
    progress : bool
        Show a progress bar on standard error.

    Attributes
    ----------
    frame_rate : pint.Quantity
    frame_shape : (int, int)
        Full-frame rows and columns.
    expected_frames : int or None
        Frames the file announces (after start/stop/step), if known.
    skipped : int
        Frames that could not be decoded (counted during iteration).
    delivered : int
    """

    def __init__(self, source, frame_rate=None, region=None, start=0, stop=None, step=1, progress=False):
        self.source = str(source)
        self.progress = progress
        if not (isinstance(step, int) and step >= 1):
            raise InputError("frame step", step, "a whole number ≥ 1")
        if not (isinstance(start, int) and start >= 0):
            raise InputError("first frame", start, "a whole number ≥ 0")
        if stop is not None and stop <= start:
            raise InputError("last frame", stop, f"a frame after the first ({start}); the range holds no frames")
        self.start, self.stop, self.step = start, stop, step
        self.skipped = 0
        self.delivered = 0
        path = Path(self.source)
        if path.is_dir() or any(ch in self.source for ch in "*?["):
            self.kind = "images"
            self._files = _image_files(self.source)
            self.frame_shape = self._first_image_shape()
            native_rate, total = None, len(self._files)
        elif path.is_file():
            self.kind = "video"
            native_rate, total, self.frame_shape = self._probe_video()
        else:
            raise InputError("clip", self.source, "an existing video file, image folder or glob pattern of images")
        if frame_rate is not None:
            rate = magnitude(frame_rate, "1/s", "frequency", "--frame-rate")
            if not rate > 0:
                raise InputError("--frame-rate", f"{frame_rate:~P}", "a frame rate > 0, e.g. '30/s'")
            self.frame_rate = frame_rate.to("1/s")
        elif native_rate:
            self.frame_rate = Q_(float(native_rate), "1/s")
        else:
            raise InputError("--frame-rate", "(not given)",
                             "a frame rate for an image sequence or a file without one, e.g. '30/s'")
        self.region = Region.parse(region) if isinstance(region, (str, list, tuple)) else region
        if self.region is not None:
            self.region.check(self.frame_shape)
        self.expected_frames = None
        if total:
            end = total if stop is None else min(stop, total)
            self.expected_frames = max(0, -(-(end - start) // step))
            if self.expected_frames == 0:
                raise InputError("first frame", start, f"a frame within the clip's {total} frames")

    # -- properties -----------------------------------------------------------------
    @property
    def origin(self):
        """Column and row of the region's top-left pixel in the full frame."""
        return (0, 0) if self.region is None else (self.region.left, self.region.top)

    @property
    def shape(self):
        """Rows and columns of the frames delivered."""
        return self.frame_shape if self.region is None else (self.region.height, self.region.width)

    @property
    def frame_interval(self):
        return (1 / self.frame_rate).to("s")

    @property
    def missing(self):
        """Frames announced by the file but neither delivered nor counted as skipped."""
        if self.expected_frames is None:
            return 0
        return max(0, self.expected_frames - self.delivered - self.skipped)

    # -- opening --------------------------------------------------------------------
    def _first_image_shape(self):
        for f in self._files:
            img = _read_image(f)
            if img is not None:
                return img.shape
        raise InputError("clip", self.source, "an image sequence with at least one readable image")

    def _probe_video(self):
        import imageio_ffmpeg

        try:
            gen = imageio_ffmpeg.read_frames(self.source, pix_fmt="gray", bpp=1)
            meta = next(gen)
            gen.close()
        except Exception as err:  # ffmpeg's reasons vary: no moov atom, invalid data, ...
            reason = str(err).splitlines()[0] if str(err) else type(err).__name__
            raise InputError("clip", self.source,
                             f"a readable video file (ffmpeg could not open it: {reason}; truncated or not a video?)") from None
        w, h = meta["size"]
        fps = meta.get("fps") or None
        dur = meta.get("duration") or None
        total = int(round(dur * fps)) if (fps and dur) else None
        return fps, total, (int(h), int(w))

    # -- iteration ------------------------------------------------------------------
    def __iter__(self):
        from tqdm import tqdm

        bar = tqdm(total=self.expected_frames, disable=not self.progress, unit="frame", file=sys.stderr,
                   desc=Path(self.source).name, leave=False)
        try:
            raw = self._raw_images() if self.kind == "images" else self._raw_video()
            for index, frame in raw:
                if index < self.start or (index - self.start) % self.step:
                    continue
                if self.stop is not None and index >= self.stop:
                    break
                bar.update(1)
                if frame is None or frame.shape != self.frame_shape:
                    self.skipped += 1
                    continue
                if self.region is not None:
                    frame = self.region.crop(frame)
                self.delivered += 1
                yield index, np.asarray(frame, np.float32)
        finally:
            bar.close()

    def _raw_images(self):
        for i, f in enumerate(self._files):
            wanted = i >= self.start and (i - self.start) % self.step == 0
            yield i, (_read_image(f) if wanted else None)  # unwanted ones are filtered out by the caller

    def _raw_video(self):
        import imageio_ffmpeg

        h, w = self.frame_shape
        gen = imageio_ffmpeg.read_frames(self.source, pix_fmt="gray", bpp=1)
        next(gen)
        i = 0
        try:
            while True:
                try:
                    buf = next(gen)
                except StopIteration:
                    return
                except RuntimeError:  # the stream ended inside a frame: count it and stop
                    yield i, None
                    return
                yield i, np.frombuffer(buf, np.uint8).reshape(h, w)
                i += 1
        finally:
            gen.close()


def _image_files(source):
    p = Path(source)
    files = sorted(str(f) for f in p.iterdir()) if p.is_dir() else sorted(glob.glob(source))
    files = [f for f in files if Path(f).suffix.lower() in IMAGE_SUFFIXES]
    if not files:
        raise InputError("clip", source, f"a folder or pattern matching images ({', '.join(IMAGE_SUFFIXES)})")
    return files


def _read_image(path):
    """Gray float image, or None if the file cannot be decoded."""
    import imageio.v3 as iio

    try:
        img = np.asarray(iio.imread(path))
    except Exception:  # any decoding failure of one frame is counted, not fatal
        return None
    if img.ndim == 3:
        img = img[..., :3] @ _LUMA[: img.shape[-1]] if img.shape[-1] >= 3 else img[..., 0]
    if img.ndim != 2:
        return None
    return img


def frame_pairs(stream, gap=1):
    """Yield ``(index_a, frame_a, frame_b)`` for frames ``gap`` apart, holding ``gap + 1`` frames at most.

    A pair whose second frame was skipped is left out (its time step would be wrong).
    """
    held = {}
    for index, frame in stream:
        held[index] = frame
        first = index - gap * stream.step
        if first in held:
            yield first, held[first], frame
        for k in [k for k in held if k <= first]:
            del held[k]
