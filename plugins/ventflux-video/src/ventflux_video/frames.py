"""Streamed gray frames from a video file or an image sequence.

Video containers (mp4, mov, avi, mkv, ...) are decoded by the ffmpeg binary
that ships with ``imageio-ffmpeg``, which pipes one gray frame at a time, so
memory stays flat whatever the clip's length. Every decoded frame is passed
through as it is stored (no frames duplicated or dropped to make a constant
rate), and each frame's time is its presentation timestamp in the container,
read from the packets without decoding: a clip recorded at a variable frame
rate is timed frame by frame (``FrameStream.times``).

Image sequences are a folder of images or a glob pattern
(``"dive/frame_*.png"``), read one file at a time with ``imageio``, in the
natural order of the number in their names (``frame_2`` before ``frame_10``);
that number is the frame's index, so a missing number (a gap) breaks the
pairs across it instead of pairing frames two intervals apart, and two files
with the same number (``frame_7.png`` and ``frame_007.png``) are a duplicate:
the first in text order is used and the others are listed (``duplicates``). Colour
images are converted to luma with the ITU-R BT.601 weights [1] (what ffmpeg's
``gray`` output uses).

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
import re
import subprocess
import sys
from collections import OrderedDict
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
    colour : bool
        Deliver ``(rows, columns, 3)`` RGB frames instead of gray ones (for
        coloured laser spots); a gray image is repeated in the three channels.

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
    gaps : list of int
        Image sequences: frame numbers missing between the first and the last.
    duplicates : list of str
        Image sequences: files left out because an earlier file has their number.
    times : numpy.ndarray or None
        Videos: presentation time of each stored frame (s, from the first),
        from the container; None if the container holds none.
    variable_rate : bool
        The container's frame intervals differ by more than 1 % (times are then
        used pair by pair).
    """

    def __init__(self, source, frame_rate=None, region=None, start=0, stop=None, step=1, progress=False,
                 colour=False):
        self.source = str(source)
        self.progress = progress
        self.colour = bool(colour)
        if not (isinstance(step, int) and step >= 1):
            raise InputError("frame step", step, "a whole number ≥ 1")
        if not (isinstance(start, int) and start >= 0):
            raise InputError("first frame", start, "a whole number ≥ 0")
        if stop is not None and stop <= start:
            raise InputError("last frame", stop, f"a frame after the first ({start}); the range holds no frames")
        self.start, self.stop, self.step = start, stop, step
        self.skipped = 0
        self.delivered = 0
        self.gaps, self.duplicates, self.times, self.variable_rate = [], [], None, False
        path = Path(self.source)
        if path.is_dir() or any(ch in self.source for ch in "*?["):
            self.kind = "images"
            self._files, self.gaps, self.duplicates = _numbered_files(_image_files(self.source))
            self.frame_shape = self._first_image_shape()
            native_rate, total = None, self._files[-1][0] + 1  # gaps are announced frames never delivered
        elif path.is_file():
            self.kind = "video"
            native_rate, total, self.frame_shape, times = _video_header(self.source)
            self.times = None if times is None else times.copy()
            if self.times is not None and self.times.size >= 2:
                steps = np.diff(self.times)
                if np.all(steps > 0):
                    median = float(np.median(steps))
                    self.variable_rate = bool(np.max(np.abs(steps - median)) > 0.01 * median)
                    native_rate = 1.0 / median if self.variable_rate or not native_rate else native_rate
                total = int(self.times.size)
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
        for _, f in self._files:
            img = _read_image(f)
            if img is not None:
                return img.shape
        raise InputError("clip", self.source, "an image sequence with at least one readable image")

    # -- iteration ------------------------------------------------------------------
    def __iter__(self):
        from tqdm import tqdm

        tqdm.monitor_interval = 0  # no monitor thread: the bar is updated every frame, and a caller may fork later
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
                if frame is None or frame.shape[:2] != self.frame_shape:
                    self.skipped += 1
                    continue
                if self.region is not None:
                    frame = self.region.crop(frame)
                self.delivered += 1
                yield index, np.asarray(frame, np.float32)
        finally:
            bar.close()

    def _raw_images(self):
        for i, f in self._files:
            wanted = i >= self.start and (i - self.start) % self.step == 0
            yield i, (_read_image(f, self.colour) if wanted else None)  # unwanted ones are filtered out by the caller

    def interval(self, index_a, index_b):
        """Time between two frames (s): the container's timestamps, else frames over the frame rate."""
        if self.times is not None and max(index_a, index_b) < self.times.size:
            return float(self.times[index_b] - self.times[index_a])
        return (index_b - index_a) / float(self.frame_rate.to("1/s").magnitude)

    def _raw_video(self):
        import imageio_ffmpeg

        h, w = self.frame_shape
        fmt, depth = ("rgb24", 3) if self.colour else ("gray", 1)
        gen = imageio_ffmpeg.read_frames(self.source, pix_fmt=fmt, bpp=depth, output_params=_PASSTHROUGH)
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
                yield i, np.frombuffer(buf, np.uint8).reshape((h, w, 3) if self.colour else (h, w))
                i += 1
        finally:
            gen.close()


def _video_header(source):
    """(frame rate or None, frame count or None, (rows, columns), container times or None) of a video file.

    Read once per process and version of the file (path, size, modification time): a survey reads them when
    it checks the file, and its forked workers inherit them. The last few files only (a long series of clips
    would otherwise keep every clip's frame times).
    """
    import os

    st = os.stat(source)
    key = (os.path.abspath(source), st.st_size, st.st_mtime_ns)
    if key in _HEADERS:
        _HEADERS.move_to_end(key)
    else:
        _HEADERS[key] = (*_probe_video(source), container_times(source))  # a refusal names the path as given
        while len(_HEADERS) > _HEADERS_KEPT:
            _HEADERS.popitem(last=False)
    return _HEADERS[key]


_HEADERS: OrderedDict = OrderedDict()
_HEADERS_KEPT = 8


def _probe_video(source):
    import imageio_ffmpeg

    for attempt in (1, 2):
        try:
            gen = imageio_ffmpeg.read_frames(source, pix_fmt="gray", bpp=1)
            meta = next(gen)
            gen.close()
            break
        except Exception as err:  # ffmpeg's reasons vary: no moov atom, invalid data, ...
            # imageio-ffmpeg waits 10 s for ffmpeg's header; on a loaded machine a sound file can miss that
            # once, so a file is refused only when a second try fails too (a broken one fails in milliseconds)
            if attempt == 1 and str(err).startswith("Could not load meta information"):
                continue
            reason = str(err).splitlines()[0] if str(err) else type(err).__name__
            raise InputError("clip", source,
                             f"a readable video file (ffmpeg could not open it: {reason}; "
                             "truncated or not a video?)") from None
    w, h = meta["size"]
    fps = meta.get("fps") or None
    dur = meta.get("duration") or None
    total = int(round(dur * fps)) if (fps and dur) else None
    return fps, total, (int(h), int(w))


#: ffmpeg output options: pass every decoded frame through as stored (no constant-rate resampling).
_PASSTHROUGH = ["-fps_mode", "passthrough"]


def container_times(path):
    """Presentation time (s, from the first frame) of every video frame stored in ``path``, or None.

    Read from the packets of the first video stream with ffmpeg's per-packet
    checksum listing (``-c copy -f framemd5``: no decoding), sorted into
    presentation order (packets come in decoding order when frames are
    reordered).
    """
    import imageio_ffmpeg

    cmd = [imageio_ffmpeg.get_ffmpeg_exe(), "-nostdin", "-v", "error", "-i", str(path), "-map", "0:v:0",
           "-c", "copy", "-f", "framemd5", "-"]
    try:
        out = subprocess.run(cmd, capture_output=True, text=True, timeout=600).stdout
    except (OSError, subprocess.SubprocessError):
        return None
    tb = re.search(r"^#tb 0: (\d+)/(\d+)", out, re.M)
    pts = [int(line.split(",")[2]) for line in out.splitlines()
           if line and not line.startswith("#") and len(line.split(",")) >= 6]
    if tb is None or not pts:
        return None
    t = np.sort(np.asarray(pts, float)) * int(tb.group(1)) / int(tb.group(2))
    return t - t[0]


_NUMBER = re.compile(r"(\d+)(?!.*\d)")


def _numbered_files(files):
    """``[(index, file)]`` in natural order, missing numbers, and files whose number repeats an earlier one.

    The index is the last number in the file's name less the first file's. If
    some name holds no number, the files are indexed in text order instead.
    """
    numbers = [m for m in (_NUMBER.search(Path(f).stem) for f in files) if m is not None]
    if len(numbers) < len(files):
        return list(enumerate(sorted(files))), [], []
    keyed = sorted(zip((int(m.group(1)) for m in numbers), files), key=lambda t: (t[0], t[1]))
    out, dup, seen = [], [], set()
    for n, f in keyed:
        if n in seen:
            dup.append(Path(f).name)
            continue
        seen.add(n)
        out.append((n, f))
    first = out[0][0]
    gaps = sorted(set(range(first, out[-1][0] + 1)) - seen)
    return [(n - first, f) for n, f in out], gaps, dup


def _image_files(source):
    p = Path(source)
    files = sorted(str(f) for f in p.iterdir()) if p.is_dir() else sorted(glob.glob(source))
    files = [f for f in files if Path(f).suffix.lower() in IMAGE_SUFFIXES]
    if not files:
        raise InputError("clip", source, f"a folder or pattern matching images ({', '.join(IMAGE_SUFFIXES)})")
    return files


def _read_image(path, colour=False):
    """Gray float image (RGB with ``colour``), or None if the file cannot be decoded."""
    import imageio.v3 as iio

    try:
        img = np.asarray(iio.imread(path))
    except Exception:  # any decoding failure of one frame is counted, not fatal
        return None
    if colour:
        if img.ndim == 2:
            return np.repeat(img[..., None], 3, axis=2)
        return img[..., :3] if img.ndim == 3 and img.shape[-1] >= 3 else None
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
