"""Pixel size: from two points a known distance apart, or from two laser-scaler spots.

Both give one length per pixel for the whole region, which holds when the
camera looks square-on at the plane of the jet. Perspective (a tilted view,
lens distortion, the jet nearer or farther than the scale) is out of scope
and not corrected.

Laser spots are the two brightest compact maxima of the gray frame after a
light Gaussian smoothing (``skimage.feature.peak_local_max``), located to
sub-pixel precision with the three-point Gaussian fit; over several frames
the median separation is used.
"""

from __future__ import annotations

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude

from .correlation import gaussian_peak_offset


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


def laser_spots(frame, smoothing=1.0, min_separation=5):
    """Sub-pixel positions ``(2, 2)`` as ``(x, y)`` of the two brightest spots in a frame (None if not two)."""
    from scipy.ndimage import gaussian_filter
    from skimage.feature import peak_local_max

    img = gaussian_filter(np.asarray(frame, np.float64), smoothing)
    peaks = peak_local_max(img, min_distance=min_separation, num_peaks=2, exclude_border=1)
    if len(peaks) < 2:
        return None
    r, c = peaks[:, 0], peaks[:, 1]
    base = np.median(img)
    oy = gaussian_peak_offset(img[r - 1, c] - base, img[r, c] - base, img[r + 1, c] - base)
    ox = gaussian_peak_offset(img[r, c - 1] - base, img[r, c] - base, img[r, c + 1] - base)
    return np.column_stack([c + ox, r + oy])


def metres_per_pixel_from_laser_spots(frames, separation, max_frames=25):
    """Pixel size from two laser spots ``separation`` apart, median over up to ``max_frames`` frames.

    Parameters
    ----------
    frames : iterable of ``(index, frame)`` or of frames
        E.g. a ``FrameStream`` (its region should contain the spots).
    separation : pint.Quantity
        Distance between the two laser beams.

    Returns
    -------
    (pint.Quantity, pint.Quantity, int)
        Pixel size, its standard deviation over frames, frames used.
    """
    d = _check_length(separation, "--laser-separation")
    seps = []
    for item in frames:
        frame = item[1] if isinstance(item, tuple) else item
        spots = laser_spots(frame)
        if spots is not None:
            seps.append(float(np.hypot(*(spots[1] - spots[0]))))
        if len(seps) >= max_frames:
            break
    seps = np.asarray(seps)
    seps = seps[seps > 0]
    if seps.size == 0:
        raise InputError("--laser-separation", f"{separation:~P}", "a clip whose frames show two laser spots")
    mpp = d / seps
    return Q_(float(np.median(mpp)), "m"), Q_(float(np.std(mpp, ddof=1)) if mpp.size > 1 else 0.0, "m"), int(mpp.size)
