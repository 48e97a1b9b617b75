"""Synthetic particle images and a plume clip with known answers.

Everything here is rendered from analytic motion (positions known exactly),
independently of the velocimetry code, so it can serve as a check of it.
Particles are Gaussian spots integrated over each pixel (error-function
form), the usual model of a particle image [1].

Image coordinates: ``x`` is the column, ``y`` the row (down), pixel ``i``
spans ``i - 0.5`` to ``i + 0.5``.

References
----------
.. [1] Raffel, M., Willert, C. E., Scarano, F., Kähler, C. J., Wereley, S. T.
   and Kompenhans, J. (2018). Particle Image Velocimetry: A Practical Guide,
   3rd ed., Springer, ch. 6 (synthetic images; from memory).
.. [2] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1-23.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy.special import erf

#: The demo plume's centreline constant (the top of the published range; plume.PLUME_CONSTANT_RANGE).
DEFAULT_PLUME_CONSTANT = 4.7

_SQRT2 = np.sqrt(2.0)


def render_particles(shape, x, y, diameter=2.5, intensity=None, background=0.0, noise=0.0, rng=None):
    """Image of Gaussian particles at sub-pixel positions ``(x, y)``.

    Parameters
    ----------
    shape : (int, int)
        Image rows and columns.
    x, y : array_like
        Particle centres in pixels (column, row).
    diameter : float
        Particle image diameter at the e^-2 intensity level, pixels (the
        standard deviation is ``diameter / 4``).
    intensity : array_like, optional
        Peak intensity of each particle (1 if not given).
    background, noise : float
        Uniform background and the standard deviation of added Gaussian noise.
    rng : numpy.random.Generator, optional
        For the noise.

    Returns
    -------
    numpy.ndarray
        float64 image.
    """
    h, w = shape
    x = np.asarray(x, float).ravel()
    y = np.asarray(y, float).ravel()
    amp = np.ones_like(x) if intensity is None else np.broadcast_to(np.asarray(intensity, float), x.shape)
    s = diameter / 4.0
    half = int(np.ceil(1.5 * diameter)) + 1
    offs = np.arange(-half, half + 1)
    ix = np.floor(x + 0.5).astype(int)[:, None] + offs
    iy = np.floor(y + 0.5).astype(int)[:, None] + offs

    def _share(idx, centre):  # fraction of the Gaussian falling in each pixel
        return 0.5 * (erf((idx + 0.5 - centre[:, None]) / (_SQRT2 * s))
                      - erf((idx - 0.5 - centre[:, None]) / (_SQRT2 * s)))

    ex, ey = _share(ix, x), _share(iy, y)
    vals = (amp * 2 * np.pi * s * s)[:, None, None] * ey[:, :, None] * ex[:, None, :]
    rows = np.broadcast_to(iy[:, :, None], vals.shape)
    cols = np.broadcast_to(ix[:, None, :], vals.shape)
    inside = (rows >= 0) & (rows < h) & (cols >= 0) & (cols < w)
    # float64: bincount sums the weights (numpy's stub says an integer array)
    img: np.ndarray = np.bincount((rows[inside] * w + cols[inside]), weights=vals[inside],
                                  minlength=h * w).reshape(h, w)
    img += background
    if noise:
        img += (rng or np.random.default_rng(0)).normal(0.0, noise, img.shape)
    return img


def _seed(shape, density, margin, rng):
    h, w = shape
    n = rng.poisson(density * (h + 2 * margin) * (w + 2 * margin))
    x = rng.uniform(-margin, w + margin, n)
    y = rng.uniform(-margin, h + margin, n)
    return x, y, rng.uniform(0.6, 1.0, n)


def render_pair(shape, displacement, density=0.05, diameter=2.5, noise=0.0, seed=0):
    """Two particle images; frame B's particles moved by ``displacement(x, y) -> (dx, dy)``.

    The displacement is applied to each particle's position in frame A, so it
    is exact for fields that are constant along a particle's path (uniform,
    a shear ``dx(y)``, a jet ``dy(x)``).

    Returns
    -------
    a, b : numpy.ndarray
    """
    rng = np.random.default_rng(seed)
    x, y, amp = _seed(shape, density, 16, rng)
    dx, dy = displacement(x, y)
    a = render_particles(shape, x, y, diameter, amp, noise=noise, rng=rng)
    b = render_particles(shape, x + dx, y + dy, diameter, amp, noise=noise, rng=rng)
    return a, b


def uniform_displacement(dx, dy):
    """Displacement field of a uniform translation (pixels)."""
    return lambda x, y: (np.full_like(x, dx), np.full_like(y, dy))


def shear_displacement(rate, y_centre):
    """Linear shear: ``dx = rate * (y - y_centre)``, ``dy = 0`` (pixels)."""
    return lambda x, y: (rate * (y - y_centre), np.zeros_like(y))


def jet_displacement(peak, x_centre, width):
    """Vertical Gaussian jet: ``dy = -peak * exp(-(x - x_centre)^2 / (2 width^2))`` (up is negative rows)."""
    return lambda x, y: (np.zeros_like(x), -peak * np.exp(-((x - x_centre) ** 2) / (2 * width**2)))


def rotating_tracks(shape, n_frames, density=0.004, omega=0.03, drift=(1.5, -1.0), diameter=3.0, seed=0):
    """Frames of particles turning about the image centre (``omega`` rad/frame) while drifting.

    Returns
    -------
    frames : list of numpy.ndarray
    truth : numpy.ndarray
        ``(n_frames, n_particles, 2)`` positions (x, y) of every particle in every frame.
    """
    rng = np.random.default_rng(seed)
    h, w = shape
    x0, y0, amp = _seed(shape, density, 40, rng)
    xc, yc = (w - 1) / 2, (h - 1) / 2
    r = np.hypot(x0 - xc, y0 - yc)
    th = np.arctan2(y0 - yc, x0 - xc)
    t = np.arange(n_frames)[:, None]
    xs = xc + r * np.cos(th + omega * t) + drift[0] * t
    ys = yc + r * np.sin(th + omega * t) + drift[1] * t
    frames = [render_particles(shape, xs[i], ys[i], diameter, amp) for i in range(n_frames)]
    return frames, np.stack([xs, ys], axis=-1)


@dataclass(frozen=True)
class PlumeClipTruth:
    """What a synthetic plume clip was made with (SI units)."""

    path: str
    buoyancy_flux: float  # m^4/s^3
    virtual_origin: float  # m, height of the virtual point source (negative: below the orifice)
    plume_constant: float
    metres_per_pixel: float
    frame_rate: float  # 1/s
    orifice_xy: tuple  # pixels (column, row) in the full frame
    exit_velocity: float  # m/s, centreline speed at the orifice
    lateral_sd: float  # m, standard deviation of the lateral velocity profile
    frames: int
    width_ratio: float | None = None  # tracer over velocity width of a volume view; None: a sheet


def plume_centreline_velocity(height, buoyancy_flux, virtual_origin, plume_constant=DEFAULT_PLUME_CONSTANT):
    """Pure-plume centreline speed ``k (F / (z - z0))^(1/3)`` [2] (SI floats)."""
    return plume_constant * (buoyancy_flux / (np.asarray(height, float) - virtual_origin)) ** (1 / 3)


def plume_frames(shape=(256, 160), n_frames=100, buoyancy_flux=2.0e-4, virtual_origin=-0.05,
                 plume_constant=DEFAULT_PLUME_CONSTANT, metres_per_pixel=2.5e-3, frame_rate=50.0,
                 lateral_sd=0.15, density=0.03, diameter=3.0, seed=0, width_ratio=None):
    """Yield 8-bit frames of a particle texture advected by a pure-plume velocity field.

    The vertical speed is ``w(x, z) = k (F/(z - z0))^(1/3) exp(-(x - xc)^2 / (2 s^2))``
    with ``s = lateral_sd`` held constant (the lateral profile only shapes the
    texture; the check concerns the centreline). A particle at fixed ``x``
    obeys ``d/dt (z - z0)^(4/3) = (4/3) A(x)`` with ``A = k F^(1/3) g(x)``, so its
    height at any time is exact. Particles enter at the bottom at the rate that
    keeps their number density steady.

    With ``width_ratio`` the clip is a volume view, as a dive camera sees a
    plume: particles also have a depth ``y`` along the line of sight, the speed
    is ``g(r)`` with ``r^2 = (x - xc)^2 + y^2``, the tracer concentration is a
    Gaussian ``width_ratio`` times as wide as the velocity's, and every particle
    is projected onto the image whatever its depth.

    Returns
    -------
    generator of numpy.ndarray (uint8), and the truth as a ``PlumeClipTruth`` (path empty)
    """
    rng = np.random.default_rng(seed)
    h, w = shape
    orifice_row = h - 8.0
    xc = (w - 1) / 2
    z_bot = -(h - orifice_row + 6) * metres_per_pixel
    z_top = (orifice_row + 6) * metres_per_pixel
    if not z_bot > virtual_origin:
        raise ValueError("virtual origin must lie below the bottom of the frame")
    zeta_b, zeta_t = (z_bot - virtual_origin) ** (4 / 3), (z_top - virtual_origin) ** (4 / 3)
    s_px = lateral_sd / metres_per_pixel
    duration = n_frames / frame_rate

    def strength(x, depth=0.0):
        return plume_constant * buoyancy_flux ** (1 / 3) * np.exp(-((x - xc) ** 2 + depth**2) / (2 * s_px**2))

    # Steady initial state: density proportional to (z - z0)^(1/3), i.e. uniform in zeta.
    mean_ratio = (3 / 4) * (zeta_t - zeta_b) / ((z_bot - virtual_origin) ** (1 / 3) * (z_top - z_bot))
    if width_ratio is None:
        n0 = rng.poisson(density * w * (z_top - z_bot) / metres_per_pixel * mean_ratio)
        x_init, y_init = rng.uniform(-4, w + 4, n0), np.zeros(n0)
        # Inflow through the bottom: count per column proportional to the speed there.
        w_bot_px = strength(np.arange(-4, w + 4) + 0.5) * (z_bot - virtual_origin) ** (-1 / 3) / metres_per_pixel
        n_in = rng.poisson(density * w_bot_px.sum() * duration)
        x_in, y_in = _sample_columns(rng, w_bot_px, n_in), np.zeros(n_in)
    else:
        # Along each path the count is the path's flux times its transit time: the initial positions follow the
        # concentration (sd width_ratio * s), the inflow concentration times speed (1/sd^2 = 1/(λs)^2 + 1/s^2).
        sd_c = width_ratio * s_px
        sd_q = 1.0 / np.sqrt(1.0 / sd_c**2 + 1.0 / s_px**2)
        per_row = density * np.sqrt(2 * np.pi) * sd_c  # projected, `density` per pixel on the axis
        n0 = rng.poisson(per_row * (z_top - z_bot) / metres_per_pixel * mean_ratio)
        x_init, y_init = xc + rng.normal(0, sd_c, n0), rng.normal(0, sd_c, n0)
        speed_axis = strength(xc) * (z_bot - virtual_origin) ** (-1 / 3) / metres_per_pixel
        n_in = rng.poisson(per_row * speed_axis * (sd_q / sd_c) ** 2 * duration)
        x_in, y_in = xc + rng.normal(0, sd_q, n_in), rng.normal(0, sd_q, n_in)
    zeta_init = rng.uniform(zeta_b, zeta_t, n0)
    tau = rng.uniform(0, duration, n_in)
    zeta_in = zeta_b - (4 / 3) * strength(x_in, y_in) * tau
    x = np.concatenate([x_init, x_in])
    zeta0 = np.concatenate([zeta_init, zeta_in])
    rate = (4 / 3) * strength(x, np.concatenate([y_init, y_in]))
    amp = rng.uniform(0.5, 1.0, x.size)
    truth = PlumeClipTruth("", buoyancy_flux, virtual_origin, plume_constant, metres_per_pixel, frame_rate,
                           (xc, orifice_row), float(plume_centreline_velocity(0.0, buoyancy_flux, virtual_origin,
                                                                              plume_constant)),
                           lateral_sd, n_frames, width_ratio)

    def _gen():
        for i in range(n_frames):
            zeta = zeta0 + rate * (i / frame_rate)
            on = (zeta >= zeta_b) & (zeta <= zeta_t)
            z = virtual_origin + zeta[on] ** 0.75
            img = render_particles(shape, x[on], orifice_row - z / metres_per_pixel, diameter, amp[on])
            yield np.clip(img * 200 + 12, 0, 255).astype(np.uint8)

    return _gen(), truth


def _sample_columns(rng, weights, n):
    cols = np.arange(-4, -4 + weights.size)
    p = weights / weights.sum()
    return cols[rng.choice(weights.size, size=n, p=p)] + rng.uniform(-0.5, 0.5, n)


def render_plume_clip(path, seconds=2.0, shape=(256, 160), **options) -> PlumeClipTruth:
    """Write a short synthetic plume clip (gray mp4, nearly lossless H.264) and return its truth.

    Deterministic for given options (fixed seed); 2 s of 256 x 160 frames at
    50 frames/s take about a second. ``options`` go to ``plume_frames``
    (``buoyancy_flux`` in m^4/s^3, ``virtual_origin`` in m, ``metres_per_pixel``,
    ``frame_rate`` in 1/s, ``plume_constant``, ``lateral_sd`` in m, ``seed``, ``width_ratio`` for a
    volume view).
    """
    import imageio_ffmpeg

    frame_rate = options.get("frame_rate", 50.0)
    n = int(round(seconds * frame_rate))
    gen, truth = plume_frames(shape=shape, n_frames=n, **options)
    h, w = shape
    writer = imageio_ffmpeg.write_frames(str(path), (w, h), pix_fmt_in="gray", pix_fmt_out="yuv420p",
                                         fps=frame_rate, codec="libx264", macro_block_size=16,
                                         output_params=["-crf", "8", "-preset", "veryfast"], ffmpeg_log_level="error")
    writer.send(None)
    for frame in gen:
        writer.send(np.ascontiguousarray(frame))
    writer.close()
    return replace(truth, path=str(path))
