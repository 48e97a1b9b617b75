"""Clips of a pure plume seen through its whole volume, written independently of ventflux-video.

Tracer particles are placed in three dimensions inside a round plume whose
centreline velocity follows the pure-plume law w_c = k (F/(z - z0))^(1/3)
(Morton, Taylor & Turner 1956; k from memory) with self-similar Gaussian
profiles: velocity w = w_c exp(-r²/b²), b = β (z - z0) (β from memory, 0.11),
tracer concentration ∝ exp(-r²/(λ b)²). A particle keeps its similarity
coordinates (x/b, y/b) and rises with dz/dt = k F^(1/3) e^(-η²) (z - z0)^(-1/3),
integrated exactly: (z - z0)^(4/3) = (z_r - z0)^(4/3) + (4/3) k F^(1/3) e^(-η²) (t - t_r).
Particles are released at a steady rate from below the frame, so the
concentration along a path goes as 1/(w b²) (the tracer flux is conserved),
and the released similarity coordinates are drawn so that the concentration
across the plume is the Gaussian of width λ b. The camera looks along y and
projects orthographically: every particle, wherever it lies along the line of
sight, adds a Gaussian spot at its (x, z). A motionless textured wall fills
the lower corners (what a chimney looks like), optionally a motionless
textured backdrop lies behind the lower half of the plume, and the frames are
8-bit PNGs named ``frame_1.png`` ... (numbers not zero-padded).

Nothing here uses the plugin: the check it serves compares the plugin's
estimate with the F, k and z0 written here.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np


@dataclass
class VolumePlume:
    folder: Path
    frame_rate: float  # 1/s
    metres_per_pixel: float
    orifice_xy: tuple
    buoyancy_flux: float  # m^4/s^3
    virtual_origin: float  # m, below the orifice: negative
    plume_constant: float
    width_ratio: float

    def centreline_speed(self, z):
        return self.plume_constant * np.cbrt(self.buoyancy_flux / (np.asarray(z, float) - self.virtual_origin))


def render_volume_plume(folder, frames=24, shape=(400, 300), metres_per_pixel=1e-3, frame_rate=100.0,
                        buoyancy_flux=1e-3, virtual_origin=-0.4, plume_constant=4.7, width_ratio=1.1,
                        spreading=0.11, release_rate=1500, spot_sd=0.9, wall=True, backdrop=False,
                        seed=0) -> VolumePlume:
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    h, w = shape
    ox, oy = w / 2 - 0.5, h - 20.5  # orifice: column, row (pixel centres at integers)
    z_release = -0.02  # m, released just below the orifice's row
    z_top = (oy + 10) * metres_per_pixel  # leave above the frame
    a = plume_constant * np.cbrt(buoyancy_flux)
    lift = (z_release - virtual_origin) ** (4 / 3)
    # Time from release to the top along the axis of the slowest paths kept (η up to 3 λ-widths).
    duration = frames / frame_rate
    span = ((z_top - virtual_origin) ** (4 / 3) - lift) / (4 / 3 * a * np.exp(-9.0))
    span = min(span, 40.0)  # particles slower than this never reach the view's top in the clip; a choice
    n = rng.poisson(release_rate * (span + duration))
    t_release = rng.uniform(-span, duration, n)
    # Similarity coordinates: flux-weighted so that concentration ∝ exp(-η²/λ²) (see module notes).
    sd = 1.0 / np.sqrt(2.0 * (1.0 / width_ratio**2 + 1.0))
    ex, ey = rng.normal(0, sd, n), rng.normal(0, sd, n)
    speed = np.exp(-(ex**2 + ey**2))
    bright = rng.uniform(0.5, 1.0, n)
    rows, cols = np.arange(h)[:, None], np.arange(w)[None, :]
    texture = None
    if wall:
        wall_rng = np.random.default_rng(seed + 1)
        texture = np.zeros(shape)
        mask = (np.abs(cols - ox) > 0.32 * w) & (rows > 0.55 * h)
        texture[np.broadcast_to(mask, shape)] = 0.0
        blobs = wall_rng.uniform(0, 1, shape) * mask
        texture = 0.6 * mask + 0.4 * blobs
    still = np.zeros(shape)
    if backdrop:  # a motionless textured rock face behind the lower half of the plume, seen through it
        back_rng = np.random.default_rng(seed + 2)
        bx, by = back_rng.uniform(0, w, 1500), back_rng.uniform(0.5 * h, h, 1500)
        still = 0.5 * _spots(shape, bx, by, back_rng.uniform(0.5, 1.0, bx.size), 1.2)
    for k in range(frames):
        t = k / frame_rate
        age = t - t_release
        live = age >= 0
        z = virtual_origin + (lift + 4 / 3 * a * speed[live] * age[live]) ** 0.75
        b = spreading * (z - virtual_origin)
        px = ox + ex[live] * b / metres_per_pixel
        py = oy - z / metres_per_pixel
        keep = (py > -5) & (py < h + 5) & (px > -5) & (px < w + 5)
        img = _spots(shape, px[keep], py[keep], bright[live][keep], spot_sd) + still
        if texture is not None:
            img = np.maximum(img, texture)
        img = np.clip(img * 200 + 10, 0, 255).astype(np.uint8)
        import imageio.v3 as iio

        iio.imwrite(folder / f"frame_{k + 1}.png", img)
    return VolumePlume(folder, frame_rate, metres_per_pixel, (ox, oy), buoyancy_flux, virtual_origin,
                       plume_constant, width_ratio)


def _spots(shape, x, y, amp, sd):
    """Sum of Gaussian spots sampled at pixel centres, each on a 9 x 9 patch."""
    h, w = shape
    img = np.zeros((h + 8, w + 8))
    ix, iy = np.rint(x).astype(int), np.rint(y).astype(int)
    for dy in range(-4, 5):
        for dx in range(-4, 5):
            r, c = iy + dy, ix + dx
            val = amp * np.exp(-((c - x) ** 2 + (r - y) ** 2) / (2 * sd**2))
            ok = (r >= -4) & (r < h + 4) & (c >= -4) & (c < w + 4)
            np.add.at(img, (r[ok] + 4, c[ok] + 4), val[ok])
    return img[4:-4, 4:-4]
