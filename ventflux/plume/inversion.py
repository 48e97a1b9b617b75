"""Plume rise both ways: heat power → rise height, and an observed rise height → heat power.

``heat_power_from_rise_height`` inverts the integral model
(``ventflux.plume.integral``) by root finding on the source buoyancy flux,
or the closed-form relations (``ventflux.plume.closed_form``). Monte Carlo
uncertainty over the rise height, the stratification (an uncertain constant
N, or ``stratification_scale``, a factor on a profile's N²), the entrainment
coefficient and the current is propagated without a per-draw loop: every
draw is one member of one ensemble, integrated at once, and the root finding
is a secant iteration on log F against log z run on the whole ensemble (the
rise height grows nearly as F^(1/4), so three to five sweeps reach a relative
error of ``TOLERANCE``; only members not yet converged are integrated again).

An uncertain constant N is applied as a factor (N/N_nominal)² on the anomalies
of SA and CT of the nominal column (so on its N²), exact to first order: the
column built for the drawn N differs through the change of α_Θ across the
anomaly (about 0.5 % in heat power for an N 20 % off nominal).

The closed form with a profile uses the depth-mean N over the rise; with a
current it takes the lower of the vertical and the bent-over rise (the
regime that limits the plume; with a current profile, its largest speed).

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Proc. R. Soc. Lond. A 234, 1–23.
.. [2] Briggs, G. A. (1969). Plume Rise. USAEC TID-25075.
.. [3] Hoult, D. P., Fay, J. A. and Forney, L. J. (1969). J. Air Pollut. Control Assoc. 19, 585–590.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import pint

from ..errors import InputError
from ..profiles import AmbientProfile, constant_stratification
from ..uncertainty import DEFAULT_SEED, Uncertain, draw_inputs, nominal, summarize
from ..units import Q_, magnitude, require_dimension
from . import closed_form, integral
from .source import PlumeSource

if TYPE_CHECKING:
    from .emulator import ForwardEmulator

METHODS = ("integral", "closed-form")
LEVELS = closed_form.LEVELS
# Root-finding settings (numerical choices made here, no source).
#: Relative tolerance of the root finding on the rise height ...
TOLERANCE = 1e-6
#: ... and the one accepted after eight sweeps (see ``_invert_integral``).
LOOSE_TOLERANCE = 1e-4
#: ... and the one accepted from the start when the iteration starts from an emulator's answers (a
#: verification of each draw by its own integration: 2.5e-5 in log rise height is 1e-4 in heat power,
#: five times inside the 5e-4 asked of every draw; choice made here).
GUIDED_TOLERANCE = 2.5e-5
#: Secant sweeps before a member that has not converged is given up (NaN, counted in ``failed``).
MAX_ITERATIONS = 20
#: From this many draws on, a rise height without a current is inverted on a forward emulator built once
#: for the column (``ventflux.plume.emulator``), the rest integrated; below it every draw is integrated
#: (building the emulator costs about as much as integrating a thousand draws; a choice made here).
EMULATOR_MIN_DRAWS = 1000


@dataclass(frozen=True)
class CurrentProfile:
    """A current that varies with depth: ``speed`` (velocity array) at ``depth`` (length array)."""

    depth: pint.Quantity
    speed: pint.Quantity


from ..presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(repr=False)
class PlumeRiseResult(Presentable):
    """Result of either direction; quantities are arrays when drawn (``summary`` then holds the statistics)."""

    heat_power: pint.Quantity
    buoyancy_flux: pint.Quantity
    rise_height: pint.Quantity  # maximum rise above the vent
    spreading_height: pint.Quantity
    downstream_distance: pint.Quantity  # horizontal distance of the top from the vent (0 without current)
    spreading_volume_flux: pint.Quantity
    spreading_dilution: pint.Quantity  # plume volume flux / vent-fluid volume flux (NaN for a pure plume)
    spreading_anomaly: pint.Quantity  # plume's CT excess over the ambient at the spreading level
    level: str
    method: str
    vent_depth: pint.Quantity
    column: integral.Column
    draws: int | None = None
    seed: int | None = None
    failed: int = 0
    summary: dict = field(default_factory=dict)
    nominal: "PlumeRiseResult | None" = None
    track: dict | None = None
    #: Worst measured interpolation error (in log rise height) of the forward emulator, when the draws were
    #: inverted on one (``ventflux.plume.emulator``); None when every draw was integrated.
    emulator_error: float | None = None
    _emulator: ForwardEmulator | None = field(default=None, repr=False, compare=False)


# --------------------------------------------------------------------------- set-up


def ambient_column(stratification, vent_depth, pressure, ambient_temperature, ambient_salinity, latitude, longitude):
    """(Column, N to draw or None, nominal N [1/s]) above the vent, from a profile or a constant N.

    A constant N may be exact, ``Uncertain``, or an array of draws (its median
    builds the column, each draw scales it).
    """
    if isinstance(stratification, AmbientProfile):
        zv = None
        if vent_depth is not None or pressure is not None:
            from ..profiles import vent_depth_of

            zv = vent_depth_of(vent_depth, pressure, stratification.latitude)
        return integral.column_above_vent(stratification, zv), None, None
    N = stratification
    varying = isinstance(N, Uncertain) or np.ndim(getattr(N, "magnitude", 0)) > 0
    if isinstance(N, Uncertain):
        Nnom = N.nominal
    else:
        N = require_dimension(N, "frequency", "buoyancy frequency")
        Nnom = Q_(float(np.median(N.magnitude)), N.units) if varying else N
        if varying and not np.all(N.magnitude > 0):
            raise InputError("buoyancy frequency", f"{np.min(N.magnitude):g} {N.units:~P}",
                             "a buoyancy frequency N > 0 s^-1 in every draw")
    if ambient_temperature is None:
        raise InputError("ambient temperature", "(none)", "an ambient temperature with a constant buoyancy frequency")
    if ambient_salinity is None:
        raise InputError("ambient salinity", "(none)", "an ambient salinity with a constant buoyancy frequency")
    prof = constant_stratification(Nnom, ambient_temperature, ambient_salinity, depth=vent_depth, pressure=pressure,
                                   latitude=latitude, longitude=longitude)
    return integral.column_above_vent(prof), (N if varying else None), float(Nnom.to("1/s").magnitude)


def _check_choice(value, allowed, field):
    if value not in allowed:
        raise InputError(field, value, "one of " + ", ".join(allowed))


def _current_si(current, column):
    """(constant speed or draws, (heights, factor) shape or None) from a current input."""
    if current is None:
        return None, None
    if isinstance(current, CurrentProfile):
        d = magnitude(require_dimension(current.depth, "length", "current depth"), "m")
        u = magnitude(require_dimension(current.speed, "velocity", "current speed"), "m/s")
        if np.any(np.asarray(u) < 0):
            raise InputError("current speed", f"{np.min(u):g} m/s", "speeds ≥ 0")
        order = np.argsort(column.vent_depth - np.asarray(d, float))
        top = float(np.max(u))
        if not top > 0:
            raise InputError("current speed", f"{top:g} m/s", "a current profile with some speed > 0")
        # speed scale × shape (≤ 1): the scale sets the integration grid like a constant current would
        return Q_(top, "m/s"), ((column.vent_depth - np.asarray(d, float))[order], np.asarray(u, float)[order] / top)
    return current, None


def _sample(inputs, draws, seed):
    if draws is None:
        return {k: nominal(v) for k, v in inputs.items()}
    if not (isinstance(draws, (int, np.integer)) and draws >= 2):
        raise InputError("draws", draws, "a whole number of Monte Carlo draws ≥ 2")
    return draw_inputs(inputs, int(draws), seed)


def _si(x, unit, dimension, field, n):
    if x is None:
        return None
    if isinstance(x, pint.Quantity):
        v = magnitude(require_dimension(x, dimension, field), unit)
    else:
        v = x
    return np.broadcast_to(np.asarray(v, float), (n,)).copy()


def _scale(sampled, Nnom, n):
    s = np.ones(n)
    if sampled.get("buoyancy_frequency") is not None and Nnom is not None:
        N = magnitude(sampled["buoyancy_frequency"], "1/s", "frequency", "buoyancy frequency")
        s = s * (np.asarray(N, float) / Nnom) ** 2
    if sampled.get("stratification_scale") is not None:
        s = s * np.asarray(magnitude(Q_(1.0) * sampled["stratification_scale"], "dimensionless"), float)
    return s


def _size(sampled):
    sizes = [np.size(getattr(v, "magnitude", v)) for v in sampled.values() if v is not None]
    return max(sizes + [1])


def _entrainment(x):
    """An exact coefficient (float), an array of them, or an ``Uncertain`` one."""
    if isinstance(x, Uncertain):
        return x
    v = np.asarray(x.to("dimensionless").magnitude if hasattr(x, "to") else x, float)
    if not np.all((v > 0) & (v < 1)):
        raise InputError("entrainment", f"{np.ravel(v)[~((np.ravel(v) > 0) & (np.ravel(v) < 1))][0]:g}",
                         "a top-hat entrainment coefficient between 0 and 1, e.g. 0.132")
    return float(v) if v.ndim == 0 else v


# --------------------------------------------------------------------------- forward model


def _mean_n(column, height, scale):
    """Depth-mean N over ``height`` with N² scaled by ``scale`` (a drawn scale ≤ 0 gives NaN: that draw fails)."""
    s = np.asarray(scale, float)
    return column.mean_n(np.maximum(height, 1.0)) * np.sqrt(np.where(s > 0, s, np.nan))


def _forward_integral(column, H, alpha, scale, U, shape, source=None, track=False, grid=None):
    """Integrate an ensemble: pure plumes of heat power H [W], or forced plumes from ``source`` SI arrays.

    ``grid`` = (span, start height) fixes the step sequence, so that the rise
    computed by the root finding is a smooth function of the flux.
    """
    H = np.asarray(H, float)
    if source is None:
        F = column.heat_to_buoyancy() * H
    else:
        src = integral.forced_plume(column, *(np.broadcast_to(np.asarray(v, float), np.shape(alpha))
                                              for v in source))
        F = src.F
    if grid is None:
        # A pure plume without a current takes the step grid of its similarity variable G = F/α² (scaled to
        # the default α): then members of one G integrate in exactly the same steps, whatever their α (see
        # ``ventflux.plume.emulator``), and the expected rise it sets the span from is the better one.
        G = F * (integral.DEFAULT_ENTRAINMENT / np.asarray(alpha, float)) ** 2 if source is None and U is None else F
        span, z0 = _grid(column, G, U)
    else:
        span, z0 = grid
    if source is None:  # a pure plume starts on the similarity solution at the grid's start height
        src = integral.pure_plume(column, H, alpha, z0)
    model: integral.VerticalModel | integral.CrossflowModel
    if U is None:
        model = integral.VerticalModel(column, alpha, scale)
    else:
        model = integral.CrossflowModel(column, alpha, scale, U, shape)
    return integral.integrate(model, src, span, track=track), F


def _grid(column, F, U):
    """(span, start height) of each member's integration from its buoyancy flux's closed-form rise.

    A pure plume starts at 1e-3 of its expected rise, and in a current at 5 %
    of the bending length (choices made here).
    """
    span, zest = integral.expected_span(column, F, U)
    z0 = 1e-3 * zest
    if U is not None:  # start well inside the bending length F/(π U³), where the plume is still vertical
        lb = F / (np.pi * np.maximum(np.asarray(U, float), integral.MIN_CURRENT) ** 3)
        z0 = np.minimum(z0, 0.05 * lb)
    return span, z0


def _take(v, idx):
    return None if v is None else (v if np.ndim(v) == 0 else v[idx])


def _closed_rise(column, F, scale, U, level):
    """Closed-form rise height [m] with the depth-mean N over the rise (fixed point)."""
    z = np.full_like(F, 100.0)
    for _ in range(6):
        N = _mean_n(column, z, scale)
        zmax = closed_form._rise_height_point_source(F, N)
        if U is not None:
            zmax = np.minimum(zmax, closed_form._rise_height_bent_over(F, np.maximum(U, integral.MIN_CURRENT), N))
        z = zmax
    return zmax * (1.0 if level == "maximum" else closed_form.SPREADING_FRACTION), N


def _closed_flux(column, z, scale, U, level):
    zmax = z / (1.0 if level == "maximum" else closed_form.SPREADING_FRACTION)
    N = _mean_n(column, zmax, scale)
    F = closed_form._buoyancy_flux_point_source(zmax, N)
    if U is not None:
        F = np.maximum(F, closed_form._buoyancy_flux_bent_over(zmax, np.maximum(U, integral.MIN_CURRENT), N))
    return F


def _invert_integral(column, target, level, alpha, scale, U, shape, start=None):
    """Vectorized secant iteration on log F for every member; returns (F, Ensemble fields).

    ``start`` (log F per member, NaN where unknown) replaces the closed-form
    first guess: an emulator's answers, a sweep or two from convergence. A
    member is then accepted once its own integration reproduces the target
    within ``GUIDED_TOLERANCE`` (1e-4 in heat power), often at the first sweep.
    """
    n = target.size
    F = _closed_flux(column, target, scale, U, level)
    # the step grid follows from the closed-form flux with or without a start, so that a started
    # inversion finds the root of the same integration (the spreading level moves with the grid)
    span, z0 = _grid(column, np.where(np.isfinite(F), F, 1.0), U)
    first = TOLERANCE
    if start is not None:
        F = np.where(np.isfinite(start), np.exp(start), F)
        first = GUIDED_TOLERANCE
    logF = np.log(F)
    prevF = np.full(n, np.nan)
    prevz = np.full(n, np.nan)
    out = {k: np.full(n, np.nan) for k in ("zt", "zs", "xt", "xs", "Qs", "dTs")}
    Fout = np.full(n, np.nan)
    active = np.flatnonzero(np.isfinite(logF) & np.isfinite(target) & (target > 0))
    default_slope = 0.25 if U is None else 1.0 / 3.0
    for sweep in range(MAX_ITERATIONS):
        if active.size == 0:
            break
        ens, _ = _forward_integral(column, integral_H(column, np.exp(logF[active])), _take(alpha, active),
                                   _take(scale, active), _take(U, active), shape,
                                   grid=(span[active], z0[active]))
        z = ens.maximum_height if level == "maximum" else ens.spreading_height
        bad = ens.escaped | ~np.isfinite(z) | (z <= 0)
        lz = np.log(np.where(bad, 1.0, z))
        err = lz - np.log(target[active])
        # The rise is piecewise smooth in F: where the top moves from one step to the next it can
        # jump by the crossing step's own error (~1e-5); accept LOOSE_TOLERANCE after a few sweeps.
        conv = ~bad & (np.abs(err) < (first if sweep < 8 else LOOSE_TOLERANCE))
        fields = {"zt": ens.maximum_height, "zs": ens.spreading_height, "xt": ens.maximum_distance,
                  "xs": ens.spreading_distance, "Qs": ens.spreading_volume_flux, "dTs": ens.spreading_anomaly}
        done = active[conv]
        for k, v in fields.items():
            out[k][done] = v[conv]
        Fout[done] = np.exp(logF[done])
        with np.errstate(invalid="ignore", divide="ignore"):
            slope = (lz - prevz[active]) / (logF[active] - prevF[active])
        slope = np.where(np.isfinite(slope) & (slope > 0.05) & (slope < 2.0), slope, default_slope)
        step = np.clip(-err / slope, -3.0, 3.0)
        new = np.where(bad, logF[active] - 1.0, logF[active] + step)
        keep = ~bad
        prevF[active[keep]] = logF[active[keep]]
        prevz[active[keep]] = lz[keep]
        logF[active] = new
        active = active[~conv]
    return Fout, out


def _invert_many(column, z, level, alpha, scale, U, shape, reuse=None):
    """(F, fields, emulator or None): an emulator for many draws without a current, else the secant.

    ``reuse`` is an emulator already built for this column and level (the
    nominal solve after the draws'). Draws the emulator cannot answer (outside
    its grid, next to a plume that escapes the column) are integrated like any
    other.
    """
    n = z.size
    a = np.broadcast_to(np.asarray(alpha, float), (n,))
    sc = np.broadcast_to(np.asarray(scale, float), (n,))
    usable = np.isfinite(z) & (z > 0) & np.isfinite(a) & (a > 0) & np.isfinite(sc) & (sc > 0)
    emu = reuse if (reuse is not None and reuse.level == level) else None
    if emu is None and U is None and n >= EMULATOR_MIN_DRAWS and usable.any():
        from . import emulator

        emu = emulator.build(column, z[usable], a[usable], sc[usable], level, _ensemble, guide=True)
    if emu is None or U is not None:
        return (*_invert_integral(column, z, level, alpha, scale, U, shape), None)
    logF = np.full(n, np.nan)
    curves = emu.curves(a[usable], sc[usable])
    logF[usable] = emu.invert(z[usable], curves, a[usable])
    if emu.guide_only:  # not accurate enough to answer: it starts every draw's direct inversion instead
        F, fields = _invert_integral(column, z, level, alpha, scale, U, shape, start=logF)
        return F, fields, emu
    got = np.isfinite(logF)
    F = np.exp(logF)
    fields = {k: np.full(n, np.nan) for k in ("zt", "zs", "xt", "xs", "Qs", "dTs")}
    other = "spreading" if level == "maximum" else "maximum"
    at = emu.fields_at((other, "volume_flux", "anomaly"), logF[got], a[got], sc[got])
    fields["zt" if level == "maximum" else "zs"][got] = z[got]
    fields["zs" if level == "maximum" else "zt"][got] = at[other]
    fields["Qs"][got] = at["volume_flux"]
    fields["dTs"][got] = at["anomaly"]
    fields["xt"][got] = 0.0
    fields["xs"][got] = 0.0
    rest = usable & ~got
    if rest.any():
        idx = np.flatnonzero(rest)
        F_r, f_r = _invert_integral(column, z[idx], level, a[idx], sc[idx], None, shape)
        F[idx] = F_r
        for k, v in f_r.items():
            fields[k][idx] = v
    F[~usable] = np.nan
    return F, fields, emu


def _ensemble(column, F, alpha, scale):
    """The integral model's ensemble for buoyancy fluxes ``F`` (what the emulator tabulates)."""
    ens, _ = _forward_integral(column, integral_H(column, F), alpha, scale, None, None)
    return ens


def integral_H(column, F):
    """Heat power [W] whose far-field buoyancy flux is F [m⁴/s³] at this vent."""
    return np.asarray(F, float) / column.heat_to_buoyancy()


# --------------------------------------------------------------------------- public API


def heat_power_from_rise_height(rise_height, stratification, level="maximum", method="integral",
                                entrainment=integral.DEFAULT_ENTRAINMENT, current=None, draws=None,
                                seed=DEFAULT_SEED, vent_depth=None, pressure=None, ambient_temperature=None,
                                ambient_salinity=None, latitude=None, longitude=None,
                                stratification_scale=None, track=False, predrawn=False,
                                emulated_by: PlumeRiseResult | None = None) -> PlumeRiseResult:
    """Heat power and buoyancy flux of a plume from its observed rise height.

    Parameters
    ----------
    rise_height : pint.Quantity or Uncertain (length)
        Observed height above the vent, of the ``level``.
    stratification : AmbientProfile, or pint.Quantity / Uncertain (frequency)
        A profile (``ventflux.profiles.read_ctd_cast`` or
        ``constant_stratification``), or a constant buoyancy frequency N (then
        ``ambient_temperature``, ``ambient_salinity`` and ``vent_depth`` or
        ``pressure`` are needed).
    level : {"maximum", "spreading"}
        Whether ``rise_height`` is the plume's top or its spreading
        (neutral-buoyancy) level.
    method : {"integral", "closed-form"}
    entrainment : float or Uncertain
        Top-hat entrainment coefficient (Gaussian × √2), default 0.132 [1]_.
    current : pint.Quantity, Uncertain, CurrentProfile or None
        Horizontal current speed; bends the plume over [3]_.
    draws : int, optional
        Monte Carlo draws; quantities in the result are then arrays.
    seed : int
        Random seed (reported).
    vent_depth, pressure : pint.Quantity, optional
        The vent's depth, or its absolute pressure; with a profile the
        default is the profile's deepest point.
    ambient_temperature, ambient_salinity, latitude, longitude : optional
        For a constant N.
    stratification_scale : float or Uncertain, optional
        Factor on the profile's N² (anomalies of SA and CT from the vent scaled).
    track : bool
        Keep the nominal plume's profiles along its path (for figures and tables).
    predrawn : bool
        The array inputs are already Monte Carlo draws (shared with other
        estimates): solve them as they are and summarize (seed None); a draw
        outside the allowed range gives NaN and counts in ``failed``.
    emulated_by : PlumeRiseResult, optional
        A Monte Carlo result for the same column and level: its forward
        emulator (when it has one) answers this call, as it answers the
        nominal of a call with ``draws`` (a run's nominal solved apart from
        its draws: no second inversion by integration).

    Returns
    -------
    PlumeRiseResult
    """
    return _estimate("inverse", rise_height, stratification, level, method, entrainment, current, draws, seed,
                     vent_depth, pressure, ambient_temperature, ambient_salinity, latitude, longitude,
                     stratification_scale, track, None, predrawn,
                     reuse=None if emulated_by is None else emulated_by._emulator)


def rise_height_from_heat_power(heat_power, stratification, level="maximum", method="integral",
                                entrainment=integral.DEFAULT_ENTRAINMENT, current=None, draws=None,
                                seed=DEFAULT_SEED, vent_depth=None, pressure=None, ambient_temperature=None,
                                ambient_salinity=None, latitude=None, longitude=None,
                                stratification_scale=None, track=False, source: PlumeSource | None = None,
                                predrawn=False) -> PlumeRiseResult:
    """Rise height (maximum and spreading) of a pure plume of ``heat_power``, or of a forced ``source``.

    Parameters as ``heat_power_from_rise_height``; ``heat_power`` (pint
    power or Uncertain) replaces the rise height, ``source`` (a
    ``PlumeSource``, e.g. from ``plume_source_from_orifice``) replaces it for
    a forced plume (integral method only). ``level`` names which height
    ``rise_height`` in the result's summary emphasises; both are returned.
    """
    return _estimate("forward", heat_power, stratification, level, method, entrainment, current, draws, seed,
                     vent_depth, pressure, ambient_temperature, ambient_salinity, latitude, longitude,
                     stratification_scale, track, source, predrawn)


def _estimate(direction, value, stratification, level, method, entrainment, current, draws, seed, vent_depth,
              pressure, ambient_temperature, ambient_salinity, latitude, longitude, stratification_scale, track,
              source, predrawn=False, reuse=None):
    _check_choice(method, METHODS, "method")
    _check_choice(level, LEVELS, "level")
    if source is not None and method != "integral":
        raise InputError("method", method, "'integral' for a forced plume from an orifice")
    if predrawn and draws is not None:
        raise InputError("draws", draws, "no draws with predrawn inputs (the arrays are the draws)")
    column, N_unc, Nnom = ambient_column(stratification, vent_depth, pressure, ambient_temperature, ambient_salinity,
                                         latitude, longitude)
    inputs = {"entrainment": _entrainment(entrainment), "current": current if not isinstance(
        current, CurrentProfile) else None, "buoyancy_frequency": N_unc, "stratification_scale": stratification_scale}
    # drawn inputs are checked at their centre; a draw outside the allowed range fails alone (NaN)
    centre = _median if predrawn else nominal
    _check_positive(centre(stratification_scale), "stratification scale", "a factor on N² > 0", strict=True)
    if not isinstance(current, CurrentProfile):
        _check_positive(centre(current), "current", "a current speed ≥ 0 m/s", strict=False)
    if direction == "inverse":
        inputs["rise_height"] = value
        _check_rise(centre(value), column)
    elif source is None:
        inputs["heat_power"] = value
        _check_power(centre(value))
    sampled = _sample({k: v for k, v in inputs.items() if v is not None}, draws, seed)
    n = _size(sampled)
    res = _solve(direction, sampled, n, column, Nnom, current, level, method, source, track=track and draws is None,
                 reuse=reuse)
    if draws is not None:
        res.nominal = _solve(direction, {k: nominal(v) for k, v in inputs.items() if v is not None}, 1, column, Nnom,
                             current, level, method, source, track=track, reuse=res._emulator)
    if draws is not None or (predrawn and n > 1):
        res.draws, res.seed = (int(draws), seed) if draws is not None else (n, None)
        res.summary = {k: summarize(getattr(res, k), seed) for k in
                       ("heat_power", "buoyancy_flux", "rise_height", "spreading_height", "downstream_distance")
                       if np.isfinite(np.asarray(getattr(res, k).magnitude)).any()}
    return res


def _median(q):
    return Q_(float(np.nanmedian(q.magnitude)), q.units) if hasattr(q, "magnitude") else q


def _check_positive(x, field, allowed, strict):
    """Refuse a non-positive (``strict``) or negative centre value of an optional input."""
    if x is None:
        return
    v = np.atleast_1d(np.asarray(getattr(x, "magnitude", x), float))
    bad = ~(v > 0) if strict else ~(v >= 0)
    if bad.any():
        unit = f"{x.units:~P}" if hasattr(x, "units") else ""
        raise InputError(field, f"{v[bad][0]:g} {unit}".strip(), allowed)


def _check_rise(z, column):
    """Every rise height (a scalar or an array) must lie above the vent and within the column."""
    zm = np.atleast_1d(np.asarray(magnitude(require_dimension(z, "length", "rise height"), "m"), float))
    for bad, allowed in ((~(zm > 0), "a height above the vent > 0 m"),
                         (zm >= column.vent_depth, f"a height below the sea surface (the vent is at "
                                                   f"{column.vent_depth:.0f} m depth)"),
                         (zm > column.top, f"a height within the ambient profile (it reaches {column.top:.0f} m "
                                           "above the vent)")):
        if bad.any():
            raise InputError("rise height", f"{zm[bad][0]:g} m", allowed)


def _check_power(H):
    h = np.atleast_1d(np.asarray(magnitude(require_dimension(H, "power", "heat power"), "W"), float))
    if not (h > 0).all():
        raise InputError("heat power", f"{h[~(h > 0)][0]:g} W", "a heat power > 0 W")


def _solve(direction, sampled, n, column, Nnom, current, level, method, source, track=False, reuse=None):
    alpha = _si(sampled["entrainment"], "dimensionless", "dimensionless", "entrainment", n)
    scale = _scale(sampled, Nnom, n)
    U, shape = _current_si(sampled.get("current") if not isinstance(current, CurrentProfile) else current, column)
    U = _si(Q_(U, "m/s") if isinstance(U, float) else U, "m/s", "velocity", "current", n) if U is not None else None
    if U is not None and np.any(U < 0):
        U = np.abs(U)  # a current's direction does not matter to the rise; drawn negatives are speeds
    tr = None
    emu_error = emu = None
    nan = np.full(n, np.nan)
    if direction == "inverse":
        z = _si(sampled["rise_height"], "m", "length", "rise height", n)
        z = np.where((z > 0) & (z < column.top), z, np.nan)
        if method == "closed-form":
            F = _closed_flux(column, z, scale, U, level)
            zt, zs = (z, z * closed_form.SPREADING_FRACTION) if level == "maximum" else \
                (z / closed_form.SPREADING_FRACTION, z)
            fields = {"zt": zt, "zs": zs, "xt": nan, "xs": nan, "Qs": nan, "dTs": nan}
        else:
            F, fields, emu = _invert_many(column, z, level, alpha, scale, U, shape, reuse=reuse)
            emu_error = None if emu is None or emu.guide_only else emu.error
            if track:
                ens, _ = _forward_integral(column, integral_H(column, F), alpha, scale, U, shape, track=True)
                tr = ens.track
        H = integral_H(column, F)
        Qv = nan
    else:
        if source is None:
            H = _si(sampled["heat_power"], "W", "power", "heat power", n)
            H = np.where(H > 0, H, np.nan)
            Qv = nan
        else:
            Q0, M0, H0, S0 = source.si()
            H, Qv = (np.broadcast_to(np.asarray(v, float), (n,)) for v in (H0, Q0))
        F = column.heat_to_buoyancy() * H
        if method == "closed-form":
            zl, _ = _closed_rise(column, F, scale, U, "maximum")
            fields = {"zt": zl, "zs": zl * closed_form.SPREADING_FRACTION, "xt": nan, "xs": nan, "Qs": nan,
                      "dTs": nan}
        else:
            ens, F = _forward_integral(column, H, alpha, scale, U, shape,
                                       source=None if source is None else source.si(), track=track)
            esc = ens.escaped
            fields = {"zt": np.where(esc, np.nan, ens.maximum_height), "zs": ens.spreading_height,
                      "xt": ens.maximum_distance, "xs": ens.spreading_distance, "Qs": ens.spreading_volume_flux,
                      "dTs": ens.spreading_anomaly}
            if n == 1 and esc[0]:
                raise InputError("heat power", f"{H[0] / 1e6:.4g} MW", "a plume that stops within the ambient "
                                 f"profile (its top is {column.top:.0f} m above the vent)")
            tr = ens.track
    failed = int(np.count_nonzero(~np.isfinite(H) | ~np.isfinite(fields["zt"])))
    if U is None:
        fields["xt"] = np.where(np.isfinite(fields["zt"]), 0.0, np.nan)
    squeeze = (lambda a: float(a[0])) if n == 1 else (lambda a: a)
    return PlumeRiseResult(
        heat_power=Q_(squeeze(H), "W"), buoyancy_flux=Q_(squeeze(F), "m^4/s^3"),
        rise_height=Q_(squeeze(fields["zt"]), "m"), spreading_height=Q_(squeeze(fields["zs"]), "m"),
        downstream_distance=Q_(squeeze(fields["xt"]), "m"),
        spreading_volume_flux=Q_(squeeze(fields["Qs"]), "m^3/s"),
        spreading_dilution=Q_(squeeze(fields["Qs"] / Qv), "dimensionless"),
        spreading_anomaly=Q_(squeeze(fields["dTs"]), "K"), level=level, method=method,
        vent_depth=Q_(column.vent_depth, "m"), column=column, failed=failed, track=_track_quantities(tr),
        emulator_error=emu_error, _emulator=emu)


def _track_quantities(tr):
    if tr is None:
        return None
    units = {"path": "m", "height": "m", "distance": "m", "radius": "m", "velocity": "m/s",
             "volume_flux": "m^3/s", "reduced_gravity": "m/s^2"}
    return {k: Q_(np.asarray(v)[:, 0], units[k]) for k, v in tr.items()}
