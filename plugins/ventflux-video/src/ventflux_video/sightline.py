"""Line of sight: from the speed a camera sees through a whole plume to its centreline speed.

A dive camera does not look at a thin sheet of the plume: every tracer along
its line of sight contributes to the image. Across a round plume of
self-similar Gaussian profiles [1], at a distance ``y`` along the line of
sight through the axis,

    w(y) = w_c exp(-y^2 / b^2),     c(y) ∝ exp(-y^2 / (λ b)^2)           [1]

with ``b`` the velocity half-width and ``λ`` the ratio of the tracer's width
to the velocity's (``tracer_to_velocity_width_ratio``). Window correlation
sums the correlation peaks of all those tracer patterns, each at its own
displacement ``D(y) = D_c exp(-y^2/b^2)`` and weighted by the tracer there;
each is as wide as the pattern's autocorrelation peak (standard deviation
``σ``, measured on the clip). The measured displacement is where that sum
peaks:

    R(s) = ∫ c(y) exp(-(s - D(y))^2 / (2 σ^2)) dy,   D_app = argmax_s R(s)

When the displacements differ by much less than ``σ`` this is the tracer-
weighted mean along the line of sight, ``D_app / D_c = 1 / sqrt(1 + λ^2)``
(the Gaussian integrals in closed form); when they spread over much more than
``σ`` the peak moves to the most common displacement, the centreline's. The
factor ``D_app / D_c`` is therefore a function of ``λ`` and ``D_c / σ`` only,
tabulated here and inverted for ``D_c`` (it grows with ``D_c``). The peak is
located as the deformation passes locate it: where the correlation 1 px either
side of it is equal (the three-point fit's fixed point), which on the skewed
sum lies slightly towards its slow side.

``λ`` is uncertain: for round buoyant plumes measured widths of the scalar
(tracer or temperature) and velocity profiles give ratios from about 1.0 to
1.2 [2], [3] (from memory); ``DEFAULT_WIDTH_RATIO_RANGE`` draws it uniformly
over that range. A ``sheet`` view (a light sheet through the axis) has a
factor of 1.

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1-23 (Gaussian profiles).
.. [2] Papanicolaou, P. N. and List, E. J. (1988). Investigations of round
   vertical turbulent buoyant jets. J. Fluid Mech. 195, 341-391 (λ ≈ 1.2 for
   plumes; from memory).
.. [3] Wang, H. and Law, A. W.-K. (2002). Second-order integral model for a
   round turbulent buoyant jet. J. Fluid Mech. 459, 397-428 (λ ≈ 1.0-1.1;
   from memory).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ventflux.plugin_api import InputError

VIEWS = ("volume", "sheet")
#: Default view for dive video: the camera sees the whole plume.
DEFAULT_VIEW = "volume"
#: Tracer-to-velocity width ratio λ, lower and upper bound of the default uniform range [2], [3] (from memory).
DEFAULT_WIDTH_RATIO_RANGE = (1.0, 1.2)
_Y = np.linspace(0.0, 4.0, 101)  # half line of sight (symmetric), in units of the tracer width λb
_LAMBDA = np.linspace(0.5, 2.0, 31)  # λ grid of the tables (a numerical choice; draws outside are clipped)


def check_view(view, field="view"):
    if view not in VIEWS:
        raise InputError(field, view, "one of " + ", ".join(VIEWS) + " (volume: the camera sees the whole plume)")
    return view


def check_width_ratio(ratio, field="tracer_to_velocity_width_ratio"):
    r = np.asarray(ratio, float)
    if not np.all(np.isfinite(r) & (r > 0)):
        raise InputError(field, ratio, "a width ratio > 0 (tracer width over velocity width, about 1.0-1.2)")
    return r


def mean_limit_factor(width_ratio):
    """``D_app / D_c`` for displacements much smaller than the pattern's width: ``1 / sqrt(1 + λ^2)``."""
    lam = check_width_ratio(width_ratio)
    return 1.0 / np.sqrt(1.0 + lam**2)


def _settle(lam, centre, sigma):
    """Where the three-point peak estimator settles on the summed correlation peak (px).

    The correlation plane is ``R(s) = Σ c(y) exp(-(s - D(y))^2 / (2 σ^2))``; the
    window-deformation passes converge where the residual peak fit is zero,
    i.e. where ``R(s - 1) = R(s + 1)`` (1 px either side), found by bisection
    on ``[0, D_c]`` for every ``(λ, D_c)`` at once.
    """
    lam, centre = np.broadcast_arrays(np.asarray(lam, float), np.asarray(centre, float))
    y = _Y[None, :] * lam.reshape(-1, 1)  # in units of b
    weight = np.exp(-(_Y**2))[None, :]
    disp = centre.reshape(-1, 1) * np.exp(-(y**2))

    def balance(s):
        up = (weight * np.exp(-((s[:, None] + 1 - disp) ** 2) / (2 * sigma**2))).sum(axis=1)
        down = (weight * np.exp(-((s[:, None] - 1 - disp) ** 2) / (2 * sigma**2))).sum(axis=1)
        return up - down  # > 0: the peak lies beyond s

    lo, hi = np.zeros(centre.size), centre.ravel().copy()
    for _ in range(30):  # 2^-30 of D_c
        mid = 0.5 * (lo + hi)
        beyond = balance(mid) > 0
        lo, hi = np.where(beyond, mid, lo), np.where(beyond, hi, mid)
    return (0.5 * (lo + hi)).reshape(centre.shape)


@lru_cache(maxsize=8)
def _table(sigma, top):
    """Apparent displacement on the grid ``_LAMBDA x D_c`` (D_c from 0 to ``top`` px) for one pattern width."""
    d = np.linspace(0.0, top, 48)
    lam, dd = np.meshgrid(_LAMBDA, d, indexing="ij")
    return d, _settle(lam, dd, sigma)


def _grid_top(values):
    top = float(np.nanmax(np.abs(values))) if np.size(values) else 1.0
    return float(2.0 ** np.ceil(np.log2(max(top, 0.5)) + 1))  # room above the largest, few distinct tables


def line_of_sight_factor(width_ratio, centreline_displacement=None, pattern_width=None):
    """Apparent over centreline speed on a volume view (module notes).

    Parameters
    ----------
    width_ratio : float or numpy.ndarray
        ``λ``, tracer over velocity width (draws allowed).
    centreline_displacement : float or numpy.ndarray, optional
        Centreline displacement per frame pair, px.
    pattern_width : float, optional
        Standard deviation of the tracer pattern's autocorrelation peak, px.
        Without it (or the displacement), the small-displacement limit
        ``1 / sqrt(1 + λ^2)`` is returned.

    Returns
    -------
    numpy.ndarray
        Factor ≤ 1, broadcast over the inputs.
    """
    lam = check_width_ratio(width_ratio)
    if centreline_displacement is None or pattern_width is None or not pattern_width > 0:
        return mean_limit_factor(lam)
    dc = np.abs(np.asarray(centreline_displacement, float))
    d, table = _table(round(float(pattern_width), 2), _grid_top(dc))
    apparent = _interp2(np.clip(lam, _LAMBDA[0], _LAMBDA[-1]), dc, _LAMBDA, d, table)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(dc > 0, apparent / np.where(dc > 0, dc, 1.0), mean_limit_factor(lam))


def _interp2(x, y, gx, gy, table):
    """Bilinear interpolation of ``table[gx, gy]`` at points ``(x, y)`` (broadcast)."""
    x, y = np.broadcast_arrays(np.asarray(x, float), np.asarray(y, float))
    i = np.clip(np.searchsorted(gx, x, side="right") - 1, 0, gx.size - 2)
    j = np.clip(np.searchsorted(gy, y, side="right") - 1, 0, gy.size - 2)
    tx = np.clip((x - gx[i]) / (gx[i + 1] - gx[i]), 0, 1)
    ty = (y - gy[j]) / (gy[j + 1] - gy[j])
    return ((1 - tx) * (1 - ty) * table[i, j] + tx * (1 - ty) * table[i + 1, j]
            + (1 - tx) * ty * table[i, j + 1] + tx * ty * table[i + 1, j + 1])


def centreline_displacement(apparent, width_ratio, pattern_width=None):
    """Invert ``line_of_sight_factor``: the centreline displacement (px) whose apparent one is ``apparent``.

    The apparent displacement grows with the centreline one; for each ``λ`` of
    the grid the table is inverted by interpolation, then interpolated in ``λ``.
    Signs are kept (the factor acts on magnitudes).
    """
    lam = check_width_ratio(width_ratio)
    a = np.asarray(apparent, float)
    if pattern_width is None or not pattern_width > 0:
        return a / mean_limit_factor(lam)
    mag = np.abs(a)
    top = _grid_top(mag / float(np.min(mean_limit_factor(lam))))
    d, table = _table(round(float(pattern_width), 2), top)
    inverse = np.stack([np.interp(d, row, d) for row in table])  # centreline displacement at apparent = d
    return np.sign(a) * _interp2(np.clip(lam, _LAMBDA[0], _LAMBDA[-1]), mag, _LAMBDA, d, inverse)
