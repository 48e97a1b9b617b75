"""Pixel size: from two points a known distance apart, or from two laser-scaler spots.

Both give one length per pixel for the whole region, which holds when the
camera looks square-on at the plane of the jet. Perspective (a tilted view,
lens distortion, the jet nearer or farther than the scale) is out of scope
and not corrected.

Laser spots are told from marine snow and lit particles by their colour
(``laser_colour``: red, green or white, see ``spot_score``): the two highest
compact maxima of the colour score after a light Gaussian smoothing
(``skimage.feature.peak_local_max``), each located to sub-pixel precision by
the centroid of its upper half. Over several frames the median separation is
used; its spread over frames is reported, and a spread above
``MAX_SCALE_SPREAD`` is refused.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint


def _check_length(length, field):
    d = magnitude(length, "m", "length", field)
    if not (np.isfinite(d) and d > 0):
        raise InputError(field, f"{length:~P}", "a length > 0, e.g. '10 cm'")
    return d


def metres_per_pixel_from_points(point_a, point_b, distance, field="--points"):
    """Pixel size from two image points ``(x, y)`` (pixels) a known ``distance`` apart.

    Returns
    -------
    pint.Quantity
        Length of one pixel (m).
    """
    d = _check_length(distance, "--distance")
    a, b = np.asarray(point_a, float), np.asarray(point_b, float)
    sep = float(np.hypot(*(b - a)))
    if not sep > 0:
        raise InputError(field, f"{a.tolist()} and {b.tolist()}", "two distinct points (a scale of zero pixels)")
    return Q_(d / sep, "m")


LASER_COLOURS = ("red", "green", "white")
#: Largest accepted spread (relative standard deviation) of the scale over frames (a choice: spots that move
#: by more than this between frames are not the laser's, or the camera's distance is changing).
MAX_SCALE_SPREAD = 0.02
_SPOT_RADIUS = 6  # px around each peak used to locate the spot (a choice: laser spots are a few px across)


def spot_score(frame, colour="white"):
    """How much each pixel looks like a laser spot of ``colour`` (float, larger is more).

    ``red``: red over the brighter of green and blue; ``green``: green over the
    brighter of red and blue, so white marine snow (all channels alike) scores
    about zero; ``white``: the dimmest channel (bright in all three), or the
    gray value of a gray frame.
    """
    if colour not in LASER_COLOURS:
        raise InputError("laser colour", colour, "one of " + ", ".join(LASER_COLOURS))
    f = np.asarray(frame, np.float32)
    if f.ndim == 2:
        if colour != "white":
            raise InputError("laser colour", colour, "white for a gray clip (no colour to tell the spots by)")
        return f
    r, g, b = f[..., 0], f[..., 1], f[..., 2]
    if colour == "red":
        return r - np.maximum(g, b)
    if colour == "green":
        return g - np.maximum(r, b)
    return np.minimum(np.minimum(r, g), b)


def laser_spots(frame, colour="white", smoothing=1.0, min_separation=5):
    """Sub-pixel positions ``(2, 2)`` as ``(x, y)`` of the two strongest spots of ``colour`` (None if not two).

    The two highest maxima of the smoothed colour score are located to
    sub-pixel precision by the centroid of the score above half the peak's
    height (over the local background, the score's median) within
    ``_SPOT_RADIUS`` px: unbiased for a symmetric spot, and for saturated
    (flat-topped) ones where a three-point fit is not.
    """
    from scipy.ndimage import gaussian_filter
    from skimage.feature import peak_local_max

    score = spot_score(frame, colour)
    img = gaussian_filter(score, smoothing)
    peaks = peak_local_max(img, min_distance=min_separation, num_peaks=2, exclude_border=1)
    if len(peaks) < 2:
        return None
    base = float(np.median(score))
    out = []
    r = _SPOT_RADIUS
    for pr, pc in peaks:
        top, left = max(pr - r, 0), max(pc - r, 0)
        patch = score[top:pr + r + 1, left:pc + r + 1] - base
        level = 0.5 * float(patch.max())
        if not level > 0:
            return None
        wgt = np.where(patch >= level, patch - level, 0.0)
        rows, cols = np.indices(patch.shape)
        out.append(((wgt * cols).sum() / wgt.sum() + left, (wgt * rows).sum() / wgt.sum() + top))
    return np.asarray(out)


@dataclass(frozen=True)
class LaserScale:
    """Pixel size from two laser spots over several frames."""

    metres_per_pixel: pint.Quantity  # median over frames
    sd: pint.Quantity  # standard deviation over frames
    spread: float  # sd / median
    frames_used: int
    colour: str

    @property
    def relative_error(self):
        """Standard error of the median scale, relative (``1.25 spread / sqrt(n)``, the median's efficiency)."""
        return 1.2533 * self.spread / np.sqrt(self.frames_used) if self.frames_used > 1 else 0.0

    def as_dict(self):
        return {"metres_per_pixel_m": self.metres_per_pixel.to("m").magnitude,
                "metres_per_pixel_sd_m": self.sd.to("m").magnitude, "scale_spread": self.spread,
                "scale_relative_error": self.relative_error, "frames_used": self.frames_used,
                "laser_colour": self.colour}


def metres_per_pixel_from_laser_spots(frames, separation, max_frames=25, colour="white",
                                      max_spread=MAX_SCALE_SPREAD) -> LaserScale:
    """Pixel size from two laser spots ``separation`` apart, median over up to ``max_frames`` frames.

    Parameters
    ----------
    frames : iterable of ``(index, frame)`` or of frames
        E.g. a ``FrameStream`` (colour frames for a red or green laser; its
        region should contain the spots).
    separation : pint.Quantity
        Distance between the two laser beams.
    colour : {"red", "green", "white"}
        Colour of the spots (``spot_score``).
    max_spread : float
        A scale whose relative standard deviation over frames exceeds this is
        refused: the spots found are not the same two from frame to frame.

    Returns
    -------
    LaserScale
    """
    d = _check_length(separation, "--laser-separation")
    found: list[float] = []
    for item in frames:
        frame = item[1] if isinstance(item, tuple) else item
        spots = laser_spots(frame, colour)
        if spots is not None:
            found.append(float(np.hypot(*(spots[1] - spots[0]))))
        if len(found) >= max_frames:
            break
    seps = np.asarray(found)
    seps = seps[seps > 0]
    if seps.size == 0:
        raise InputError("--laser-separation", f"{separation:~P}",
                         f"a clip whose frames show two {colour} laser spots")
    mpp = d / seps
    median = float(np.median(mpp))
    sd = float(np.std(mpp, ddof=1)) if mpp.size > 1 else 0.0
    spread = sd / median
    if spread > max_spread:
        raise InputError("--laser-colour", colour,
                         f"spots whose separation varies by at most {100 * max_spread:g} % between frames "
                         f"(measured {100 * spread:.0f} % over {mpp.size} frames: other bright points are taken "
                         "for the spots; give the spots' colour or a --region around them)")
    return LaserScale(Q_(median, "m"), Q_(sd, "m"), spread, int(mpp.size), colour)
