"""One item (a record or a clip) to heat-power draws at each of its time steps.

``estimate_item`` is the unit of work a Dask task runs. It is a deterministic function of the item's file,
its vent's settings and the input draws handed to it: the draws are made once for the whole series on the
client (``inputs.series_input_draws``), so an item gives the same numbers serially, on threads or on a
cluster, and a systematic error (a velocity model, a pixel scale, a logger's calibration) is the same draw for
every time step and does not average away over time.

Records are read in chunks of samples and reduced to one value per averaging window per draw; no per-sample
Python loop. Heat is the core's enthalpy difference (``ventflux.orifice.orifice_discharge``,
``ventflux.diffuse.diffuse_discharge``); nothing here redefines it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ventflux.plugin_api import Q_

#: Values (samples × draws) evaluated at once: bounds a worker's memory whatever the record's length and the
#: number of draws (the property layer holds a few dozen temporaries of this size; a choice made here).
CHUNK_VALUES = 200_000
#: A record whose rows are unreadable or non-finite beyond this fraction fails (choice, stated in the docs).
MAX_BAD_ROWS = 0.05


@dataclass
class ItemResult:
    """What one item gives: draws of heat power [W] at each time step, or the reason it failed."""

    index: int
    vent: str
    method: str
    times: np.ndarray  # datetime64[ns], shape (n_steps,)
    power_draws: np.ndarray  # float32 [W], shape (n_steps, n_draws); NaN where a draw is unphysical
    unphysical: np.ndarray  # int, draws dropped per step
    flags: list[str] = field(default_factory=list)  # quality notes, one line each
    error: str | None = None
    file: str = ""  # the item's file name, for tables and messages

    @property
    def ok(self) -> bool:
        return self.error is None


class ItemFailure(Exception):
    """An item that cannot be estimated: listed with its reason, never silently dropped."""


def _record(path, columns_like):
    """Time [datetime64 ns] and the numeric columns whose header matches ``columns_like`` (unit in header)."""
    import pandas as pd

    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, encoding="utf-8")
    except UnicodeDecodeError:
        raise ItemFailure("not a UTF-8 CSV file") from None
    except (pd.errors.ParserError, pd.errors.EmptyDataError, OSError) as err:
        raise ItemFailure(f"unreadable CSV ({str(err).splitlines()[0]})") from None
    if "time" not in frame.columns:
        raise ItemFailure("no 'time' column (ISO 8601 timestamps)")
    cols = [c for c in frame.columns if c != "time" and columns_like(c)]
    if not cols:
        raise ItemFailure("no data column with the expected unit in its header")
    times = pd.to_datetime(frame["time"], errors="coerce", utc=True)
    values = frame[cols].apply(pd.to_numeric, errors="coerce").to_numpy(float)
    bad = times.isna().to_numpy() | ~np.isfinite(values).any(axis=1)
    flags = []
    if bad.mean() > MAX_BAD_ROWS:
        raise ItemFailure(f"{int(bad.sum())} of {len(bad)} rows without a valid time or value "
                          f"(more than {MAX_BAD_ROWS:.0%})")
    if bad.any():
        flags.append(f"{int(bad.sum())} rows without a valid time or value left out")
    t = times[~bad].dt.tz_localize(None).to_numpy("datetime64[ns]")
    v = values[~bad]
    order = np.argsort(t, kind="stable")
    if np.any(np.diff(order) != 1):
        flags.append("rows were not in time order; sorted")
    t, v = t[order], v[order]
    dup = np.r_[False, t[1:] == t[:-1]]
    if dup.any():
        raise ItemFailure(f"{int(dup.sum())} repeated timestamps")
    if len(t) < 2:
        raise ItemFailure("fewer than two valid samples")
    return t, v, cols, flags


def _windows(t, interval_s):
    """Window index of each sample and the window's centre time (windows aligned on multiples of the interval)."""
    ns = np.int64(round(interval_s * 1e9))
    k = t.astype("int64") // ns
    starts = np.flatnonzero(np.r_[True, k[1:] != k[:-1]])
    centres = (k[starts] * ns + ns // 2).astype("datetime64[ns]")
    return starts, centres


def _window_means(values, starts):
    """Mean over each window of ``values`` (draws, samples) → (draws, windows), ignoring NaN."""
    finite = np.isfinite(values)
    sums = np.add.reduceat(np.where(finite, values, 0.0), starts, axis=1)
    counts = np.add.reduceat(finite, starts, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return sums / counts, counts


def _chunked(n_samples, starts, n_draws):
    """Chunk boundaries on window starts, each about ``CHUNK_VALUES / n_draws`` samples (windows never split)."""
    size = max(1, CHUNK_VALUES // max(int(n_draws), 1))
    edges = [0]
    for s in starts[1:]:
        if s - edges[-1] >= size:
            edges.append(int(s))
    edges.append(n_samples)
    return list(zip(edges[:-1], edges[1:]))


def _orifice_power(T_K, velocity, diameter, site):
    """Heat power [W] of an orifice for exit temperatures ``T_K`` (draws × samples); NaN where unphysical."""
    from ventflux.plugin_api import orifice_discharge
    from ventflux.plugin_api import fluid_model

    model = fluid_model()
    Ta = site["ambient_temperature_K"]
    p = site["pressure_Pa"]
    u = np.broadcast_to(velocity, T_K.shape)
    d = np.broadcast_to(diameter, T_K.shape)
    ok = (T_K > Ta) & (u > 0) & (d > 0) & np.asarray(model.valid(T_K, np.full(T_K.shape, p)), bool)
    safe_T = np.where(ok, T_K, Ta + 10.0)
    res = orifice_discharge(Q_(safe_T, "K"), Q_(np.where(ok, u, 1.0), "m/s"), Q_(np.where(ok, d, 1.0), "m"),
                            pressure=Q_(p, "Pa"), ambient_temperature=Q_(Ta, "K"),
                            ambient_salinity=site["ambient_salinity"])
    return np.where(ok, res.heat_power.to("W").magnitude, np.nan)


def _diffuse_power(anomaly_K, area, fraction, velocity, site):
    from ventflux.plugin_api import diffuse_discharge

    shape = anomaly_K.shape
    A, f, w = (np.broadcast_to(x, shape) for x in (area, fraction, velocity))
    ok = (anomaly_K > 0) & (A > 0) & (f > 0) & (f <= 1) & (w > 0)
    res = diffuse_discharge(Q_(np.where(ok, A, 1.0), "m^2"), np.where(ok, f, 0.5),
                            Q_(np.where(ok, anomaly_K, 1.0), "K"), Q_(np.where(ok, w, 1e-3), "m/s"),
                            Q_(site["ambient_temperature_K"], "K"), site["ambient_salinity"],
                            Q_(site["pressure_Pa"], "Pa"), check=False)
    return np.where(ok, res.heat_power.to("W").magnitude, np.nan)


def _reduce_record(t, per_sample_power, interval_s, n_draws):
    """Window means of power for each draw, evaluated chunk by chunk; NaN draws (unphysical) counted per window."""
    starts, centres = _windows(t, interval_s)
    out = np.empty((len(starts), n_draws), np.float32)
    dropped = np.zeros(len(starts), int)
    w0 = 0
    for lo, hi in _chunked(len(t), starts, n_draws):
        local = starts[(starts >= lo) & (starts < hi)] - lo
        power = per_sample_power(lo, hi)  # (draws, samples)
        # A draw is unphysical for a window if any of its samples is: the window mean would be biased otherwise.
        bad = np.logical_or.reduceat(~np.isfinite(power), local, axis=1)
        means, _ = _window_means(power, local)
        means[bad] = np.nan
        w1 = w0 + len(local)
        out[w0:w1] = means.T
        dropped[w0:w1] = bad.sum(axis=0)
        w0 = w1
    return centres, out, dropped


def estimate_item(item, vent, site: dict, draws: dict, n_draws: int, interval_s: float,
                  max_unphysical: float, seed: int = 20261202) -> ItemResult:
    """Heat-power draws of one item at each of its time steps (see the module docstring).

    Parameters
    ----------
    item : manifest.Item
    vent : manifest.VentSettings
    site : dict
        ``pressure_Pa`` (absolute), ``ambient_temperature_K``, ``ambient_salinity`` (practical), ``latitude``.
    draws : dict
        The vent's inputs by key, each an SI magnitude: an array of ``n_draws`` or a scalar (exact).
    n_draws : int
    interval_s : float
        Averaging window of continuous records [s].
    max_unphysical : float
        A time step whose unphysical draws exceed this fraction is set to NaN and flagged.
    seed : int
        The run's seed: inputs a method draws for itself by name (the video method's) use it.
    """
    try:
        if item.method == "vent-temperature":
            times, power, dropped, flags = _vent_temperature(item, draws, site, n_draws, interval_s)
        elif item.method == "array-anomaly":
            times, power, dropped, flags = _array_anomaly(item, draws, site, n_draws, interval_s)
        else:
            times, power, dropped, flags = _video(item, vent, draws, site, n_draws, seed)
    except ItemFailure as err:
        return ItemResult(item.index, item.vent, item.method, np.array([], "datetime64[ns]"),
                          np.empty((0, n_draws), np.float32), np.array([], int), [], str(err))
    refused = dropped > max_unphysical * n_draws
    if refused.any():
        power[refused] = np.nan
        flags.append(f"{int(refused.sum())} time steps with more than {max_unphysical:.0%} unphysical draws "
                     "left empty")
    return ItemResult(item.index, item.vent, item.method, times, power, dropped, flags)


def _column(v, n):
    """An input's draws as a column (draws, 1) for broadcasting against samples."""
    return np.asarray(v, float).reshape(-1, 1) if np.ndim(v) else np.full((n, 1), float(v))


def _vent_temperature(item, draws, site, n, interval_s):
    t, v, cols, flags = _record(item.path, lambda c: c.endswith(("[degC]", "[K]")))
    if len(cols) > 1:
        flags.append(f"{len(cols)} temperature columns: their mean is used")
    offset_K = 273.15 if cols[0].endswith("[degC]") else 0.0
    T = np.nanmean(v, axis=1) + offset_K
    u, d = _column(draws["velocity"], n), _column(draws["diameter"], n)
    dT = _column(draws.get("temperature_offset", 0.0), n)
    times, power, dropped = _reduce_record(
        t, lambda lo, hi: _orifice_power(T[lo:hi][None, :] + dT, u, d, site), interval_s, n)
    return times, power, dropped, flags


def _array_anomaly(item, draws, site, n, interval_s):
    t, v, cols, flags = _record(item.path, lambda c: c.endswith(("[K]", "[delta_degC]")))
    dead = [c for c, ok in zip(cols, np.isfinite(v).mean(axis=0) >= 1 - MAX_BAD_ROWS, strict=True) if not ok]
    if dead:
        flags.append("sensors left out (missing data): " + ", ".join(dead))
        keep = [i for i, c in enumerate(cols) if c not in dead]
        if not keep:
            raise ItemFailure("no sensor with data")
        v = v[:, keep]
    anomaly = np.nanmean(v, axis=1)
    A, f, w = (_column(draws[k], n) for k in ("area", "active_fraction", "velocity"))
    times, power, dropped = _reduce_record(
        t, lambda lo, hi: _diffuse_power(np.broadcast_to(anomaly[lo:hi], (n, hi - lo)), A, f, w, site),
        interval_s, n)
    return times, power, dropped, flags


def _video(item, vent, draws, site, n, seed):
    """A clip: the video method's own draws (plume constant, line of sight, correlation, fit), times the scale.

    The video plugin's ``jet_draws`` draws its parts by name from a ``SharedDraws`` with the run's seed: each
    name seeds its own stream, so the plume constant and the tracer-to-velocity width ratio (one name for every
    vent) are the same draws in every task and process, while the fit and correlation errors are named per
    item. The pixel size is drawn on the client with the vent's other inputs; velocities and heights scale with
    it, so the buoyancy flux F = w³(z − z₀)/k³ scales as s⁴ and the exit velocity as s (exact for a uniform
    scale error).
    """
    try:
        from ventflux_video.jet import analyze_jet_clip
        from ventflux_video.propagation import jet_draws
    except ImportError:
        raise ItemFailure("the video methods need the ventflux-video plugin") from None
    from ventflux.plugin_api import SharedDraws
    from ventflux.plugin_api import InputError

    s = np.asarray(draws["pixel_size"], float)
    s_nom = float(np.median(s)) if np.ndim(s) else float(s)
    try:
        res = analyze_jet_clip(str(item.path), Q_(s_nom, "m"), vent.orifice_xy,
                               ambient_temperature=Q_(site["ambient_temperature_K"], "K"),
                               ambient_salinity=site["ambient_salinity"], pressure=Q_(site["pressure_Pa"], "Pa"),
                               latitude=site.get("latitude"))
        own = f"{vent.name}/{item.path.name}/video"
        jd = jet_draws(res, SharedDraws(n, seed), {"fit": f"{own}/fit", "correlation": f"{own}/correlation",
                                                   "scale": f"{own}/scale"})
    except InputError as err:
        raise ItemFailure(err.line()) from None
    except (OSError, ValueError, RuntimeError) as err:
        why = str(err).splitlines()[0] if str(err) else type(err).__name__
        raise ItemFailure(f"clip could not be analysed ({why})") from None
    ratio = np.broadcast_to(s / s_nom, (n,))
    duration_s = float(res.field.pairs) / float(res.frame_rate.to("1/s").magnitude)
    time = (item.start + np.timedelta64(int(duration_s / 2 * 1e9), "ns")).astype("datetime64[ns]")
    flags: list[str] = list(getattr(res, "flags", []) or [])
    if item.method == "video-exit-velocity":
        u = jd.exit_velocity.to("m/s").magnitude * ratio
        T = np.broadcast_to(draws["exit_temperature"], (n,)).astype(float)
        power = _orifice_power(T[:, None], u[:, None], _column(draws["diameter"], n), site)[:, 0]
    else:
        if jd.heat_power is None:
            raise ItemFailure("no heat power from the plume fit")
        power = jd.heat_power.to("W").magnitude * ratio**4
    dropped = np.array([int((~np.isfinite(power)).sum())])
    return np.array([time]), power.astype(np.float32)[None, :], dropped, flags
