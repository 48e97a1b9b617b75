"""Temperature decay of a heated probe in sediment: the cylinder function and the line-source asymptote.

A probe of radius ``a`` heated instantaneously (by the friction of
penetration, or by a short heat pulse) cools as a perfectly conducting
cylinder of heat capacity ``S = π a² ρ_p c_p`` per unit length in an infinite
medium of conductivity ``k`` and diffusivity ``κ``. Its temperature above
equilibrium is ``V0 · F(α, τ)`` with [1], §13.7:

    F(α, τ) = (4α/π²) ∫₀^∞ exp(−τu²) / (u · Δ(u)) du,
    Δ(u)    = [u J0(u) − α J1(u)]² + [u Y0(u) − α Y1(u)]²,

where ``τ = κ t / a²`` and ``α = 2 ρc / (ρ_p c_p)`` (twice the ratio of the
medium's to the probe's volumetric heat capacity). At late times the
cylinder looks like an instantaneous line source of strength ``Q = S·V0``
([1], §10.3), so ``F → 1/(2ατ)`` and ``T − T_eq → Q/(4π k t)``: the simpler
line-source option, valid once ``t ≫ a²/κ``.

Evaluation: the integrand is smooth (the Bessel terms combine into a
non-oscillating modulus), so the integral is a trapezoidal sum over
log-spaced ``u``; for fitting, ``F(α, ·)`` is tabulated once per ``α`` on a
log-τ grid by a cubic spline in log-log coordinates, read from a dense table by
linear interpolation.

References
----------
.. [1] Carslaw, H. S. and Jaeger, J. C. (1959). Conduction of Heat in
   Solids, 2nd ed. Oxford University Press (§10.3 instantaneous line source;
   §13.7 perfectly conducting cylinder in an infinite medium).
"""

from __future__ import annotations

import functools
import hashlib
from pathlib import Path

import numpy as np
from ventflux.plugin_api import cached_arrays

# Integration grid in u (log-spaced); the upper end keeps exp(−τu²) < 1e-30 for τ ≥ 1e-3.
_U = np.geomspace(1e-7, 300.0, 6000)
_LOG_TAU = np.linspace(np.log(1e-3), np.log(1e6), 700)


def cylinder_decay_exact(alpha: float, tau) -> np.ndarray:
    """F(α, τ) by direct quadrature, vectorized over τ (τ > 0)."""
    from scipy import special  # here: only a table's build needs it, and the table is cached per machine

    tau = np.asarray(tau, float)
    u = _U
    d = (u * special.j0(u) - alpha * special.j1(u)) ** 2 + (u * special.y0(u) - alpha * special.y1(u)) ** 2
    g = 1.0 / d  # integrand × u: dU = u d(ln u)
    s = np.log(u)
    e = np.exp(-np.multiply.outer(tau.ravel(), u * u)) * g
    # numpy ≥ 2 names it trapezoid; numpy 1.26 (still supported) only trapz
    trapezoid = getattr(np, "trapezoid", None) or getattr(np, "trapz")  # noqa: B009
    val = trapezoid(e, s, axis=-1)
    return (4.0 * alpha / np.pi**2 * val).reshape(tau.shape)


_DENSE = np.linspace(_LOG_TAU[0], _LOG_TAU[-1], 40001)
#: What a cached table depends on besides α: this module's code (grids, quadrature, constants).
_CODE_KEY = hashlib.sha256(Path(__file__).read_bytes()).hexdigest()[:16]
_INV_STEP = 1.0 / (_DENSE[1] - _DENSE[0])


@functools.lru_cache(maxsize=32)
def _table(alpha_key: float):
    """log F on a dense log-τ grid: the cubic spline through the quadrature, read by linear interpolation
    (step 5e-4 in ln τ, interpolation error below 1e-7 relative; np.interp is several times faster).

    Built once per machine and α (``cached_arrays``, keyed by a hash of this module's code and α): the
    quadrature and scipy's spline cost about half a second a table.
    """
    def build():
        from scipy.interpolate import CubicSpline

        tau = np.exp(_LOG_TAU)
        F = cylinder_decay_exact(alpha_key, tau)
        return {"log_decay": CubicSpline(_LOG_TAU, np.log(F))(_DENSE)}

    return cached_arrays(f"cylinder-decay-{_CODE_KEY}-{alpha_key!r}.npz", build)["log_decay"]


def cylinder_decay(alpha: float, tau) -> np.ndarray:
    """F(α, τ), the cooling of an instantaneously heated, perfectly conducting cylinder ([1] §13.7).

    Parameters
    ----------
    alpha : float
        ``2 ρc / (ρ_p c_p)``, > 0.
    tau : array_like
        Dimensionless time ``κ t / a²``; values ≤ 0 give 1 (before the heating
        has spread). Beyond the table (τ > 1e6) the line-source asymptote is used.

    Returns
    -------
    ndarray
        F in [0, 1].
    """
    tau = np.asarray(tau, float)
    out = np.ones(tau.shape)
    pos = tau > 0
    if not pos.any():
        return out
    lt = np.log(np.clip(tau[pos], np.exp(_LOG_TAU[0]), None))
    # the table is uniform in ln τ: index and weight by arithmetic (no search), linear interpolation
    table = _table(round(float(alpha), 6))
    x = (np.minimum(lt, _LOG_TAU[-1]) - _DENSE[0]) * _INV_STEP
    i = np.minimum(x.astype(np.intp), _DENSE.size - 2)
    w = x - i
    val = np.exp(table[i] + w * (table[i + 1] - table[i]))
    late = lt > _LOG_TAU[-1]
    val[late] = 1.0 / (2.0 * alpha * tau[pos][late])
    early = tau[pos] < np.exp(_LOG_TAU[0])
    if early.any():
        val[early] = cylinder_decay_exact(alpha, tau[pos][early])
    out[pos] = val
    return out


_GL_X, _GL_W = np.polynomial.legendre.leggauss(8)
_GL_X = 0.5 * (_GL_X + 1.0)  # nodes on [0, 1]
_GL_W = 0.5 * _GL_W


def cylinder_pulse_decay(alpha: float, tau, tau_pulse: float) -> np.ndarray:
    """Response to a constant-power pulse of dimensionless length ``tau_pulse``, per unit of ``V0``.

    A pulse of energy ``Q`` per length delivered evenly over ``t_p`` seconds
    is a train of instantaneous heatings ``(Q/t_p) ds``; by superposition
    ([1] §13.7 for each) the excess is ``V0 · G`` with

        G(α, τ, τ_p) = (1/τ_p) ∫₀^{min(τ, τ_p)} F(α, τ − s) ds,

    ``τ`` counted from the pulse's start. The integral is an 8-point
    Gauss–Legendre sum of ``F`` over the pulse (``F`` is smooth once the pulse
    has ended: 10 s after a 20 s pulse it agrees with a 16-point sum to 1e-8;
    inside the pulse it is accurate to about 1e-3, enough for figures: fits
    start after the pulse). ``τ_p = 0`` gives ``F`` itself.

    Parameters
    ----------
    alpha : float
        ``2 ρc / (ρ_p c_p)``.
    tau : array_like
        ``κ t / a²`` since the pulse's start.
    tau_pulse : float
        ``κ t_p / a²``, ≥ 0.

    Returns
    -------
    ndarray
        G ≥ 0; 0 before the pulse.
    """
    tau = np.asarray(tau, float)
    if tau_pulse <= 0:
        return np.where(tau > 0, cylinder_decay(alpha, tau), 0.0)
    span = np.clip(tau, 0.0, tau_pulse)  # the part of the pulse delivered so far
    nodes = tau[..., None] - span[..., None] * _GL_X  # τ − s at s = span·x
    G = (cylinder_decay(alpha, nodes) * _GL_W).sum(axis=-1) * span / tau_pulse
    return np.where(tau > 0, G, 0.0)


def cylinder_pulse_decay_and_slopes(alpha: float, tau, tau_pulse):
    """``G`` after the pulse (τ ≥ τ_p) with the sums its derivatives need, for fitting.

    Returns ``(G, S1, S2)`` with ``G = Σ w F(ν)``, ``S1 = Σ w ν F'(ν)`` and
    ``S2 = Σ w F'(ν)`` over the Gauss nodes ``ν = τ − τ_p x`` (``τ_p = 0``: the
    single node τ). For ``τ = k a``, ``τ_p = k b`` (``a``, ``b`` fixed):
    ``∂G/∂k = S1 / k``; for a shift of the time origin, ``∂G/∂τ = S2``.
    ``F'`` is the slope of the log-log table: ``F' = F · (d ln F / d ln τ) / τ``.
    """
    tau = np.asarray(tau, float)
    tau_pulse = np.asarray(tau_pulse, float)  # a scalar, or broadcastable to tau (one per sensor)
    if np.any(tau_pulse > 0):
        nodes = tau[..., None] - tau_pulse[..., None] * _GL_X
        w = _GL_W
    else:
        nodes = tau[..., None]
        w = np.ones(1)
    lt = np.log(nodes)
    if lt.min() < _LOG_TAU[0] or lt.max() > _LOG_TAU[-1]:  # outside the table: the general path, numeric slope
        F = cylinder_decay(alpha, nodes)
        h = 1e-6
        dlog = (np.log(cylinder_decay(alpha, nodes * (1 + h))) - np.log(F)) / np.log1p(h)
    else:
        table = _table(round(float(alpha), 6))
        x = (lt - _DENSE[0]) * _INV_STEP
        i = np.minimum(x.astype(np.intp), _DENSE.size - 2)
        step = table[i + 1] - table[i]
        F = np.exp(table[i] + (x - i) * step)
        dlog = step * _INV_STEP
    nF = F * dlog  # ν F'(ν)
    return (F * w).sum(-1), (nF * w).sum(-1), (nF / nodes * w).sum(-1)


def line_source_decay(strength, conductivity, elapsed):
    """Late-time (line-source) temperature rise Q / (4π k t) of an instantaneous heating ([1] §10.3).

    Plain SI arrays: ``strength`` J/m, ``conductivity`` W/(m K), ``elapsed`` s.
    """
    return np.asarray(strength, float) / (4.0 * np.pi * np.asarray(conductivity, float) * np.asarray(elapsed, float))
