"""Sediment heat-flow probe reduction: equilibrium temperatures, in-situ conductivity, heat flow.

A multi-sensor probe pushed into sediment records, for each thermistor, the
decay of the frictional heating of penetration and, some minutes later, the
decay of a calibrated heat pulse of energy ``Q`` per unit length. The
reduction, per penetration:

0. *Sensor screening.* A sensor left out on request, with gaps in more than
   10 % of its samples, a constant or non-physical reading, or (after the
   fits) a misfit far above its own noise is excluded, with one warning naming
   it and why; the penetration is refused only when fewer than three sensors
   remain (a gradient with a standard error).
1. *Equilibrium temperature* of each sensor from the frictional decay: a fit
   of ``T(t) = T_eq + A·F(α, κ(t − t_pen + δ)/a²)`` (the instantaneously
   heated cylinder, ``ventflux_thermal.decay``; the fitted origin shift ``δ``
   absorbs the finite duration of the heating; common practice, no source)
   or, as the simpler option, the late-time line-source asymptote
   ``T = T_eq + B/(t − t_pen)``.
2. *Conductivity* of each sensor's interval from the heat-pulse decay, after
   subtracting the continuing frictional decay extrapolated from step 1. The
   pulse starts at ``t_hp`` (as instruments log it) and lasts ``t_p`` at
   constant power: ``ΔT(t) = c + Q/(π a² ρ_p c_p) · G(α, κ(t − t_hp + δ)/a²,
   κ t_p/a²)``, the superposition of the instantaneous solution over the
   pulse (``decay.cylinder_pulse_decay``), fitted for ``k`` (``κ = k/ρc``),
   the offset ``c`` and a time-origin shift ``δ`` (within ±5 s, a choice
   made here, for a logger clock that marks the pulse a little early or
   late). The line-source option fits ``ΔT = c + Q/(4πk (t − t_hp − t_p/2))``
   late, and states its model error for the probe (below). Steps 1 and 2 are
   iterated twice, since the frictional fit needs ``κ`` (a sequential form of
   the joint inversion of [2]).
3. *Heat flow* from the regression ``T_eq = T0 + q·R`` on the cumulative
   thermal resistance ``R_i = Σ_{j≤i} (z_j − z_{j−1}) / k_j`` (``z_0`` = the
   seafloor, ``k_j`` the conductivity of the interval ending at sensor ``j``;
   the thermal-resistance method, common practice), with the regression's standard error, a standard uncertainty that
   also carries the conductivities' uncertainties (Monte Carlo over ``k``),
   and each sensor's residual.

Depths: sensor positions are given as distances along the probe below the
seafloor; with a tilt ``θ`` from vertical the depths are ``z = s·cos θ``.

Fitting windows (defaults; common practice, no source): the frictional fit
starts ``max(30 s, 10 %)`` into the frictional record (the heating is not
instantaneous) and ends 2 s before the heat pulse starts; the line-source
option uses only the second half of each record, where ``t ≫ a²/κ``. The
pulse fit starts 10 s after the pulse has ended, so no window holds part of
the pulse.

Model error: each fit's rms misfit is compared with the sensor's own noise
(from its second differences); a misfit above 1.5 × noise (a choice made
here) is flagged in the result. The line-source option's systematic error on
a finite probe, which its misfit cannot show, is computed by fitting the
line-source form to the cylinder model of the same probe over the same
window; above 1 % it is flagged with its size.

Uncertainty (``PenetrationResult.uncertainty_parts``, each a standard
uncertainty of the heat flow, combined in quadrature into
``heat_flow_uncertainty``): ``regression`` (the standard error of the slope,
the scatter of ``T_eq`` about the line), ``conductivity fits`` (the pulse
fits' standard errors, Monte Carlo over ``k``), ``probe constants`` (each
probe constant given with an uncertainty, by re-fitting with it one standard
deviation higher, the frictional fits kept) and ``tilt``. A calibration factor shared by stations is
drawn in the survey, once per draw for all of them.

References
----------
.. [1] Carslaw, H. S. and Jaeger, J. C. (1959). Conduction of Heat in Solids,
   2nd ed., §10.3 and §13.7.
.. [2] Hartmann, A. and Villinger, H. (2002). Inversion of marine heat flow
   measurements by expansion of the temperature decay function. Geophys. J.
   Int. 148, 628–636.
.. [3] Marquardt, D. W. (1963). An algorithm for least-squares estimation of
   nonlinear parameters. J. Soc. Ind. Appl. Math. 11, 431–441.
"""


from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ventflux.plugin_api import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    Collector,
    InputError,
    SharedDraws,
    propagate,
)
from ventflux.plugin_api import Uncertain, nominal, parse_uncertain
from ventflux.plugin_api import Q_, parse_quantity, ureg

from .constants import METHODS, PLAUSIBLE_PROBE, PROBE_FIELDS, ProbeConstants
from .decay import cylinder_decay, cylinder_pulse_decay, cylinder_pulse_decay_and_slopes
from .records import ProbeRecord, read_record

#: Fewest sensors for a heat flow with a standard error (slope, intercept and one degree of freedom).
MIN_SENSORS = 3
#: A sensor with gaps in more than this fraction of its samples is excluded (a choice made here).
MAX_GAP_FRACTION = 0.10
#: Plausible sediment temperatures, K: from sea ice to far above any probed sediment (a choice made here).
PLAUSIBLE_TEMPERATURE = (273.15 - 3.0, 273.15 + 400.0)
#: A misfit above this multiple of the sensor's noise flags a model error (a choice made here).
MODEL_ERROR_RATIO = 1.5
#: A misfit above this multiple of the noise and above 20 mK excludes the sensor (a choice made here).
BAD_FIT_RATIO, BAD_FIT_FLOOR = 20.0, 0.02
#: Bounds of the pulse fit's origin shift, s (a choice made here: a logger clock a few seconds off).
PULSE_SHIFT_BOUND = 5.0


@dataclass(frozen=True)
class DecayFit:
    """One sensor's decay fit: parameters, window and misfit."""

    equilibrium_temperature: float  # K
    amplitude: float  # K (cylinder) or K·s (line source)
    origin_shift: float  # s
    window: tuple  # (t_start, t_end) s
    misfit_rms: float  # K
    n_points: int
    equilibrium_se: float  # K


@dataclass(frozen=True)
class PulseFit:
    conductivity: float  # W/(m K)
    conductivity_se: float
    window: tuple
    misfit_rms: float  # K
    n_points: int
    offset: float = 0.0  # K, constant left over after the frictional background
    origin_shift: float = 0.0  # s, fitted shift of the pulse's start
    duration: float = 0.0  # s


@dataclass
class PenetrationResult:
    """Result of one penetration's reduction (SI floats; sensors are the ones kept)."""

    record: str
    method: str
    depth: np.ndarray  # m, tilt-corrected
    conductivity: np.ndarray  # W/(m K)
    conductivity_se: np.ndarray
    equilibrium_temperature: np.ndarray  # K
    resistance: np.ndarray  # m^2 K / W
    heat_flow: float  # W/m^2
    heat_flow_se: float  # regression standard error
    heat_flow_uncertainty: float  # total standard uncertainty (quadrature sum of uncertainty_parts)
    intercept_temperature: float  # K
    residual: np.ndarray  # K
    friction: list
    pulse: list
    penetration_time: float = float("nan")  # s
    heat_pulse_time: float | None = None  # s
    heat_pulse_energy: float | None = None  # J/m
    record_data: ProbeRecord | None = None
    sensors: tuple = ()
    excluded: dict = field(default_factory=dict)  # sensor → reason
    warnings: list = field(default_factory=list)
    flags: list = field(default_factory=list)  # model errors and other doubts
    uncertainty_parts: dict = field(default_factory=dict)  # name → standard uncertainty of q, W/m^2
    conductivity_uncertainty: np.ndarray | None = None  # fit SE with the probe constants' part
    noise: np.ndarray | None = None  # K, per sensor
    probe: ProbeConstants | None = None
    label: str = ""
    #: What the Monte Carlo of the conductivity fits needs (``fit_spread``): sensor distances, kept sensors, the
    #: interpolation matrix, the spread of the kept conductivities (m, -, -, W/(m K)).
    spread_model: dict = field(default_factory=dict)
    #: The driver's bookkeeping of that Monte Carlo: draws, seed, unphysical_draws, max_unphysical_share.
    monte_carlo: dict = field(default_factory=dict)

    def as_dict(self) -> dict:
        out = {"record": self.record, "penetration": self.label, "method": self.method,
               "heat_flow_mW_m2": 1e3 * self.heat_flow, "heat_flow_se_mW_m2": 1e3 * self.heat_flow_se,
               "heat_flow_uncertainty_mW_m2": 1e3 * self.heat_flow_uncertainty,
               "uncertainty_parts_mW_m2": {k: 1e3 * v for k, v in self.uncertainty_parts.items()},
               "intercept_temperature_degC": self.intercept_temperature - 273.15,
               "excluded_sensors": dict(self.excluded), "warnings": list(self.warnings), "flags": list(self.flags),
               "probe": self.probe.provenance() if self.probe else None,
               "defaults_used": self.probe.defaults_used() if self.probe else [],
               **{k: v for k, v in self.monte_carlo.items() if k != "inputs"}, "sensors": []}
        for i in range(self.depth.size):
            f, p = self.friction[i], self.pulse[i]
            out["sensors"].append({
                "sensor": self.sensors[i] if self.sensors else f"T{i + 1}",
                "depth_m": self.depth[i], "equilibrium_temperature_degC": self.equilibrium_temperature[i] - 273.15,
                "equilibrium_temperature_se_mK": 1e3 * f.equilibrium_se,
                "conductivity_W_m_K": self.conductivity[i], "conductivity_se_W_m_K": self.conductivity_se[i],
                "conductivity_uncertainty_W_m_K": (self.conductivity_uncertainty[i]
                                                   if self.conductivity_uncertainty is not None else None),
                "thermal_resistance_m2K_W": self.resistance[i], "residual_mK": 1e3 * self.residual[i],
                "noise_mK": 1e3 * self.noise[i] if self.noise is not None else None,
                "friction_window_s": list(f.window), "friction_misfit_mK": 1e3 * f.misfit_rms,
                "pulse_window_s": list(p.window) if p else None,
                "pulse_misfit_mK": 1e3 * p.misfit_rms if p else None,
                "pulse_origin_shift_s": p.origin_shift if p else None})
        return out


# --------------------------------------------------------------------------- reading
_META = re.compile(r"^\s*#\s*([A-Za-z_][A-Za-z0-9_ ]*?)\s*(?:\[(.*?)\])?\s*[:=]\s*(.+?)\s*$")
_META_KEYS: dict[str, str] = {
              "penetration_time": "time", "heat_pulse_time": "time", "heat_pulse_energy": "energy per length",
              "heat_pulse_duration": "time", "tilt": "angle", "sensor_depths": "length",
              "radius": "length", "probe_heat_capacity": "volumetric heat capacity",
              "sediment_heat_capacity": "volumetric heat capacity", "exclude_sensors": ""}  # "": names, no unit


def read_metadata(path) -> dict:
    """Metadata from ``# key [unit]: value`` comment lines at the head of a record.

    Keys: ``penetration_time``, ``heat_pulse_time``, ``heat_pulse_energy``
    (J/m), ``heat_pulse_duration`` (s, from the pulse's logged start),
    ``tilt`` (deg), ``sensor_depths`` (comma-separated, one unit), the probe
    description ``radius``, ``probe_heat_capacity``, ``sediment_heat_capacity``
    (each may carry an uncertainty, ``4.0 ± 0.1``), and ``exclude_sensors``
    (comma-separated column names).
    """
    out: dict[str, object] = {}  # quantities, uncertain quantities, and the excluded sensors' names
    try:
        lines = list(_head_lines(path))
    except UnicodeDecodeError as e:  # a non-UTF-8 byte in the header: one line, not a traceback
        raise InputError("file", str(path), f"a UTF-8 text record (byte 0x{e.object[e.start]:02x} at offset {e.start} "
                         "is not UTF-8)", where=str(path)) from None
    for n, line in lines:
        if not line.lstrip().startswith("#"):
            if line.strip():
                break
            continue
        m = _META.match(line)
        if not m or m.group(1).strip() not in _META_KEYS:
            continue
        key, unit, value = m.group(1).strip(), m.group(2), m.group(3)
        dim = _META_KEYS[key]
        where = f"{path}:{n}"
        try:
            if key == "exclude_sensors":
                out[key] = tuple(v.strip() for v in value.split(",") if v.strip())
            elif key == "sensor_depths":
                out[key] = Q_([float(v) for v in value.split(",")], unit or "m")
            elif key == "tilt":
                out[key] = parse_uncertain(f"{value} {unit or 'degree'}", "angle", key)
            elif key in PROBE_FIELDS:
                out[key] = parse_uncertain(f"{value} {unit or ''}".strip(), dim, key)
            else:
                out[key] = parse_quantity(f"{value} {unit or ''}".strip(), dim, key)
        except (ValueError, InputError):
            raise InputError(key, value, f"a number with a {dim or 'name'} unit", where=where) from None
    return out


def read_probe_record(path, n_sensors: int | None = None, sensor_columns=None) -> ProbeRecord:
    """Read a probe record: ``time [s]`` and sensor columns ``T1 [degC]`` … ``TN [degC]``.

    Empty or ``nan`` sensor cells are gaps (NaN); raises ``InputError`` naming
    the file and line for a missing sensor column, a non-numeric cell, or a
    time that does not increase.
    """
    path = Path(path)
    meta = read_metadata(path) if path.is_file() else {}
    if sensor_columns is None:
        if n_sensors is None:
            if "sensor_depths" not in meta:
                raise InputError("sensor depths", "(missing)", "sensor depths (option or '# sensor_depths [m]: ...' "
                                 "line in the record)", where=str(path))
            n_sensors = len(meta["sensor_depths"])
        found = _sensor_columns_in_header(path)
        if len(found) > n_sensors:  # fewer depths than columns; the reader names a missing column itself
            raise InputError("sensor depths", f"{n_sensors} depths",
                             f"one depth per sensor column of the record ({len(found)}: {', '.join(found)})",
                             where=str(path))
        sensor_columns = [f"T{i + 1}" for i in range(n_sensors)]
    return read_record(path, sensor_columns, meta)


def _head_lines(path):
    """Numbered lines up to the first line that is neither a comment nor blank."""
    with open(path, encoding="utf-8-sig") as fh:
        for n, line in enumerate(fh, 1):
            yield n, line
            if line.strip() and not line.lstrip().startswith("#"):
                return


def _sensor_columns_in_header(path):
    """Names of the ``T<n>`` sensor columns in a record's header line (empty if unreadable)."""
    try:
        with open(path, encoding="utf-8-sig") as fh:
            for line in fh:
                if line.strip() and not line.lstrip().startswith("#"):
                    names = [c.split("[")[0].strip() for c in line.split(",")]
                    return [c for c in names if re.fullmatch(r"T\d+", c)]
    except OSError:
        pass
    return []


# --------------------------------------------------------------------------- checks
def check_timing(rec: ProbeRecord, penetration_time: float, heat_pulse_time: float | None, min_decay=60.0,
                 pulse_duration: float = 0.0):
    """Refuse a penetration or heat-pulse time the record does not contain (one line each).

    Each decay needs ``min_decay`` seconds of record (60 s, a choice made here).
    """
    t0, t1 = rec.time[0], rec.time[-1]
    c = Collector()
    where = str(rec.path)
    if not t0 <= penetration_time < t1 - min_decay:
        raise InputError("penetration time", f"{penetration_time:g} s",
                         f"a time within the record ({t0:g} to {t1 - min_decay:g} s, leaving {min_decay:g} s of decay)",
                         where=where)
    if heat_pulse_time is not None:
        last = t1 - min_decay - pulse_duration
        if not (penetration_time + min_decay <= heat_pulse_time <= last):
            c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                             f"a time in the record at least {min_decay:g} s after penetration and {min_decay:g} s "
                             f"before the end of the pulse's decay ({penetration_time + min_decay:g} to {last:g} s)",
                             where=where))
        else:
            before = rec.temperature[:, (rec.time >= heat_pulse_time - 10) & (rec.time < heat_pulse_time)]
            after = rec.temperature[:, (rec.time > heat_pulse_time) & (rec.time <= heat_pulse_time + pulse_duration
                                                                         + 30)]
            if before.shape[1] == 0 or after.shape[1] == 0:
                c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                                 "a time with samples in the 10 s before and 30 s after it", where=where))
            else:
                with warnings.catch_warnings():  # a dead channel's all-NaN rows: screened out later, by name
                    warnings.simplefilter("ignore", RuntimeWarning)
                    rise = np.nanmax(after, axis=1) - np.nanmean(before, axis=1)
                if not np.any(rise > 0.05):  # 50 mK: far above thermistor noise (common practice, no source)
                    c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                                     f"the time of a heat pulse in the record (largest rise within 30 s: "
                                     f"{1e3 * np.nanmax(rise):.3g} mK; a pulse raises the sensors by > 50 mK)",
                                     where=where))
    c.raise_if_any()


def sensor_noise(temperature) -> float:
    """White-noise standard deviation of a smooth record from its second differences, K.

    For independent noise of sd σ, the second difference has variance 6σ²;
    the median absolute deviation (×1.4826) keeps it robust to spikes.
    """
    d2 = np.diff(np.asarray(temperature, float), 2)
    d2 = d2[np.isfinite(d2)]
    if d2.size < 3:
        return float("nan")
    return float(1.4826 * np.median(np.abs(d2 - np.median(d2))) / np.sqrt(6.0))


# --------------------------------------------------------------------------- fits
def _linear_fit(x, y):
    """Least squares of y = c0 + c1·x for one sensor; returns (c0, c1, rms, se_c0)."""
    X = np.column_stack([np.ones_like(x), x])
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    r = y - X @ coef
    dof = max(x.size - 2, 1)
    s2 = float(r @ r) / dof
    cov = s2 * np.linalg.inv(X.T @ X)
    return coef[0], coef[1], float(np.sqrt(np.mean(r * r))), float(np.sqrt(cov[0, 0]))


def fit_frictional_decay(time, temperature, penetration_time, end_time, conductivity, probe: ProbeConstants,
                         method="cylinder", start=None) -> DecayFit:
    """Equilibrium temperature of one sensor from its frictional-heating decay.

    Parameters
    ----------
    time, temperature : ndarray
        One sensor's record, s and K (NaN samples are left out).
    penetration_time, end_time : float
        Origin of the decay and end of the window (before the heat pulse), s.
    conductivity : float
        Sediment conductivity used for κ = k/ρc, W/(m K).
    probe : ProbeConstants
    method : {"cylinder", "line-source"}
    start : float, optional
        Window start (s after penetration); default as in the module notes.

    Returns
    -------
    DecayFit
    """
    return fit_frictional_decays(time, np.asarray(temperature, float)[None, :], penetration_time, end_time,
                                 np.atleast_1d(float(conductivity)), probe, method, start)[0]


def _weighted_line(F, Y, W):
    """Least squares of Y = c0 + c1 F per row with 0/1 weights W: (c0, c1, rms, se_c0, sse), each (n,)."""
    m = W.sum(axis=-1)
    Fm = (W * F).sum(axis=-1) / m
    Ym = (W * Y).sum(axis=-1) / m
    Fc = W * (F - Fm[..., None])
    Yc = W * (Y - Ym[..., None])
    sxx = (Fc * Fc).sum(axis=-1)
    c1 = (Fc * Yc).sum(axis=-1) / sxx
    c0 = Ym - c1 * Fm
    sse = np.maximum((Yc * Yc).sum(axis=-1) - c1**2 * sxx, 0.0)
    s2 = sse / np.maximum(m - 2, 1)
    return c0, c1, np.sqrt(sse / m), np.sqrt(s2 * (1.0 / m + Fm**2 / sxx)), sse


def fit_frictional_decays(time, temperatures, penetration_time, end_time, conductivities, probe: ProbeConstants,
                          method="cylinder", start=None) -> list:
    """``fit_frictional_decay`` for several sensors of one record at once (vectorized over sensors).

    ``temperatures`` is sensors × samples (K, NaN gaps left out of each
    sensor's fit); ``conductivities`` one per sensor. Returns a DecayFit per sensor.
    """
    span = end_time - penetration_time
    if start is None:
        start = 0.5 * span if method == "line-source" else max(30.0, 0.1 * span)
    sel = (time >= penetration_time + start) & (time <= end_time)
    t = time[sel] - penetration_time
    Y = np.asarray(temperatures, float)[:, sel]
    W = np.isfinite(Y).astype(float)
    Y = np.where(W > 0, Y, 0.0)
    m = W.sum(axis=1).astype(int)
    if t.size == 0 or m.min() < 8:
        raise InputError("fitting window", f"{int(m.min()) if t.size else 0} samples",
                         "at least 8 samples in the frictional-decay window")
    window = (float(penetration_time + start), float(end_time))
    if method == "line-source":
        c0, c1, rms, se, _ = _weighted_line(np.broadcast_to(1.0 / t, Y.shape), Y, W)
        return [DecayFit(float(c0[i]), float(c1[i]), 0.0, window, float(rms[i]), int(m[i]), float(se[i]))
                for i in range(Y.shape[0])]
    scale = np.asarray(conductivities, float) / probe.sediment_heat_capacity / probe.radius**2
    # origin shift searched from just after the heating to a few window starts later (a choice made here)
    delta = _best_shift(t, Y, W, scale, probe.alpha, -0.9 * t[0], 3.0 * t[0] + 60.0)
    F = cylinder_decay(probe.alpha, (t[None, :] + delta[:, None]) * scale[:, None])
    c0, c1, rms, se, _ = _weighted_line(F, Y, W)
    return [DecayFit(float(c0[i]), float(c1[i]), float(delta[i]), window, float(rms[i]), int(m[i]), float(se[i]))
            for i in range(Y.shape[0])]


def _best_shift(t, Y, W, scale, alpha, lo, hi, n=25, levels=4):
    """Per sensor, the origin shift minimizing the misfit of ``y = c0 + c1 F(α, (t + δ) scale)`` in ``[lo, hi]``.

    Nested grids, vectorized over sensors and trial shifts with ``c0, c1`` by
    closed-form least squares: 25 trials, then 25 across the best trial's
    neighbours, four times (a resolution of ``(hi − lo)·(2/24)^3/24``, about
    4e-3 s for the default bounds), finished by a parabola through the best
    three.
    """
    ns = Y.shape[0]
    lo = np.full(ns, float(lo))
    hi = np.full(ns, float(hi))
    rows = np.arange(ns)
    for _ in range(levels):
        d = lo[:, None] + (hi - lo)[:, None] * np.linspace(0.0, 1.0, n)[None, :]  # (sensors, trials)
        F = cylinder_decay(alpha, (t[None, None, :] + d[:, :, None]) * scale[:, None, None])
        sse = _weighted_line(F, Y[:, None, :], W[:, None, :])[4]
        j = np.argmin(sse, axis=1)
        lo, hi = d[rows, np.maximum(j - 1, 0)], d[rows, np.minimum(j + 1, n - 1)]
    best = d[rows, j]
    inner = (j > 0) & (j < n - 1)
    a = sse[rows, np.maximum(j - 1, 0)]
    b = sse[rows, j]
    c = sse[rows, np.minimum(j + 1, n - 1)]
    den = a - 2 * b + c
    h = d[:, 1] - d[:, 0]
    step = np.where(inner & (den > 0), 0.5 * h * (a - c) / np.where(den > 0, den, 1.0), 0.0)
    return best + step


def frictional_model(fit: DecayFit, time, penetration_time, conductivity, probe: ProbeConstants, method):
    """The fitted frictional decay at ``time`` (K), for extrapolation under the heat pulse."""
    t = np.asarray(time, float) - penetration_time
    if method == "line-source":
        return fit.equilibrium_temperature + fit.amplitude / t
    tau = (t + fit.origin_shift) * conductivity / probe.sediment_heat_capacity / probe.radius**2
    return fit.equilibrium_temperature + fit.amplitude * cylinder_decay(probe.alpha, tau)


def _pulse_shape(probe: ProbeConstants, conductivity, elapsed, duration):
    """Cylinder response G (per unit V0) at ``elapsed`` seconds since the pulse's start."""
    scale = conductivity / (probe.radius**2 * probe.sediment_heat_capacity)
    return cylinder_pulse_decay(probe.alpha, np.asarray(elapsed, float) * scale, duration * scale)


def fit_heat_pulse(time, excess, pulse_time, energy, probe: ProbeConstants, method="cylinder", start=None,
                   start_conductivity=None, duration: float | None = None, fit_shift=True,
                   previous: PulseFit | None = None) -> PulseFit:
    """Conductivity from one sensor's heat-pulse decay (excess over the frictional background, K).

    ``cylinder``: ``ΔT = c + Q/(π a² ρ_p c_p) · G(α, k (t − t_hp + δ)/(ρc a²), k t_p/(ρc a²))``
    fitted for ``k``, a small offset ``c`` and the origin shift ``δ``; ``line-source``:
    ``ΔT = c + Q/(4πk (t − t_hp − t_p/2))`` over the late half of the pulse record, ``k`` from the slope.
    ``start`` counts from the pulse's end; ``duration`` defaults to ``probe.heat_pulse_duration``;
    ``previous``, an earlier fit of the same sensor, is the starting point.
    """
    k0 = None if start_conductivity is None else np.atleast_1d(float(start_conductivity))
    return fit_heat_pulses(time, np.asarray(excess, float)[None, :], pulse_time, energy, probe, method, start,
                           k0, duration, fit_shift, None if previous is None else [previous])[0]


def fit_heat_pulses(time, excess, pulse_time, energy, probe: ProbeConstants, method="cylinder", start=None,
                    start_conductivity=None, duration: float | None = None, fit_shift=True, previous=None) -> list:
    """``fit_heat_pulse`` for several sensors at once: ``excess`` sensors × samples (K, NaN gaps left out).

    The cylinder fit is a Levenberg–Marquardt iteration with Marquardt's
    scaling [3], run for all sensors together (3 × 3 normal equations per
    sensor, batched), with the analytic Jacobian of the superposed response
    (``decay.cylinder_pulse_decay_and_slopes``) and steps projected onto the
    bounds. Standard errors: ``s² (JᵀJ)⁻¹`` with ``s²`` on ``n − 3`` degrees
    of freedom (the usual linearized estimate).
    """
    dur = probe.heat_pulse_duration if duration is None else float(duration)
    end_pulse = pulse_time + dur
    Y = np.asarray(excess, float)
    ns = Y.shape[0]
    last = time[np.isfinite(Y).any(axis=0)][-1] if np.isfinite(Y).any() else time[-1]
    span = last - end_pulse
    if start is None:
        start = 0.5 * span if method == "line-source" else 10.0
    sel = time >= end_pulse + start
    t = time[sel] - pulse_time
    Y = Y[:, sel]
    W = np.isfinite(Y).astype(float)
    Y = np.where(W > 0, Y, 0.0)
    m = W.sum(axis=1)
    if t.size == 0 or m.min() < 8:
        raise InputError("fitting window", f"{int(m.min()) if t.size else 0} samples",
                         "at least 8 samples in the heat-pulse window")
    window = (float(end_pulse + start), float(last))
    if method == "line-source":
        c0, c1, rms, _, sse = _weighted_line(np.broadcast_to(1.0 / (t - 0.5 * dur), Y.shape), Y, W)
        if not np.all(c1 > 0):
            raise InputError("heat pulse", "no decay", "a heat pulse whose excess decays as 1/t")
        x = 1.0 / (t - 0.5 * dur)
        xm = (W * x).sum(1) / m
        sxx = (W * (x - xm[:, None]) ** 2).sum(1)
        se_slope = np.sqrt(sse / np.maximum(m - 2, 1) / sxx)
        k = energy / (4 * np.pi * c1)
        return [PulseFit(float(k[i]), float(k[i] * se_slope[i] / c1[i]), window, float(rms[i]), int(m[i]),
                         float(c0[i]), 0.0, dur) for i in range(ns)]
    V0 = energy / (np.pi * probe.radius**2 * probe.probe_heat_capacity)
    a2rc = probe.radius**2 * probe.sediment_heat_capacity
    shift = min(PULSE_SHIFT_BOUND, 0.9 * (t[0] - dur)) if fit_shift else 0.0
    # k searched over 0.05–10 W/(m K), far wider than any sediment; offset within ±5 K (choices made here)
    lo, hi = np.array([0.05, -5.0, -shift]), np.array([10.0, 5.0, shift])
    p = np.zeros((ns, 3))
    p[:, 0] = probe.start_conductivity if start_conductivity is None else start_conductivity
    if previous is not None:
        p = np.array([[f.conductivity, f.offset, f.origin_shift] for f in previous])
    p = np.clip(p, lo, hi)

    def evaluate(p):
        G, S1, S2 = cylinder_pulse_decay_and_slopes(probe.alpha, (t[None, :] + p[:, 2:3]) * p[:, 0:1] / a2rc,
                                                    dur * p[:, 0:1] / a2rc)
        r = W * (p[:, 1:2] + V0 * G - Y)
        J = W[..., None] * np.stack([V0 * S1 / p[:, 0:1], np.ones_like(G), V0 * S2 * p[:, 0:1] / a2rc], axis=-1)
        return r, J

    r, J = evaluate(p)
    cost = (r * r).sum(1)
    lam = np.full(ns, 1e-3)
    done = np.zeros(ns, bool)
    eye = np.eye(3)
    for _ in range(100):
        A = np.einsum("sni,snj->sij", J, J)
        g = np.einsum("sni,sn->si", J, r)
        D = np.einsum("sii->si", A)[:, :, None] * eye
        step = -np.linalg.solve(A + lam[:, None, None] * D + 1e-30 * eye, g[..., None])[..., 0]
        trial = np.clip(p + step, lo, hi)
        r2, J2 = evaluate(trial)
        cost2 = (r2 * r2).sum(1)
        better = (cost2 <= cost) & ~done
        moved = np.abs(trial - p).max(axis=1)
        p = np.where(better[:, None], trial, p)
        r = np.where(better[:, None], r2, r)
        J = np.where(better[:, None, None], J2, J)
        # converged: a step that no longer changes the parameters or the misfit (relative 1e-10)
        done |= (moved < 1e-10) | (better & (cost - cost2 <= 1e-10 * cost)) | (lam > 1e10)
        cost = np.where(better, cost2, cost)
        lam = np.where(better, lam / 3.0, lam * 4.0)
        if np.all(done):
            break
    A = np.einsum("sni,snj->sij", J, J)
    s2 = cost / np.maximum(m - 3, 1)
    cov = s2[:, None, None] * np.linalg.pinv(A)
    return [PulseFit(float(p[i, 0]), float(np.sqrt(cov[i, 0, 0])), window, float(np.sqrt(cost[i] / m[i])),
                     int(m[i]), float(p[i, 1]), float(p[i, 2]), dur) for i in range(ns)]


def pulse_model(fit: PulseFit, time, pulse_time, energy, probe: ProbeConstants, method):
    """The fitted heat-pulse excess at ``time`` (K), over the frictional background."""
    t = np.asarray(time, float) - pulse_time
    if method == "line-source":
        with np.errstate(divide="ignore", invalid="ignore"):
            return fit.offset + energy / (4 * np.pi * fit.conductivity * (t - 0.5 * fit.duration))
    V0 = energy / (np.pi * probe.radius**2 * probe.probe_heat_capacity)
    return fit.offset + V0 * _pulse_shape(probe, fit.conductivity, t + fit.origin_shift, fit.duration)


def line_source_model_error(conductivity, window, pulse_time, duration, probe: ProbeConstants) -> float:
    """Relative error of the line-source conductivity on a finite cylinder probe, over a fit window.

    The line-source form is fitted (offset and slope in 1/t) to the noise-free
    cylinder response of the same probe at ``conductivity``; the ratio of its
    conductivity to the true one, minus 1, is the model's systematic error.
    """
    t = np.linspace(window[0], window[1], 200) - pulse_time
    y = _pulse_shape(probe, conductivity, t, duration) / (np.pi * probe.radius**2 * probe.probe_heat_capacity)
    X = np.column_stack([np.ones_like(t), 1.0 / (t - 0.5 * duration)])
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    return float(1.0 / (4 * np.pi * coef[1]) / conductivity - 1.0)


# --------------------------------------------------------------------------- heat flow
def thermal_resistance(depth, conductivity):
    """Cumulative thermal resistance R_i = Σ_{j≤i} (z_j − z_{j−1}) / k_j from the seafloor (z_0 = 0), m²K/W.

    ``conductivity`` may carry a trailing draw axis: shape ``(n,)`` or ``(n, draws)``.
    """
    z = np.asarray(depth, float)
    dz = np.diff(np.concatenate([[0.0], z]))
    k = np.asarray(conductivity, float)
    dz = dz.reshape((-1,) + (1,) * (k.ndim - 1))
    return np.cumsum(dz / k, axis=0)


def heat_flow_regression(resistance, temperature):
    """Slope q, intercept T0, slope standard error and residuals of T = T0 + q·R (ordinary least squares).

    ``resistance`` may be ``(n,)`` or ``(n, draws)``; slopes are then per draw (vectorized).
    """
    R = np.asarray(resistance, float)
    T = np.asarray(temperature, float)
    if T.ndim < R.ndim:
        T = T.reshape((-1,) + (1,) * (R.ndim - 1))
    n = R.shape[0]
    Rm = R.mean(axis=0)
    Tm = T.mean(axis=0)
    sxx = ((R - Rm) ** 2).sum(axis=0)
    q = ((R - Rm) * (T - Tm)).sum(axis=0) / sxx
    T0 = Tm - q * Rm
    resid = T - (T0 + q * R)
    se = np.sqrt((resid**2).sum(axis=0) / max(n - 2, 1) / sxx) if n > 2 else np.full(np.shape(q), np.nan)
    return q, T0, se, resid


# --------------------------------------------------------------------------- the whole penetration
def _si(value, unit, dim, field):
    if value is None:
        return None
    value = nominal(value)
    if isinstance(value, str):
        value = parse_quantity(value, dim, field)
    return float(value.to(unit).magnitude) if np.ndim(value.magnitude) == 0 else value.to(unit).magnitude


def standard_deviation(value, unit) -> float:
    """Standard deviation of an input in ``unit`` (0 for an exact value)."""
    if not isinstance(value, Uncertain):
        return 0.0
    factor = float((1 * ureg.Unit(value.unit)).to(unit).magnitude) if value.unit != "degree_Celsius" else 1.0
    if value.kind == "normal":
        return value.b * factor
    if value.kind == "uniform":
        return (value.b - value.a) / np.sqrt(12.0) * factor
    return value.a * np.log(value.b) * factor  # lognormal: median × ln(factor), to first order


def probe_from_inputs(probe: ProbeConstants | None, meta: dict, overrides: dict | None = None,
                      fields: dict | None = None) -> ProbeConstants:
    """The probe description: defaults, then the record's header, then explicit values (each possibly uncertain).

    Each value must be positive and within ``constants.PLAUSIBLE_PROBE``; ``fields`` names each key in an
    error (an option such as ``--probe-radius``, or a survey key path).
    """
    probe = probe or ProbeConstants()
    values, sds = {}, dict(probe.uncertainty)
    for source in (meta, overrides or {}):
        for key, (unit, dim) in PROBE_FIELDS.items():
            if source.get(key) is None or (source is meta and key in probe.given):  # given values beat the header
                continue
            values[key] = _si(source[key], unit, dim, key)
            sds[key] = standard_deviation(source[key], unit)
    c = Collector()
    for key, v in values.items():
        name = (fields or {}).get(key, key.replace("_", " "))
        unit = PROBE_FIELDS[key][0]
        lo, hi = PLAUSIBLE_PROBE[key]
        if not v >= 0 or (key != "heat_pulse_duration" and not v > 0):
            c.add(InputError(name, f"{v:g} {unit}",
                             f"a {PROBE_FIELDS[key][1]} > 0" if key != "heat_pulse_duration" else "a duration ≥ 0 s"))
        elif not lo <= v <= hi:
            c.add(InputError(name, f"{v:g} {unit}", f"a plausible {PROBE_FIELDS[key][1]}, {lo:g} to {hi:g} {unit} "
                             "(ventflux_thermal.constants.PLAUSIBLE_PROBE)"))
    c.raise_if_any()
    return replace(probe.with_values(**values), uncertainty={k: v for k, v in sds.items() if v > 0})


def screen_sensors(rec: ProbeRecord, t_start: float, exclude=()) -> dict:
    """Sensors to leave out, with the reason: requested, gaps, constant or non-physical readings."""
    out = {}
    sel = rec.time >= t_start
    for i, name in enumerate(rec.sensors):
        y = rec.temperature[i, sel]
        gaps = int(np.isnan(y).sum())
        if name in exclude:
            out[name] = "excluded by request"
        elif gaps > MAX_GAP_FRACTION * y.size:
            out[name] = f"no reading in {gaps} of {y.size} samples"
        elif np.nanmax(y) - np.nanmin(y) < 1e-6:
            out[name] = f"constant reading ({np.nanmin(y) - 273.15:g} degC)"
        elif np.nanmin(y) < PLAUSIBLE_TEMPERATURE[0] or np.nanmax(y) > PLAUSIBLE_TEMPERATURE[1]:
            worst = np.nanmin(y) if np.nanmin(y) < PLAUSIBLE_TEMPERATURE[0] else np.nanmax(y)
            lo, hi = (t - 273.15 for t in PLAUSIBLE_TEMPERATURE)
            out[name] = f"non-physical temperature ({worst - 273.15:g} degC; allowed {lo:g} to {hi:g} degC)"
    return out


def _fit_sensors(rec, idx, t_pen, t_hp, end, energy, probe, method, known_k, use_pulse):
    """Frictional and pulse fits of the sensors ``idx`` (two sequential passes, each vectorized over sensors)."""
    n = len(idx)
    k = known_k.copy() if known_k is not None else np.full(n, probe.start_conductivity)
    pu: list[PulseFit | None] = [None] * n  # no pulse fits before the first pass, none at all without a pulse
    after = rec.time > t_hp if use_pulse else None
    temps = rec.temperature[idx]
    for _ in range(2 if use_pulse else 1):  # sequential joint inversion: friction needs κ, pulse needs background
        fr = fit_frictional_decays(rec.time, temps, t_pen, end, k, probe, method)
        if use_pulse:
            bg = np.stack([frictional_model(fr[j], rec.time[after], t_pen, k[j], probe, method) for j in range(n)])
            fits = fit_heat_pulses(rec.time[after], temps[:, after] - bg, t_hp, energy, probe, method,
                                   start_conductivity=k, previous=pu if pu[0] is not None else None)
            k = np.array([p.conductivity for p in fits])
            pu = fits
    return fr, pu, k


def _refit_pulses(rec, idx, fr, pu, k, t_pen, t_hp, energy, probe, method):
    """Conductivities re-fitted with other probe constants, the frictional fits kept (a sensitivity)."""
    after = rec.time > t_hp
    bg = np.stack([frictional_model(fr[j], rec.time[after], t_pen, k[j], probe, method) for j in range(len(idx))])
    fits = fit_heat_pulses(rec.time[after], rec.temperature[idx][:, after] - bg, t_hp, energy, probe, method,
                           previous=pu)
    return np.array([f.conductivity for f in fits])


def reduce_record(rec: ProbeRecord, s, *, penetration_time, heat_pulse_time=None, heat_pulse_energy=None,
                  tilt=0.0, tilt_sd=0.0, known_k=None, method="cylinder", probe: ProbeConstants | None = None,
                  exclude_sensors=(), draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, keep_record=False, label="",
                  max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> PenetrationResult:
    """Reduce one penetration of a record already read (SI floats); see ``reduce_penetration``.

    ``s`` holds the sensors' distances along the probe (m), one per record
    sensor; ``tilt`` and ``tilt_sd`` are in radians.
    """
    probe = probe or ProbeConstants()
    where = f"{rec.path}" + (f" ({label})" if label else "")
    t_pen, t_hp, energy = penetration_time, heat_pulse_time, heat_pulse_energy
    use_pulse = known_k is None
    dur = probe.heat_pulse_duration
    check_timing(rec, t_pen, t_hp if use_pulse else None, pulse_duration=dur if use_pulse else 0.0)
    excluded = screen_sensors(rec, t_pen, exclude_sensors)
    idx = [i for i, name in enumerate(rec.sensors) if name not in excluded]
    notes = [f"{where}: sensor {name} left out: {why}" for name, why in excluded.items()]
    end = (t_hp - 2.0) if (t_hp is not None and t_hp < rec.time[-1]) else rec.time[-1]
    for _ in range(2):  # fit, then once more without sensors whose misfit is far above their noise
        if len(idx) < MIN_SENSORS:
            raise InputError("sensors", f"{len(idx)} usable of {len(rec.sensors)}",
                             f"at least {MIN_SENSORS} sensors for a heat flow with a standard error (left out: "
                             + "; ".join(f"{k}: {v}" for k, v in excluded.items()) + ")", where=where)
        kk = None if known_k is None else known_k[idx]
        fr, pu, k = _fit_sensors(rec, idx, t_pen, t_hp, end, energy, probe, method, kk, use_pulse)
        noise = np.array([sensor_noise(rec.temperature[i, rec.time >= t_pen]) for i in idx])
        worst = [max(f.misfit_rms, p.misfit_rms if p else 0.0) for f, p in zip(fr, pu)]
        bad = [j for j in range(len(idx)) if worst[j] > max(BAD_FIT_RATIO * noise[j], BAD_FIT_FLOOR)]
        if not bad:
            break
        for j in bad:
            name = rec.sensors[idx[j]]
            excluded[name] = f"misfit {1e3 * worst[j]:.3g} mK against its noise of {1e3 * noise[j]:.3g} mK"
            notes.append(f"{where}: sensor {name} left out: {excluded[name]}")
        idx = [i for j, i in enumerate(idx) if j not in bad]
    gaps = {rec.sensors[i]: int(np.isnan(rec.temperature[i, rec.time >= t_pen]).sum()) for i in idx}
    notes += [f"{where}: sensor {name}: {g} samples without a reading left out of its fits"
              for name, g in gaps.items() if g]
    flags = []
    for what, fits in (("frictional", fr), ("heat-pulse", pu)):
        ratio = np.array([f.misfit_rms / noise[j] if f is not None else 0.0 for j, f in enumerate(fits)])
        poor = np.flatnonzero(ratio > MODEL_ERROR_RATIO)
        if poor.size:  # one line for all the sensors it concerns
            w = poor[np.argmax(ratio[poor])]
            flags.append(f"model error: the {what} fits of {', '.join(rec.sensors[idx[j]] for j in poor)} misfit "
                         f"beyond their noise (worst {rec.sensors[idx[w]]}: {1e3 * fits[w].misfit_rms:.3g} mK rms "
                         f"against {1e3 * noise[w]:.3g} mK)")
    k_se = np.array([p.conductivity_se for p in pu]) if use_pulse else np.zeros(len(idx))
    if use_pulse and method == "line-source":
        errs = np.array([line_source_model_error(p.conductivity, p.window, t_hp, dur, probe) for p in pu])
        if np.max(np.abs(errs)) > 0.01:  # 1 %: the accuracy the cylinder model reaches (a choice made here)
            flags.append(f"model error: the line-source form misestimates conductivity on this probe (radius "
                         f"{1e3 * probe.radius:g} mm) by {100 * errs.min():+.3g} to {100 * errs.max():+.3g} % over "
                         "its windows; use the cylinder model")
    z_all = np.asarray(s, float) * np.cos(tilt)
    z = z_all[idx]
    # An excluded sensor's interval keeps its length; its conductivity is interpolated (by sensor order)
    # from the kept neighbours, the nearest one at the ends (a choice made here, named in the warnings).
    W = np.stack([np.interp(np.arange(z_all.size), idx, col) for col in np.eye(len(idx))], axis=1)
    if len(idx) < z_all.size:
        notes.append(f"{where}: the conductivity of the intervals ending at "
                     f"{', '.join(n for n in rec.sensors if n in excluded)} is interpolated from the kept sensors")

    def resistance(kk):  # cumulative resistance at the kept sensors; kk (n_kept,)
        return thermal_resistance(z_all, np.tensordot(W, kk, axes=1))[idx]

    Teq = np.array([f.equilibrium_temperature for f in fr])
    R = resistance(k)
    q, T0, se, resid = heat_flow_regression(R, Teq)
    parts = {"regression": float(se)}
    model = {"distance": np.asarray(s, float), "tilt": float(tilt), "kept": list(idx), "interpolation": W,
             "sensors": tuple(rec.sensors), "gap_sd": float(np.std(k, ddof=1)) if known_k is None else 0.0}
    spread = fit_spread(Path(rec.path).name, label, k, k_se, Teq, model, SharedDraws(draws, seed), max_unphysical)
    parts.update(spread.parts)
    k_probe = np.zeros(k.size)
    if use_pulse and probe.uncertainty:
        dq2 = 0.0
        for key, sd in probe.uncertainty.items():  # one re-fit per uncertain constant, one sd higher
            if key not in ("radius", "probe_heat_capacity", "sediment_heat_capacity", "heat_pulse_energy",
                           "heat_pulse_duration"):
                continue
            if key == "heat_pulse_energy":
                e2, p2 = energy + sd, probe
            else:
                e2, p2 = energy, probe.with_values(**{key: getattr(probe, key) + sd})
            # the pulse fits re-done with the constant one sd higher, from the fitted values; the frictional
            # fits (equilibrium temperatures) depend on it only through κ, weakly, and are kept
            k2 = _refit_pulses(rec, idx, fr, pu, k, t_pen, t_hp, e2, p2, method)
            q2, *_ = heat_flow_regression(resistance(k2), Teq)
            dq2 += float(q2 - q) ** 2
            k_probe = np.hypot(k_probe, k2 - k)
        parts["probe constants"] = float(np.sqrt(dq2))
    if tilt_sd > 0:
        parts["tilt"] = float(abs(q) * np.tan(tilt) * tilt_sd)  # q ∝ 1/cos θ (z = s cos θ)
    q_unc = float(np.sqrt(sum(v**2 for v in parts.values())))
    return PenetrationResult(record=str(rec.path), method=method, depth=z, conductivity=k, conductivity_se=k_se,
                             equilibrium_temperature=Teq, resistance=R, heat_flow=float(q), heat_flow_se=float(se),
                             heat_flow_uncertainty=q_unc, intercept_temperature=float(T0),
                             residual=np.asarray(resid, float).ravel(), friction=fr, pulse=pu,
                             penetration_time=float(t_pen), heat_pulse_time=t_hp if use_pulse else None,
                             heat_pulse_energy=energy if use_pulse else None,
                             record_data=rec if keep_record else None, sensors=tuple(rec.sensors[i] for i in idx),
                             excluded=excluded, warnings=notes, flags=flags, uncertainty_parts=parts,
                             conductivity_uncertainty=np.hypot(k_se, k_probe), noise=noise, probe=probe, label=label,
                             spread_model=model, monte_carlo=spread.provenance)


def reduce_penetration(record_path, sensor_depths=None, *, penetration_time=None, heat_pulse_time=None,
                       heat_pulse_energy=None, heat_pulse_duration=None, tilt=None, conductivity=None,
                       method="cylinder", probe: ProbeConstants | None = None, sensor_columns=None,
                       exclude_sensors=None, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, keep_record=False,
                       max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> PenetrationResult:
    """Reduce one probe penetration to heat flow with its total uncertainty.

    Parameters
    ----------
    record_path : path-like
        CSV with ``time [s]`` and ``T1 [degC]`` … ``TN [degC]``; metadata
        missing from the arguments is read from ``# key [unit]: value`` lines
        at its head (see ``read_metadata``).
    sensor_depths : pint.Quantity, optional
        Distances of the sensors along the probe below the seafloor, in order, m.
    penetration_time, heat_pulse_time : pint.Quantity, optional
        Times on the record's clock, s; the pulse's time is its logged start.
        Without a heat pulse, ``conductivity`` must be given.
    heat_pulse_energy : pint.Quantity, optional
        Energy per unit length of the pulse, J/m.
    heat_pulse_duration : pint.Quantity, optional
        Length of the pulse at constant power, s (default: the probe's, 0 s).
    tilt : pint.Quantity or Uncertain, optional
        Probe tilt from vertical, deg (default 0); an uncertain tilt adds its part.
    conductivity : pint.Quantity, optional
        Known conductivity per sensor interval, W/(m K) (skips the heat pulse).
    method : {"cylinder", "line-source"}
        Decay model for both fits.
    probe : ProbeConstants, optional
        Probe description; the record's header may set its fields too.
    exclude_sensors : sequence of str, optional
        Sensor columns to leave out (added to the header's ``exclude_sensors``).
    draws, seed, max_unphysical : int, int, float
        Monte Carlo over the conductivities' fit errors, through the core's
        driver (``fit_spread``; draws below ``CONDUCTIVITY_FLOOR`` are dropped
        and counted, refused above ``max_unphysical``).

    Returns
    -------
    PenetrationResult
        ``heat_flow``, ``heat_flow_se`` and ``heat_flow_uncertainty`` in W/m².

    Raises
    ------
    InputError
        Missing sensor column, non-monotonic time, non-numeric cells (with the
        line), a penetration or pulse time the record does not contain, too few
        usable sensors.
    """
    if method not in METHODS:
        raise InputError("method", method, "one of " + ", ".join(METHODS))
    path = Path(record_path)
    meta = read_metadata(path) if path.is_file() else {}
    depths = sensor_depths if sensor_depths is not None else meta.get("sensor_depths")
    if depths is None and sensor_columns is None:
        raise InputError("sensor depths", "(missing)", "sensor depths (argument or '# sensor_depths [m]: ...' line)",
                         where=str(path))
    s = np.atleast_1d(_si(depths, "m", "length", "sensor depths"))
    rec = read_probe_record(path, n_sensors=s.size, sensor_columns=sensor_columns)
    return reduce_with_metadata(rec, s, meta, penetration_time=penetration_time, heat_pulse_time=heat_pulse_time,
                                heat_pulse_energy=heat_pulse_energy, heat_pulse_duration=heat_pulse_duration,
                                tilt=tilt, conductivity=conductivity, method=method, probe=probe,
                                exclude_sensors=exclude_sensors, draws=draws, seed=seed, keep_record=keep_record,
                                max_unphysical=max_unphysical)


def reduce_with_metadata(rec, s, meta, *, penetration_time=None, heat_pulse_time=None, heat_pulse_energy=None,
                         heat_pulse_duration=None, tilt=None, conductivity=None, method="cylinder", probe=None,
                         exclude_sensors=None, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, keep_record=False, label="",
                         max_unphysical=DEFAULT_MAX_UNPHYSICAL):
    """Validate a penetration's inputs (arguments over the record's header) and reduce it."""
    path = rec.path
    where = str(path)
    if s.size != len(rec.sensors):
        raise InputError("sensor depths", f"{s.size} depths", f"one depth per sensor column ({len(rec.sensors)})",
                         where=where)
    if np.any(np.diff(s) <= 0) or s[0] < 0:
        raise InputError("sensor depths", ", ".join(f"{v:g}" for v in s), "depths ≥ 0 m increasing down the probe",
                         where=where)
    tilt_in = tilt if tilt is not None else meta.get("tilt", Q_(0.0, "degree"))
    if isinstance(tilt_in, str):
        tilt_in = parse_uncertain(tilt_in, "angle", "tilt", "degree")
    tilt_v = _si(tilt_in, "radian", "angle", "tilt")
    if not 0 <= tilt_v < np.deg2rad(60):
        raise InputError("tilt", f"{np.rad2deg(tilt_v):g} deg", "a tilt from vertical of 0 to 60 deg", where=where)
    t_pen = _si(penetration_time if penetration_time is not None else meta.get("penetration_time"), "s", "time",
                "penetration time")
    if t_pen is None:
        raise InputError("penetration time", "(missing)", "the penetration time (option or record header)",
                         where=where)
    t_hp = _si(heat_pulse_time if heat_pulse_time is not None else meta.get("heat_pulse_time"), "s", "time",
               "heat pulse time")
    probe = probe_from_inputs(probe, meta, {"heat_pulse_duration": heat_pulse_duration,
                                            "heat_pulse_energy": heat_pulse_energy})
    energy = probe.heat_pulse_energy
    known_k = None
    if conductivity is not None:
        kv = np.atleast_1d(_si(conductivity, "W/(m*K)", "thermal conductivity", "conductivity")).astype(float)
        if kv.size not in (1, s.size):
            raise InputError("conductivity", f"{kv.size} values", f"one conductivity, or one per sensor ({s.size})",
                             where=where)
        if not np.all(kv > 0):
            raise InputError("conductivity", f"{kv[~(kv > 0)][0]:g} W/(m K)", "a thermal conductivity > 0 W/(m K)",
                             where=where)
        known_k = np.broadcast_to(kv, s.shape).copy()
    if known_k is None and (t_hp is None or energy is None):
        raise InputError("heat pulse", "(missing)", "a heat pulse time and energy per length, or known conductivities",
                         where=where)
    exclude = tuple(meta.get("exclude_sensors", ())) + tuple(exclude_sensors or ())
    unknown = [e for e in exclude if e not in rec.sensors]
    if unknown:
        raise InputError("exclude sensors", ", ".join(unknown), "sensor columns of the record: "
                         + ", ".join(rec.sensors), where=where)
    return reduce_record(rec, s, penetration_time=t_pen, heat_pulse_time=t_hp, heat_pulse_energy=energy,
                         tilt=tilt_v, tilt_sd=standard_deviation(tilt_in, "radian"), known_k=known_k, method=method,
                         probe=probe, exclude_sensors=exclude, draws=draws, seed=seed, keep_record=keep_record,
                         label=label, max_unphysical=max_unphysical)


#: Lowest conductivity a draw may give an interval, W/(m K): the heat-pulse fit's own lower bound (its search
#: range, ``fit_heat_pulse``); a draw below it is dropped and counted, never moved to the bound.
CONDUCTIVITY_FLOOR = 0.05


@dataclass(frozen=True)
class FitSpread:
    """The conductivity fits' parts of a penetration's heat-flow uncertainty, and the driver's bookkeeping."""

    parts: dict  # "conductivity fits" (and "interpolated conductivity"): standard uncertainty of q, W/m^2
    provenance: dict  # draws, seed, unphysical_draws, max_unphysical_share, inputs


def fit_spread(record: str, label: str, conductivity, conductivity_se, equilibrium_temperature, model: dict,
               draws, max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> FitSpread:
    """Spread of the heat flow from the conductivity fits, by Monte Carlo through ``propagate``.

    Each kept sensor's conductivity is drawn (normal, its fit's standard error)
    under the name ``<record>/<label>/conductivity fit/<sensor>``; an interval
    whose sensor was left out gets, besides, a normal offset with the spread
    of the kept conductivities (``.../interpolated conductivity/<sensor>``).
    The heat flow is regressed per draw (vectorized). A draw giving any
    interval a conductivity below ``CONDUCTIVITY_FLOOR`` is dropped and
    counted; above ``max_unphysical`` of the draws, the penetration is
    refused. ``probe-heat-flow`` and the survey's ``[sediment_probes]`` call
    this with the run's ``SharedDraws``, so one record, label and seed give
    the same draws in both.

    Parameters
    ----------
    record, label : str
        The record's file name and the penetration's label (name the streams).
    conductivity, conductivity_se : ndarray, shape (n_kept,)
        Fitted conductivities and their standard errors, W/(m K).
    equilibrium_temperature : ndarray, shape (n_kept,)
        K.
    model : dict
        ``PenetrationResult.spread_model``.
    draws : ventflux.plugin_api.SharedDraws
    max_unphysical : float or UnphysicalPolicy
    """
    from ventflux.plugin_api import normal

    k = np.asarray(conductivity, float)
    k_se = np.nan_to_num(np.asarray(conductivity_se, float))
    idx, W = list(model["kept"]), np.asarray(model["interpolation"], float)
    z_all = np.asarray(model["distance"], float) * np.cos(model["tilt"])
    names = model["sensors"]
    gap = [j for j in range(z_all.size) if j not in idx]
    base = f"{record}/{label}" if label else record
    n = draws.n_draws

    def per_sensor(what, rows, means, sds):
        if not rows:
            return np.zeros((0, n))
        values = [normal(Q_(m, "W/(m*K)"), Q_(sd, "W/(m*K)")) if sd > 0 else Q_(m, "W/(m*K)")
                  for m, sd in zip(means, sds)]
        return draws.draw_each([f"{base}/{what}/{names[j]}" for j in rows], values, "W/(m*K)").magnitude

    given = {"fit_conductivity": per_sensor("conductivity fit", idx, k, k_se)}
    if gap and model["gap_sd"] > 0:
        given["interpolation_offset"] = per_sensor("interpolated conductivity", gap, np.zeros(len(gap)),
                                                   [model["gap_sd"]] * len(gap))

    def intervals(args):
        fits = np.tensordot(W, np.asarray(args["fit_conductivity"], float), axes=1)
        interp = np.broadcast_to(np.tensordot(W, k, axes=1)[:, None], fits.shape).copy()
        if "interpolation_offset" in args:
            interp[gap] += np.asarray(args["interpolation_offset"], float)
        return fits, interp

    def physical(args):
        fits, interp = intervals(args)
        return np.all(fits >= CONDUCTIVITY_FLOOR, axis=0) & np.all(interp >= CONDUCTIVITY_FLOOR, axis=0)

    def estimator(**args):
        fits, interp = intervals(args)
        T = np.asarray(equilibrium_temperature, float)
        q_fits, *_ = heat_flow_regression(thermal_resistance(z_all, fits)[idx], T)
        out = {"conductivity fits": float(np.std(q_fits, ddof=1))}
        if "interpolation_offset" in args:
            q_gap, *_ = heat_flow_regression(thermal_resistance(z_all, interp)[idx], T)
            out["interpolated conductivity"] = float(np.std(q_gap, ddof=1))
        return out

    prop = propagate(estimator, {}, names={k: f"{base}/{k.replace('_', ' ')}" for k in given}, draws=draws,
                     physical=physical, max_unphysical=max_unphysical, drawn=given,
                     labels={k: f"{base}: {k.replace('_', ' ')} draws" for k in given})
    return FitSpread(parts=prop.result, provenance=prop.provenance())


def respread(res: PenetrationResult, draws, max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> PenetrationResult:
    """The penetration with its conductivity-fit parts drawn again with the run's ``draws`` (a survey's seed)."""
    if not res.spread_model:
        return res
    spread = fit_spread(Path(res.record).name, res.label, res.conductivity, res.conductivity_se,
                        res.equilibrium_temperature, res.spread_model, draws, max_unphysical)
    parts = {**res.uncertainty_parts, **spread.parts}
    total = float(np.sqrt(sum(v**2 for v in parts.values())))
    return replace(res, uncertainty_parts=parts, heat_flow_uncertainty=total, monte_carlo=spread.provenance)


def result_row(res: PenetrationResult) -> dict:
    """One table row per penetration (units in the keys)."""
    parts = {f"heat_flow_u_{k.replace(' ', '_')} [mW/m^2]": 1e3 * v for k, v in res.uncertainty_parts.items()}
    return {"record": Path(res.record).name, "method": res.method, "sensors": int(res.depth.size),
            "heat_flow [mW/m^2]": 1e3 * res.heat_flow, "heat_flow_se [mW/m^2]": 1e3 * res.heat_flow_se,
            "heat_flow_uncertainty [mW/m^2]": 1e3 * res.heat_flow_uncertainty, **parts,
            "mean_conductivity [W/(m*K)]": float(np.mean(res.conductivity)),
            "intercept_temperature [degC]": res.intercept_temperature - 273.15,
            "max_abs_residual [mK]": 1e3 * float(np.max(np.abs(res.residual))),
            "max_friction_misfit [mK]": 1e3 * max(f.misfit_rms for f in res.friction),
            "excluded_sensors": "; ".join(f"{k}: {v}" for k, v in res.excluded.items()),
            "penetration": res.label, "flags": "; ".join(res.flags),
            "unphysical_draws": int(res.monte_carlo.get("unphysical_draws", 0))}


__all__ = ["ProbeConstants", "ProbeRecord", "PenetrationResult", "reduce_penetration", "reduce_record",
           "reduce_with_metadata", "read_probe_record", "read_metadata", "fit_frictional_decay", "fit_heat_pulse",
           "thermal_resistance", "heat_flow_regression", "frictional_model", "pulse_model", "check_timing",
           "result_row", "fit_spread", "respread", "CONDUCTIVITY_FLOOR",
           "sensor_noise", "screen_sensors", "line_source_model_error", "probe_from_inputs",
           "standard_deviation", "METHODS"]
