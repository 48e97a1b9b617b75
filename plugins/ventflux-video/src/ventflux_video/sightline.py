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
tabulated here and inverted for ``D_c`` (it grows with ``D_c``).

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

from ventflux.errors import InputError

VIEWS = ("volume", "sheet")
#: Default view for dive video: the camera sees the whole plume.
DEFAULT_VIEW = "volume"
#: Tracer-to-velocity width ratio λ, lower and upper bound of the default uniform range [2], [3] (from memory).
DEFAULT_WIDTH_RATIO_RANGE = (1.0, 1.2)
_Q = np.concatenate([[0.0], np.geomspace(0.05, 200.0, 160)])  # D_c / σ grid of the table (a numerical choice)
_Y = np.linspace(-5.0, 5.0, 801)  # line-of-sight samples in units of the tracer width λb


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


@lru_cache(maxsize=64)
def _table(width_ratio):
    """Apparent over centreline displacement on the ``_Q`` grid for one ``λ`` (rounded to 1e-3)."""
    lam = float(width_ratio)
    y = _Y * lam  # in units of b
    weight = np.exp(-(_Y**2))  # tracer, exp(-y^2/(λb)^2)
    shape = np.exp(-(y**2))  # D(y) / D_c
    mean = float(np.sum(weight * shape) / np.sum(weight))
    out = np.empty(_Q.size)
    out[0] = mean
    s = np.linspace(0.0, 1.0, 2001)  # candidate peak positions over D_c
    for k, q in enumerate(_Q[1:], start=1):  # 160 small evaluations, once per λ
        r = (weight[None, :] * np.exp(-0.5 * (q * (s[:, None] - shape[None, :])) ** 2)).sum(axis=1)
        i = int(np.argmax(r))
        if 0 < i < s.size - 1:  # parabolic refinement of the grid maximum
            den = r[i - 1] - 2 * r[i] + r[i + 1]
            out[k] = s[i] + 0.5 * (r[i - 1] - r[i + 1]) / den * (s[1] - s[0]) if den < 0 else s[i]
        else:
            out[k] = s[i]
    return out


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
    q = np.abs(np.asarray(centreline_displacement, float)) / float(pattern_width)
    lam_b, q_b = np.broadcast_arrays(np.round(lam, 3), q)
    out = np.empty(lam_b.shape)
    for value in np.unique(lam_b):
        m = lam_b == value
        out[m] = np.interp(q_b[m], _Q, _table(float(value)))
    return out


def centreline_displacement(apparent, width_ratio, pattern_width=None):
    """Invert ``line_of_sight_factor``: centreline displacement (px) whose apparent one is ``apparent``.

    ``apparent = D_c f(λ, D_c/σ)`` grows with ``D_c``; it is solved on the
    table's grid by interpolation. Signs are kept (the factor acts on magnitudes).
    """
    lam = check_width_ratio(width_ratio)
    a = np.asarray(apparent, float)
    if pattern_width is None or not pattern_width > 0:
        return a / mean_limit_factor(lam)
    lam_b, a_b = np.broadcast_arrays(np.round(lam, 3), a)
    out = np.empty(a_b.shape)
    for value in np.unique(lam_b):
        m = lam_b == value
        seen = _Q * _table(float(value))  # apparent / σ on the grid, increasing
        out[m] = np.sign(a_b[m]) * pattern_width * np.interp(np.abs(a_b[m]) / pattern_width, seen, _Q)
    return out
