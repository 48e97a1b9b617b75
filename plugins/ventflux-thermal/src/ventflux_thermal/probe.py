"""Sediment heat-flow probe reduction: equilibrium temperatures, in-situ conductivity, heat flow.

A multi-sensor probe pushed into sediment records, for each thermistor, the
decay of the frictional heating of penetration and, some minutes later, the
decay of a calibrated heat pulse of energy ``Q`` per unit length. The
reduction, per penetration:

1. *Equilibrium temperature* of each sensor from the frictional decay: a fit
   of ``T(t) = T_eq + A·F(α, κ(t − t_pen + δ)/a²)`` (the instantaneously
   heated cylinder, ``ventflux_thermal.decay``; the origin shift ``δ`` absorbs
   the finite duration of the heating; common practice, no source) or, as the documented simpler
   option, the late-time line-source asymptote ``T = T_eq + B/(t − t_pen)``.
2. *Conductivity* of each sensor's interval from the heat-pulse decay, after
   subtracting the continuing frictional decay extrapolated from step 1:
   ``ΔT(t) = Q/(π a² ρ_p c_p) · F(α, κ(t − t_hp)/a²)`` fitted for ``k`` (with
   ``κ = k/ρc``), or ``ΔT = Q/(4πk (t − t_hp))`` late. Steps 1 and 2 are
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
instantaneous) and ends 2 s before the heat pulse; the line-source option
uses only the second half of each record, where ``t ≫ a²/κ``. The pulse fit
starts 10 s after the pulse for the cylinder model.

References
----------
.. [1] Carslaw, H. S. and Jaeger, J. C. (1959). Conduction of Heat in Solids,
   2nd ed., §10.3 and §13.7.
.. [2] Hartmann, A. and Villinger, H. (2002). Inversion of marine heat flow
   measurements by expansion of the temperature decay function. Geophys. J.
   Int. 148, 628–636.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy import optimize
from ventflux.errors import Collector, InputError
from ventflux.tables import read_quantity_table
from ventflux.units import Q_, parse_quantity

from .decay import cylinder_decay
from .fitting import first_parameter_se, require_increasing

METHODS = ("cylinder", "line-source")


@dataclass(frozen=True)
class ProbeConstants:
    """Instrument and sediment constants of the reduction (SI).

    Defaults (common practice, no source): a sensor tube of 4 mm radius;
    probe and sediment volumetric heat capacities both 3.4 MJ/(m³·K), so
    α = 2; the starting conductivity 1.0 W/(m·K) lies in the usual range of
    marine sediment, 0.8–1.2 W/(m·K).
    """

    radius: float = 0.004  # m
    probe_heat_capacity: float = 3.4e6  # J/(m^3 K), ρ_p c_p
    sediment_heat_capacity: float = 3.4e6  # J/(m^3 K), ρc
    start_conductivity: float = 1.0  # W/(m K)

    @property
    def alpha(self) -> float:
        return 2.0 * self.sediment_heat_capacity / self.probe_heat_capacity


@dataclass
class ProbeRecord:
    """A penetration's record: time (s), temperatures (K, sensors × samples), metadata."""

    path: Path
    time: np.ndarray
    temperature: np.ndarray
    sensors: tuple
    lines: np.ndarray
    meta: dict = field(default_factory=dict)


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


@dataclass
class PenetrationResult:
    """Result of one penetration's reduction (SI floats; quantities via the accessors)."""

    record: str
    method: str
    depth: np.ndarray  # m, tilt-corrected
    conductivity: np.ndarray  # W/(m K)
    conductivity_se: np.ndarray
    equilibrium_temperature: np.ndarray  # K
    resistance: np.ndarray  # m^2 K / W
    heat_flow: float  # W/m^2
    heat_flow_se: float  # regression standard error
    heat_flow_uncertainty: float  # regression SE combined with the conductivities' uncertainty
    intercept_temperature: float  # K
    residual: np.ndarray  # K
    friction: list
    pulse: list
    penetration_time: float = float("nan")  # s
    heat_pulse_time: float | None = None  # s
    heat_pulse_energy: float | None = None  # J/m
    record_data: ProbeRecord | None = None

    def as_dict(self) -> dict:
        out = {"record": self.record, "method": self.method,
               "heat_flow_mW_m2": 1e3 * self.heat_flow, "heat_flow_se_mW_m2": 1e3 * self.heat_flow_se,
               "heat_flow_uncertainty_mW_m2": 1e3 * self.heat_flow_uncertainty,
               "intercept_temperature_degC": self.intercept_temperature - 273.15, "sensors": []}
        for i in range(self.depth.size):
            f, p = self.friction[i], self.pulse[i]
            out["sensors"].append({
                "depth_m": self.depth[i], "equilibrium_temperature_degC": self.equilibrium_temperature[i] - 273.15,
                "equilibrium_temperature_se_mK": 1e3 * f.equilibrium_se,
                "conductivity_W_m_K": self.conductivity[i], "conductivity_se_W_m_K": self.conductivity_se[i],
                "thermal_resistance_m2K_W": self.resistance[i], "residual_mK": 1e3 * self.residual[i],
                "friction_window_s": list(f.window), "friction_misfit_mK": 1e3 * f.misfit_rms,
                "pulse_window_s": list(p.window) if p else None,
                "pulse_misfit_mK": 1e3 * p.misfit_rms if p else None})
        return out


# --------------------------------------------------------------------------- reading
_META = re.compile(r"^\s*#\s*([A-Za-z_][A-Za-z0-9_ ]*?)\s*(?:\[(.*?)\])?\s*[:=]\s*(.+?)\s*$")
_META_KEYS = {"penetration_time": "time", "heat_pulse_time": "time", "heat_pulse_energy": "energy per length",
              "tilt": "angle", "sensor_depths": "length"}


def read_metadata(path) -> dict:
    """Metadata from ``# key [unit]: value`` comment lines at the head of a record.

    Keys: ``penetration_time``, ``heat_pulse_time``, ``heat_pulse_energy``
    (J/m), ``tilt`` (deg), ``sensor_depths`` (comma-separated, one unit).
    """
    out = {}
    try:
        lines = list(_head_lines(path))
    except UnicodeDecodeError as e:  # a non-UTF-8 byte in the header: one line, not a traceback
        raise InputError("file", str(path), f"a UTF-8 text record (byte 0x{e.object[e.start]:02x} at offset {e.start} "
                         "is not UTF-8)", where=str(path)) from None
    if True:
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
                if key == "sensor_depths":
                    out[key] = Q_([float(v) for v in value.split(",")], unit or "m")
                elif key == "tilt":
                    out[key] = Q_(float(value), unit or "degree")
                else:
                    out[key] = parse_quantity(f"{value} {unit or ''}".strip(), dim, key)
            except (ValueError, InputError):
                raise InputError(key, value, f"a number with a {dim} unit", where=where) from None
    return out


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


def read_probe_record(path, n_sensors: int | None = None, sensor_columns=None) -> ProbeRecord:
    """Read a probe record: ``time [s]`` and sensor columns ``T1 [degC]`` … ``TN [degC]``.

    Raises ``InputError`` naming the file and line for a missing sensor
    column, a non-numeric cell, or a time that does not increase.
    """
    path = Path(path)
    meta = read_metadata(path) if path.is_file() else {}
    if sensor_columns is None:
        if n_sensors is None:
            if "sensor_depths" not in meta:
                raise InputError("sensor depths", "(missing)", "sensor depths (option or '# sensor_depths [m]: ...' "
                                 "line in the record)", where=str(path))
            n_sensors = len(meta["sensor_depths"])
        sensor_columns = [f"T{i + 1}" for i in range(n_sensors)]
        found = _sensor_columns_in_header(path)
        if len(found) > n_sensors:  # fewer columns than depths: the table reader names the missing one
            raise InputError("sensor depths", f"{n_sensors} depths",
                             f"one depth per sensor column of the record ({len(found)}: {', '.join(found)})",
                             where=str(path))
    cols = {"time": "time", **{c: "temperature" for c in sensor_columns}}
    tbl = read_quantity_table(path, cols)
    t = tbl["time"].to("s").magnitude
    require_increasing(t, tbl.lines, path, "time", "s")
    T = np.vstack([tbl[c].to("K").magnitude for c in sensor_columns])
    return ProbeRecord(path=path, time=t, temperature=T, sensors=tuple(sensor_columns), lines=tbl.lines, meta=meta)


# --------------------------------------------------------------------------- checks
def check_timing(rec: ProbeRecord, penetration_time: float, heat_pulse_time: float | None, min_decay=60.0):
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
        if not (penetration_time + min_decay <= heat_pulse_time <= t1 - min_decay):
            c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                             f"a time in the record at least {min_decay:g} s after penetration and {min_decay:g} s "
                             f"before the end ({penetration_time + min_decay:g} to {t1 - min_decay:g} s)", where=where))
        else:
            before = rec.temperature[:, (rec.time >= heat_pulse_time - 10) & (rec.time < heat_pulse_time)]
            after = rec.temperature[:, (rec.time > heat_pulse_time) & (rec.time <= heat_pulse_time + 30)]
            if before.shape[1] == 0 or after.shape[1] == 0:
                c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                                 "a time with samples in the 10 s before and 30 s after it", where=where))
            else:
                rise = after.max(axis=1) - before.mean(axis=1)
                if not np.any(rise > 0.05):  # 50 mK: far above thermistor noise (common practice, no source)
                    c.add(InputError("heat pulse time", f"{heat_pulse_time:g} s",
                                     f"the time of a heat pulse in the record (largest rise within 30 s: "
                                     f"{1e3 * rise.max():.3g} mK; a pulse raises the sensors by > 50 mK)",
                                     where=where))
    c.raise_if_any()


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
        One sensor's record, s and K.
    penetration_time, end_time : float
        Origin of the decay and end of the window (the heat pulse), s.
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
    span = end_time - penetration_time
    if start is None:
        start = 0.5 * span if method == "line-source" else max(30.0, 0.1 * span)
    sel = (time >= penetration_time + start) & (time <= end_time)
    t = time[sel] - penetration_time
    y = temperature[sel]
    if t.size < 8:
        raise InputError("fitting window", f"{t.size} samples", "at least 8 samples in the frictional-decay window")
    window = (float(penetration_time + start), float(end_time))
    if method == "line-source":
        c0, c1, rms, se = _linear_fit(1.0 / t, y)
        return DecayFit(c0, c1, 0.0, window, rms, int(t.size), se)
    kappa = conductivity / probe.sediment_heat_capacity
    scale = kappa / probe.radius**2

    def solve(delta):
        F = cylinder_decay(probe.alpha, (t + delta) * scale)
        return _linear_fit(F, y)

    lo = -0.9 * t[0]
    # origin shift searched from just after the heating to a few window starts later (a choice made here)
    res = optimize.minimize_scalar(lambda d: solve(d)[2], bounds=(lo, 3.0 * t[0] + 60.0), method="bounded",
                                   options={"xatol": 1e-3})
    c0, c1, rms, se = solve(res.x)
    return DecayFit(float(c0), float(c1), float(res.x), window, rms, int(t.size), se)


def frictional_model(fit: DecayFit, time, penetration_time, conductivity, probe: ProbeConstants, method):
    """The fitted frictional decay at ``time`` (K), for extrapolation under the heat pulse."""
    t = np.asarray(time, float) - penetration_time
    if method == "line-source":
        return fit.equilibrium_temperature + fit.amplitude / t
    tau = (t + fit.origin_shift) * conductivity / probe.sediment_heat_capacity / probe.radius**2
    return fit.equilibrium_temperature + fit.amplitude * cylinder_decay(probe.alpha, tau)


def fit_heat_pulse(time, excess, pulse_time, energy, probe: ProbeConstants, method="cylinder", start=None,
                   start_conductivity=None) -> PulseFit:
    """Conductivity from one sensor's heat-pulse decay (excess over the frictional background, K).

    ``cylinder``: ``ΔT = c + Q/(π a² ρ_p c_p) · F(α, k (t − t_hp) / (ρc a²))``
    fitted for ``k`` and a small offset ``c``; ``line-source``: ``ΔT = c + Q/(4πk (t − t_hp))``
    over the late half of the pulse record, ``k`` from the slope.
    """
    span = time[-1] - pulse_time
    if start is None:
        start = 0.5 * span if method == "line-source" else 10.0
    sel = time >= pulse_time + start
    t = time[sel] - pulse_time
    y = excess[sel]
    if t.size < 8:
        raise InputError("fitting window", f"{t.size} samples", "at least 8 samples in the heat-pulse window")
    window = (float(pulse_time + start), float(time[-1]))
    if method == "line-source":
        X = np.column_stack([np.ones_like(t), 1.0 / t])
        coef, *_ = np.linalg.lstsq(X, y, rcond=None)
        r = y - X @ coef
        s2 = float(r @ r) / max(t.size - 2, 1)
        se_slope = float(np.sqrt(s2 * np.linalg.inv(X.T @ X)[1, 1]))
        if not coef[1] > 0:
            raise InputError("heat pulse", "no decay", "a heat pulse whose excess decays as 1/t")
        k = energy / (4 * np.pi * coef[1])
        return PulseFit(float(k), float(k * se_slope / coef[1]), window, float(np.sqrt(np.mean(r * r))), int(t.size),
                        float(coef[0]))
    V0 = energy / (np.pi * probe.radius**2 * probe.probe_heat_capacity)
    a2rc = probe.radius**2 * probe.sediment_heat_capacity

    def resid(p):
        return p[1] + V0 * cylinder_decay(probe.alpha, t * p[0] / a2rc) - y

    k0 = start_conductivity or probe.start_conductivity
    # k searched over 0.05–10 W/(m K), far wider than any sediment; offset within ±5 K (choices made here)
    sol = optimize.least_squares(resid, [k0, 0.0], bounds=([0.05, -5.0], [10.0, 5.0]), x_scale=[0.1, 0.01])
    r = sol.fun
    return PulseFit(float(sol.x[0]), first_parameter_se(sol), window, float(np.sqrt(np.mean(r * r))), int(t.size),
                    float(sol.x[1]))


def pulse_model(fit: PulseFit, time, pulse_time, energy, probe: ProbeConstants, method):
    """The fitted heat-pulse excess at ``time`` (K), over the frictional background."""
    t = np.asarray(time, float) - pulse_time
    if method == "line-source":
        return fit.offset + energy / (4 * np.pi * fit.conductivity * t)
    V0 = energy / (np.pi * probe.radius**2 * probe.probe_heat_capacity)
    return fit.offset + V0 * cylinder_decay(probe.alpha, t * fit.conductivity / (probe.radius**2
                                                                               * probe.sediment_heat_capacity))


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
    if isinstance(value, str):
        value = parse_quantity(value, dim, field)
    return float(value.to(unit).magnitude) if np.ndim(value.magnitude) == 0 else value.to(unit).magnitude


def reduce_penetration(record_path, sensor_depths=None, *, penetration_time=None, heat_pulse_time=None,
                       heat_pulse_energy=None, tilt=None, conductivity=None, method="cylinder",
                       probe: ProbeConstants | None = None, sensor_columns=None, draws=2000, seed=20_261_202,
                       keep_record=False) -> PenetrationResult:
    """Reduce one probe penetration to heat flow with its standard error.

    Parameters
    ----------
    record_path : path-like
        CSV with ``time [s]`` and ``T1 [degC]`` … ``TN [degC]``; metadata
        missing from the arguments is read from ``# key [unit]: value`` lines
        at its head (see ``read_metadata``).
    sensor_depths : pint.Quantity, optional
        Distances of the sensors along the probe below the seafloor, in order.
    penetration_time, heat_pulse_time : pint.Quantity, optional
        Times on the record's clock. Without a heat pulse, ``conductivity``
        must be given.
    heat_pulse_energy : pint.Quantity, optional
        Energy per unit length of the pulse (J/m).
    tilt : pint.Quantity, optional
        Probe tilt from vertical (default 0).
    conductivity : pint.Quantity, optional
        Known conductivity per sensor interval (skips the heat pulse).
    method : {"cylinder", "line-source"}
        Decay model for both fits.
    probe : ProbeConstants, optional
    draws, seed : int
        Monte Carlo over the conductivities for ``heat_flow_uncertainty``.

    Returns
    -------
    PenetrationResult
        ``heat_flow`` and ``heat_flow_se`` in W/m², per-sensor results.

    Raises
    ------
    InputError
        Missing sensor column, non-monotonic time, non-numeric cells (with the
        line), a penetration or pulse time the record does not contain.
    """
    if method not in METHODS:
        raise InputError("method", method, "one of " + ", ".join(METHODS))
    probe = probe or ProbeConstants()
    path = Path(record_path)
    meta = read_metadata(path) if path.is_file() else {}
    depths = sensor_depths if sensor_depths is not None else meta.get("sensor_depths")
    if depths is None and sensor_columns is None:
        raise InputError("sensor depths", "(missing)", "sensor depths (argument or '# sensor_depths [m]: ...' line)",
                         where=str(path))
    s = np.atleast_1d(_si(depths, "m", "length", "sensor depths"))
    rec = read_probe_record(path, n_sensors=s.size, sensor_columns=sensor_columns)
    if s.size != len(rec.sensors):
        raise InputError("sensor depths", f"{s.size} depths", f"one depth per sensor column ({len(rec.sensors)})")
    if np.any(np.diff(s) <= 0) or s[0] < 0:
        raise InputError("sensor depths", ", ".join(f"{v:g}" for v in s), "depths ≥ 0 m increasing down the probe")
    tilt_v = _si(tilt if tilt is not None else meta.get("tilt", Q_(0.0, "degree")), "radian", "angle", "tilt")
    if not 0 <= tilt_v < np.deg2rad(60):
        raise InputError("tilt", f"{np.rad2deg(tilt_v):g} deg", "a tilt from vertical of 0 to 60 deg")
    z = s * np.cos(tilt_v)
    t_pen = _si(penetration_time if penetration_time is not None else meta.get("penetration_time"), "s", "time",
                "penetration time")
    if t_pen is None:
        raise InputError("penetration time", "(missing)", "the penetration time (option or record header)",
                         where=str(path))
    t_hp = _si(heat_pulse_time if heat_pulse_time is not None else meta.get("heat_pulse_time"), "s", "time",
               "heat pulse time")
    energy = _si(heat_pulse_energy if heat_pulse_energy is not None else meta.get("heat_pulse_energy"), "J/m",
                 "energy per length", "heat pulse energy")
    known_k = None
    if conductivity is not None:
        kv = np.atleast_1d(_si(conductivity, "W/(m*K)", "thermal conductivity", "conductivity")).astype(float)
        if kv.size not in (1, s.size):
            raise InputError("conductivity", f"{kv.size} values", f"one conductivity, or one per sensor ({s.size})",
                             where=str(path))
        if not np.all(kv > 0):
            raise InputError("conductivity", f"{kv[~(kv > 0)][0]:g} W/(m K)", "a thermal conductivity > 0 W/(m K)",
                             where=str(path))
        known_k = np.broadcast_to(kv, s.shape).copy()
    if known_k is None and (t_hp is None or energy is None):
        raise InputError("heat pulse", "(missing)", "a heat pulse time and energy per length, or known conductivities",
                         where=str(path))
    if energy is not None and not energy > 0:
        raise InputError("heat pulse energy", f"{energy:g} J/m", "an energy per unit length > 0 J/m")
    use_pulse = known_k is None
    check_timing(rec, t_pen, t_hp if use_pulse else None)
    end = (t_hp - 2.0) if (t_hp is not None and t_hp < rec.time[-1]) else rec.time[-1]
    n = s.size
    k = known_k.copy() if known_k is not None else np.full(n, probe.start_conductivity)
    k_se = np.zeros(n)
    fr, pu = [None] * n, [None] * n
    for _ in range(2 if use_pulse else 1):  # sequential joint inversion: friction needs κ, pulse needs background
        for i in range(n):  # a handful of sensors; each fit is vectorized over its samples
            fr[i] = fit_frictional_decay(rec.time, rec.temperature[i], t_pen, end, k[i], probe, method)
            if use_pulse:
                after = rec.time > t_hp
                bg = frictional_model(fr[i], rec.time[after], t_pen, k[i], probe, method)
                pu[i] = fit_heat_pulse(rec.time[after], rec.temperature[i][after] - bg, t_hp, energy, probe, method,
                                       start_conductivity=k[i])
        if use_pulse:
            k = np.array([p.conductivity for p in pu])
            k_se = np.array([p.conductivity_se for p in pu])
    Teq = np.array([f.equilibrium_temperature for f in fr])
    R = thermal_resistance(z, k)
    q, T0, se, resid = heat_flow_regression(R, Teq)
    # Standard uncertainty: the regression's standard error (the scatter of T_eq about the line) combined with
    # the spread of the slope when the conductivities are drawn from their fits (vectorized over draws).
    q_unc = float("nan")
    if n > 2:
        rng = np.random.default_rng(seed)
        # drawn conductivities held at the pulse fit's lower bound, 0.05 W/(m K)
        kd = np.clip(k[:, None] + np.nan_to_num(k_se)[:, None] * rng.standard_normal((n, draws)), 0.05, None)
        qd, *_ = heat_flow_regression(thermal_resistance(z, kd), Teq)
        q_unc = float(np.sqrt(np.var(qd, ddof=1) + se**2))
    return PenetrationResult(record=str(path), method=method, depth=z, conductivity=k, conductivity_se=k_se,
                             equilibrium_temperature=Teq, resistance=R, heat_flow=float(q), heat_flow_se=float(se),
                             heat_flow_uncertainty=q_unc, intercept_temperature=float(T0),
                             residual=np.asarray(resid, float).ravel(), friction=fr, pulse=pu,
                             penetration_time=float(t_pen), heat_pulse_time=t_hp if use_pulse else None,
                             heat_pulse_energy=energy if use_pulse else None,
                             record_data=rec if keep_record else None)


def result_row(res: PenetrationResult) -> dict:
    """One table row per penetration (units in the keys)."""
    return {"record": Path(res.record).name, "method": res.method, "sensors": int(res.depth.size),
            "heat_flow [mW/m^2]": 1e3 * res.heat_flow, "heat_flow_se [mW/m^2]": 1e3 * res.heat_flow_se,
            "heat_flow_uncertainty [mW/m^2]": 1e3 * res.heat_flow_uncertainty,
            "mean_conductivity [W/(m*K)]": float(np.mean(res.conductivity)),
            "intercept_temperature [degC]": res.intercept_temperature - 273.15,
            "max_abs_residual [mK]": 1e3 * float(np.max(np.abs(res.residual))),
            "max_friction_misfit [mK]": 1e3 * max(f.misfit_rms for f in res.friction)}


__all__ = ["ProbeConstants", "ProbeRecord", "PenetrationResult", "reduce_penetration", "read_probe_record",
           "read_metadata", "fit_frictional_decay", "fit_heat_pulse", "thermal_resistance", "heat_flow_regression",
           "frictional_model", "pulse_model", "check_timing", "result_row"]
