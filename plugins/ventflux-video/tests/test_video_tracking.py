"""Particle tracking against rendered sequences with known tracks.

Particles turn about the image centre while drifting (analytic positions in
every frame, ``synthetic.rotating_tracks``). Seeding density stated: 0.004
particles per pixel² (about 260 particles in a 256 x 256 frame), particle
images 3 px, displacements up to about 5 px per frame.
"""

import numpy as np
import pytest
from scipy.spatial import cKDTree

from ventflux_video import synthetic as syn
from ventflux_video import tracking as tr

DENSITY = 0.004


@pytest.fixture(scope="module")
def sequence():
    return syn.rotating_tracks((256, 256), n_frames=10, density=DENSITY, omega=0.03, drift=(1.5, -1.0), seed=4)


def _truth_ids(pos, truth_xy):
    d, i = cKDTree(truth_xy).query(pos, k=1)
    return np.where(d < 0.5, i, -1)


def test_centroids_are_subpixel(sequence):
    frames, truth = sequence
    pos = tr.particle_positions(frames[0])
    inside = (truth[0, :, 0] > 3) & (truth[0, :, 0] < 252) & (truth[0, :, 1] > 3) & (truth[0, :, 1] < 252)
    d, _ = cKDTree(pos).query(truth[0][inside])
    found = d < 1.0
    assert found.mean() > 0.9  # overlapping particles merge; most are found
    assert np.sqrt(np.mean(d[found] ** 2)) < 0.1  # analytic positions


def test_tracks_velocities_within_2_percent_and_at_most_1_percent_wrong_links(sequence):
    frames, truth = sequence
    tracker = tr.ParticleTracker(max_distance=3.0)
    wrong = total = 0
    err2 = speed2 = 0.0
    prev = None
    for k, frame in enumerate(frames):
        ia, ib = tracker.step(k, frame)
        pos = tracker._pos
        ids = _truth_ids(pos, truth[k])
        if prev is not None and len(ia):
            pid, ppos = prev
            known = (pid[ia] >= 0) & (ids[ib] >= 0)
            wrong += int((pid[ia][known] != ids[ib][known]).sum())
            total += int(known.sum())
            ok = known & (pid[ia] == ids[ib])
            d_meas = pos[ib][ok] - ppos[ia][ok]
            d_true = truth[k, ids[ib][ok]] - truth[k - 1, pid[ia][ok]]
            err2 += float(np.sum((d_meas - d_true) ** 2))
            speed2 += float(np.sum(d_true**2))
        prev = (ids, pos)
    assert total > 1500
    assert wrong / total <= 0.01  # issue 5 limit at the stated density
    assert np.sqrt(err2 / speed2) <= 0.02  # issue 5 limit: velocities within 2 %


def test_tracks_table_and_displacements(sequence):
    frames, _ = sequence
    tracks = tr.track_particles(enumerate(frames[:4]))
    f, t, x, y, dx, dy = tracks.displacements()
    assert len(dx) > 200
    # Drift (1.5, -1) plus rotation averaging to zero over the frame (analytic).
    assert np.median(dx) == pytest.approx(1.5, abs=0.5)
    assert np.median(dy) == pytest.approx(-1.0, abs=0.5)


def test_link_particles_is_one_to_one():
    a = np.array([[10.0, 10.0], [12.0, 10.0], [50.0, 50.0]])
    b = np.array([[11.0, 10.0], [51.0, 50.5]])
    ia, ib = tr.link_particles(a, b, np.zeros_like(a), 3.0)
    assert len(set(ib.tolist())) == len(ib)
    assert (2, 1) in set(zip(ia.tolist(), ib.tolist()))
