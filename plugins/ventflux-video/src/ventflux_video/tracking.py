"""Particle tracking for sparse targets (particles, flocs, bubbles in clear fluid).

Particles are found as local intensity maxima (``skimage.feature.peak_local_max``)
above a threshold (Otsu's by default, ``skimage.filters.threshold_otsu``) and
located to sub-pixel precision by the same three-point Gaussian fit used for
correlation peaks [1]. Particles are linked from frame to frame by a motion
predictor: a particle already on a track is expected where its last
displacement takes it; a new one where the correlation field of the frame pair
(``correlation.displacement_field``) takes it. A link is accepted when the
predicted position and a particle of the next frame are each other's nearest
neighbour within a search radius (KD-trees, ``scipy.spatial.cKDTree``), so
no particle takes part in two links. All steps are vectorized over particles;
the only loop is over frames.

References
----------
.. [1] Raffel, M. et al. (2018). Particle Image Velocimetry: A Practical
   Guide, 3rd ed., Springer, ch. 5 and 9 (from memory).
.. [2] Ouellette, N. T., Xu, H. and Bodenschatz, E. (2006). A quantitative
   study of three-dimensional Lagrangian particle tracking algorithms.
   Exp. Fluids 40, 301-313 (predictive nearest-neighbour linking).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from ventflux.plugin_api import InputError

from .correlation import _resample, displacement_field, gaussian_peak_offset, window_grid


def particle_positions(frame, threshold=None, min_distance=2):
    """Sub-pixel positions ``(n, 2)`` as ``(x, y)`` of the particles in a gray frame.

    Parameters
    ----------
    frame : numpy.ndarray
    threshold : float, optional
        Intensity a maximum must exceed; Otsu's threshold if not given.
    min_distance : int
        Smallest separation of two maxima, pixels.
    """
    from skimage.feature import peak_local_max
    from skimage.filters import threshold_otsu

    img = np.asarray(frame, np.float64)
    if threshold is None:
        threshold = threshold_otsu(img) if np.ptp(img) > 0 else np.inf
    peaks = peak_local_max(img, min_distance=min_distance, threshold_abs=threshold, exclude_border=1)
    if peaks.size == 0:
        return np.empty((0, 2))
    r, c = peaks[:, 0], peaks[:, 1]
    base = np.median(img)  # the Gaussian fit wants the particle above its background
    oy = gaussian_peak_offset(img[r - 1, c] - base, img[r, c] - base, img[r + 1, c] - base)
    ox = gaussian_peak_offset(img[r, c - 1] - base, img[r, c] - base, img[r, c + 1] - base)
    return np.column_stack([c + ox, r + oy])


def link_particles(positions_a, positions_b, predicted_shift, max_distance):
    """Mutual-nearest-neighbour links between two frames after a predicted shift.

    Returns
    -------
    ia, ib : numpy.ndarray
        Indices into ``positions_a`` and ``positions_b`` of the linked particles.
    """
    if len(positions_a) == 0 or len(positions_b) == 0:
        return np.empty(0, int), np.empty(0, int)
    target = positions_a + predicted_shift
    d_ab, j = cKDTree(positions_b).query(target, k=1, distance_upper_bound=max_distance)
    d_ba, i = cKDTree(target).query(positions_b, k=1, distance_upper_bound=max_distance)
    ia = np.flatnonzero(np.isfinite(d_ab))
    jb = j[ia]
    mutual = np.isfinite(d_ba[jb]) & (i[jb] == ia)
    return ia[mutual], jb[mutual]


@dataclass
class Tracks:
    """Particle positions on tracks: one row per particle per frame (pixels)."""

    frame: np.ndarray
    track: np.ndarray
    x: np.ndarray
    y: np.ndarray

    def displacements(self):
        """Per link: ``(frame_a, track, x_mid, y_mid, dx, dy)`` between consecutive frames of a track."""
        order = np.lexsort((self.frame, self.track))
        f, t, x, y = self.frame[order], self.track[order], self.x[order], self.y[order]
        same = (t[1:] == t[:-1]) & (f[1:] == f[:-1] + 1)
        return (f[:-1][same], t[:-1][same], 0.5 * (x[1:] + x[:-1])[same], 0.5 * (y[1:] + y[:-1])[same],
                (x[1:] - x[:-1])[same], (y[1:] - y[:-1])[same])


class ParticleTracker:
    """Links particle detections frame by frame; ``step`` takes the next frame.

    Parameters
    ----------
    max_distance : float
        Search radius around each predicted position, pixels.
    predictor : {"correlation", "none"}
        Prediction for particles not yet on a track.
    threshold, min_distance
        For ``particle_positions``.
    passes : sequence of int
        Window sizes of the correlation predictor.
    """

    def __init__(self, max_distance=3.0, predictor="correlation", threshold=None, min_distance=2,
                 passes=(64, 32)):
        if not max_distance > 0:
            raise InputError("search radius", max_distance, "a distance > 0 pixels")
        if predictor not in ("correlation", "none"):
            raise InputError("predictor", predictor, "correlation or none")
        self.max_distance = float(max_distance)
        self.predictor = predictor
        self.threshold, self.min_distance, self.passes = threshold, min_distance, passes
        # the previous frame: its image, detections, track ids and velocities, set together by step
        self._frame: np.ndarray | None = None
        self._pos: np.ndarray | None = None
        self._ids: np.ndarray | None = None
        self._vel: np.ndarray | None = None
        self._index: int  # its delivered index, read only once _pos is set
        self._next_id = 0
        self._rows = []
        self.frames = 0

    def step(self, index, frame, origin=(0, 0)):
        """Detect particles in ``frame`` (delivered index ``index``) and link them to the previous frame.

        Returns ``(ia, ib)`` links into the previous and the new detections.
        """
        pos = particle_positions(frame, self.threshold, self.min_distance)
        ia = ib = np.empty(0, int)
        if self._pos is None or index != self._index + 1:
            ids = np.arange(self._next_id, self._next_id + len(pos))
            self._next_id += len(pos)
            vel = np.full((len(pos), 2), np.nan)
        else:
            assert self._vel is not None and self._ids is not None  # set with _pos at the previous frame
            shift = self._vel.copy()
            new = ~np.isfinite(shift[:, 0])
            if new.any():
                shift[new] = self._predict(self._frame, frame, self._pos[new])
            ia, ib = link_particles(self._pos, pos, shift, self.max_distance)
            ids = np.full(len(pos), -1)
            ids[ib] = self._ids[ia]
            fresh = ids < 0
            ids[fresh] = np.arange(self._next_id, self._next_id + fresh.sum())
            self._next_id += int(fresh.sum())
            vel = np.full((len(pos), 2), np.nan)
            vel[ib] = pos[ib] - self._pos[ia]
        self._rows.append((np.full(len(pos), index), ids, pos[:, 0] + origin[0], pos[:, 1] + origin[1]))
        self._frame, self._pos, self._ids, self._vel, self._index = frame, pos, ids, vel, index
        self.frames += 1
        return ia, ib

    def _predict(self, a, b, pts):
        if self.predictor == "none" or len(pts) == 0:
            return np.zeros((len(pts), 2))
        fits = tuple(p for p in self.passes if p <= min(a.shape))
        f = displacement_field(a, b, passes=fits or (2 * (min(a.shape) // 2),))
        cy, cx = f.y, f.x  # origin (0, 0): region coordinates
        return np.column_stack([_resample(cy, cx, f.dx, pts[:, 1], pts[:, 0]),
                                _resample(cy, cx, f.dy, pts[:, 1], pts[:, 0])])

    def tracks(self) -> Tracks:
        if not self._rows:
            return Tracks(*(np.empty(0) for _ in range(4)))
        return Tracks(*(np.concatenate(c) for c in zip(*self._rows)))


def track_particles(frames, **options) -> Tracks:
    """Track particles through an iterable of ``(index, frame)`` (e.g. a ``FrameStream``)."""
    tracker = ParticleTracker(**options)
    for index, frame in frames:
        tracker.step(index, frame)
    return tracker.tracks()


def mean_tracked_field(stream, cell=32, overlap=0.5, gap=1, pairs=None, max_distance=3.0, predictor="correlation",
                       threshold=None):
    """Time-averaged displacement on the correlation mode's grid, from particle tracks.

    Links are binned to the nearest grid point (cells of one grid step); each
    frame pair contributes the mean of its links in a cell, and the average and
    spread are over pairs, as in the correlation mode.

    Returns
    -------
    ventflux_video.averaging.MeanField (``mode="tracking"``)
    """
    from .averaging import FieldAccumulator, _finish, check_pairs

    if gap != 1:
        raise InputError("--gap", gap, "1 for particle tracking (tracks link consecutive frames)")
    available = None if stream.expected_frames is None else stream.expected_frames - 1
    check_pairs(pairs, available)
    h, w = stream.shape
    step = max(1, int(round(cell * (1 - overlap))))
    cy = window_grid(h, cell, step) + (cell - 1) / 2
    cx = window_grid(w, cell, step) + (cell - 1) / 2
    tracker = ParticleTracker(max_distance=max_distance, predictor=predictor, threshold=threshold)
    acc = FieldAccumulator()
    background = None
    prev = None
    for index, frame in stream:
        if background is None:
            background = frame.copy()
        ia, ib = tracker.step(index, frame)
        pos_prev, pos = prev, tracker._pos
        assert pos is not None  # step has just set it
        prev = pos
        if pos_prev is None or len(ia) == 0:  # first frame, or no links (e.g. after a skipped frame)
            continue
        mid = 0.5 * (pos_prev[ia] + pos[ib])
        d = pos[ib] - pos_prev[ia]
        iy = np.rint((mid[:, 1] - cy[0]) / step).astype(int)
        ix = np.rint((mid[:, 0] - cx[0]) / step).astype(int)
        inside = (iy >= 0) & (iy < cy.size) & (ix >= 0) & (ix < cx.size)
        k = iy[inside] * cx.size + ix[inside]
        n = np.bincount(k, minlength=cy.size * cx.size).reshape(cy.size, cx.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            mx = np.bincount(k, d[inside, 0], cy.size * cx.size).reshape(n.shape) / n
            my = np.bincount(k, d[inside, 1], cy.size * cx.size).reshape(n.shape) / n
        acc.add(mx, my, n > 0)
        if pairs is not None and acc.pairs >= pairs:
            break
    return _finish(acc, (cx + stream.origin[0], cy + stream.origin[1]), stream, 1, pairs, background, mode="tracking")
