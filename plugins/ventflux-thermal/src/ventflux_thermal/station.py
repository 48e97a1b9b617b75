"""Continuous station records: find each penetration in a logger's record and reduce it.

A heat-flow station is one logger record holding many penetrations: the
probe hangs in the water, is pushed into the sediment (frictional heating:
every sensor jumps up), fires its heat pulse (a second jump), and is pulled
out (every sensor drops back toward the water temperature), then moves on.

Detection (``find_penetrations``), on the median over the live sensors of the
temperature change across ``window`` seconds (5 s by default):

* a *rise* is a change above ``threshold`` (50 mK by default, far above
  thermistor noise; choices made here, common practice, no source); its time
  is the last sample before the steepest step of the rise;
* a *pull-out* is a drop below ``−threshold`` that is also steeper than three
  times the change over the preceding window, and not within 30 s of a rise:
  the decays inside the sediment slow down, a pull-out speeds the cooling up
  (choices made here);
* in the water a rise is a penetration; in the sediment the first rise is the
  heat pulse, a drop is the pull-out; a third rise means a pull-out was
  missed, and starts a new penetration (the previous one is reduced as
  "not pulled out" and named so).

Each penetration is reduced from its penetration to its pull-out
(``probe.reduce_record``). A penetration pulled out before its heat pulse,
or before 60 s of the pulse's decay, is listed with the reason it is
skipped (or, with known conductivities, reduced from its frictional decay
alone). Positions come from a navigation table (``time`` and ``x [m]``,
``y [m]``, or ``latitude [deg]``, ``longitude [deg]``), linearly
interpolated to the penetration's time; the distance along the transect is
summed from penetration to penetration, starting at the first.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ventflux.plugin_api import DEFAULT_DRAWS, DEFAULT_MAX_UNPHYSICAL, DEFAULT_SEED
from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_

from .constants import METHODS, ProbeConstants
from .probe import (
    _si,
    probe_from_inputs,
    read_metadata,
    reduce_record,
    standard_deviation,
)
from .records import ProbeRecord, parse_timestamps, read_record

#: Minimum decay after penetration, and after the pulse's end, for a reduction, s (as in ``probe.check_timing``).
MIN_DECAY = 60.0
EARTH_RADIUS = 6_371_008.8  # m, mean radius of the GRS 80 ellipsoid (Moritz 2000, Bull. Géod. 74, 128-133)


@dataclass(frozen=True)
class Penetration:
    """One penetration found in a station record (times on the record's clock, s)."""

    number: int
    start: float  # penetration
    pulse: float | None  # start of the heat pulse
    end: float  # pull-out, or the record's end
    pulled_out: bool

    @property
    def label(self) -> str:
        return f"P{self.number:02d}"


@dataclass
class StationResult:
    """Every penetration of a station: the reduced ones and the skipped ones with their reasons."""

    record: str
    penetrations: list  # Penetration
    results: list  # PenetrationResult, one per reduced penetration
    skipped: dict = field(default_factory=dict)  # label → reason
    positions: dict = field(default_factory=dict)  # label → (x, y) m or None
    distance: dict = field(default_factory=dict)  # label → along-transect distance, m
    times: dict = field(default_factory=dict)  # label → ISO 8601 time of penetration (when known)
    notes: list = field(default_factory=list)  # detection events not used, one line each
    record_data: ProbeRecord | None = None


def _rises_and_drops(t, T, window, threshold, guard):
    """Times of rises and of pull-out drops in the median sensor change (vectorized over the record)."""
    med = np.nanmedian(T, axis=0) if T.shape[0] > 1 else T[0]
    dt = float(np.median(np.diff(t)))
    w = max(int(round(window / dt)), 1)
    D = np.full(med.size, np.nan)
    D[:-w] = med[w:] - med[:-w]  # change over the next `window` seconds
    prev = np.full(med.size, np.nan)
    prev[w:] = D[:-w]
    d1 = np.diff(med, append=np.nan)
    up = D > threshold
    # a drop steeper than three times the preceding change (decays in the sediment slow down)
    down = (D < -threshold) & (D < 3.0 * np.minimum(np.nan_to_num(prev), 0.0))

    def groups(mask):
        idx = np.flatnonzero(mask)
        return np.split(idx, np.flatnonzero(np.diff(idx) > w) + 1) if idx.size else []

    rises, quiet = [], np.zeros(med.size, bool)
    for g in groups(up):
        lo, hi = g[0], min(g[-1] + w, med.size - 1)
        seg = d1[lo:hi]
        if np.isfinite(seg).any():
            rises.append(float(t[lo + int(np.nanargmax(seg))]))  # the sample before the steepest step
        quiet[lo:np.searchsorted(t, t[hi] + guard)] = True  # the fast start of a decay is no pull-out
    drops = []
    for g in groups(down & ~quiet):
        lo, hi = g[0], min(g[-1] + w, med.size - 1)
        seg = -d1[lo:hi]
        if np.isfinite(seg).any():
            drops.append(float(t[lo + int(np.nanargmax(seg))]))
    return rises, drops


def find_penetrations(time, temperature, window=5.0, threshold=0.05, guard=30.0):
    """Penetrations in a continuous record: (list of Penetration, list of notes on events not used).

    ``time`` in s (increasing), ``temperature`` in K, sensors × samples (NaN
    gaps allowed). Drops within ``guard`` seconds after a rise are the start
    of a decay, not a pull-out (30 s, a choice made here).
    """
    rises, drops = _rises_and_drops(np.asarray(time, float), np.asarray(temperature, float), window, threshold,
                                    guard)
    events = sorted([(ti, "rise") for ti in rises] + [(ti, "drop") for ti in drops])
    out: list[Penetration] = []
    notes: list[str] = []
    state, pulse = "water", None
    start: float | None = None
    for ti, kind in events:
        if state == "water":
            if kind == "rise":
                state, start, pulse = "sediment", ti, None
            continue
        assert start is not None  # in the sediment: set by the rise that entered it
        if kind == "rise":
            if pulse is None:
                pulse = ti
            else:  # a third rise: the pull-out was missed; close this penetration and start another
                notes.append(f"no pull-out seen between the heat pulse at {pulse:g} s and the rise at {ti:g} s")
                out.append(Penetration(len(out) + 1, start, pulse, ti - window, False))
                start, pulse = ti, None
            continue
        out.append(Penetration(len(out) + 1, start, pulse, ti, True))
        state = "water"
    if state == "sediment":
        assert start is not None  # as in the loop: the rise that entered the sediment set it
        out.append(Penetration(len(out) + 1, start, pulse, float(time[-1]), False))
    return out, notes


def read_navigation(path, start=None):
    """Navigation table: time (ISO 8601 or elapsed s) and x/y [m] or latitude/longitude [deg].

    Returns ``(time_s, x_m, y_m)`` with times on the station record's clock
    (seconds after ``start`` when the table has timestamps) and positions in
    metres (latitude/longitude projected locally on the sphere about the
    table's first point).
    """
    import csv

    from ventflux.plugin_api import parse_column_name

    path = Path(path)
    if not path.is_file():
        raise InputError("navigation", str(path), "an existing navigation CSV")
    with open(path, newline="", encoding="utf-8-sig") as fh:
        numbered = [(n, ln) for n, ln in enumerate(fh, 1) if ln.strip() and not ln.lstrip().startswith("#")]
    if len(numbered) < 3:
        raise InputError("navigation", str(path), "a header and at least two positions")
    header = [parse_column_name(c) for c in next(csv.reader([numbered[0][1]]))]
    names = [h[0] for h in header]
    rows = list(csv.reader([ln for _, ln in numbered[1:]]))
    lines = np.array([n for n, _ in numbered[1:]])
    where = f"{path}:{numbered[0][0]}"
    if "time" not in names:
        raise InputError("navigation column", "time", "a 'time' column (ISO 8601, or 'time [s]')", where=where)
    pairs = (("x", "y"), ("latitude", "longitude"))
    pair = next((p for p in pairs if all(c in names for c in p)), None)
    if pair is None:
        raise InputError("navigation columns", ", ".join(names), "'x [m]' and 'y [m]', or 'latitude [deg]' and "
                         "'longitude [deg]'", where=where)

    def col(name):
        i = names.index(name)
        try:
            return np.array([float(r[i]) for r in rows])
        except (ValueError, IndexError):
            k = next(j for j, r in enumerate(rows) if len(r) <= i or not _is_number(r[i]))
            raise InputError(f"navigation {name}", rows[k][i] if len(rows[k]) > i else "(missing)", "a number",
                             where=f"{path}:{lines[k]}") from None

    ti = names.index("time")
    if header[ti][1] is None:
        tt, first = parse_timestamps([r[ti] for r in rows], lines, str(path))
        if start is None:
            raise InputError("navigation", str(path), "elapsed times ('time [s]') for a record without timestamps",
                             where=where)
        tt = tt + (first - start).total_seconds()
    else:
        tt = Q_(col("time"), header[ti][1]).to("s").magnitude
    if np.any(np.diff(tt) <= 0):
        k = int(np.flatnonzero(np.diff(tt) <= 0)[0]) + 1
        raise InputError("navigation time", rows[k][ti], "times that increase down the file",
                         where=f"{path}:{lines[k]}")
    a, b = col(pair[0]), col(pair[1])
    if pair[0] == "latitude":  # local equirectangular projection: metres east (x) and north (y)
        lat0 = np.deg2rad(a[0])
        x = EARTH_RADIUS * np.cos(lat0) * np.deg2rad(b - b[0])
        y = EARTH_RADIUS * np.deg2rad(a - a[0])
        return tt, x, y
    return tt, a, b


def _is_number(text):
    try:
        float(text)
        return True
    except ValueError:
        return False


def reduce_station(record_path, sensor_depths=None, *, heat_pulse_energy=None, heat_pulse_duration=None, tilt=None,
                   conductivity=None, method="cylinder", probe: ProbeConstants | None = None,
                   exclude_sensors=(), navigation=None, window=5.0, threshold=0.05, draws=DEFAULT_DRAWS,
                   seed=DEFAULT_SEED, keep_record=False, max_unphysical=DEFAULT_MAX_UNPHYSICAL) -> StationResult:
    """Find and reduce every penetration of a continuous station record.

    Parameters
    ----------
    record_path : path-like
        CSV with ``time`` (ISO 8601) or ``time [s]`` and ``T1 [degC]`` …; the
        header may carry ``sensor_depths``, ``heat_pulse_energy``,
        ``heat_pulse_duration``, ``tilt``, the probe description and
        ``exclude_sensors`` as for a single penetration.
    sensor_depths, heat_pulse_energy, heat_pulse_duration, tilt, conductivity : pint.Quantity, optional
        As for ``probe.reduce_penetration`` (m, J/m, s, deg, W/(m K)).
    method : {"cylinder", "line-source"}
    probe : ProbeConstants, optional
    exclude_sensors : sequence of str
        Sensor columns to leave out of every penetration.
    navigation : path-like, optional
        Navigation table joined by time (see ``read_navigation``).
    window, threshold : float
        Detection window (s) and temperature change (K); see the module notes.

    Returns
    -------
    StationResult
    """
    if method not in METHODS:
        raise InputError("method", method, "one of " + ", ".join(METHODS))
    path = Path(record_path)
    meta = read_metadata(path) if path.is_file() else {}
    depths = sensor_depths if sensor_depths is not None else meta.get("sensor_depths")
    if depths is None:
        raise InputError("sensor depths", "(missing)", "sensor depths (argument or '# sensor_depths [m]: ...' line)",
                         where=str(path))
    s = np.atleast_1d(_si(depths, "m", "length", "sensor depths"))
    rec = read_record(path, [f"T{i + 1}" for i in range(s.size)], meta)
    probe = probe_from_inputs(probe, meta, {"heat_pulse_duration": heat_pulse_duration,
                                            "heat_pulse_energy": heat_pulse_energy})
    tilt_in = tilt if tilt is not None else meta.get("tilt", Q_(0.0, "degree"))
    tilt_v = _si(tilt_in, "radian", "angle", "tilt")
    if not 0 <= tilt_v < np.deg2rad(60):
        raise InputError("tilt", f"{np.rad2deg(tilt_v):g} deg", "a tilt from vertical of 0 to 60 deg",
                         where=str(path))
    known_k = None
    if conductivity is not None:
        known_k = np.broadcast_to(np.atleast_1d(_si(conductivity, "W/(m*K)", "thermal conductivity",
                                                    "conductivity")), s.shape).astype(float)
    exclude = tuple(meta.get("exclude_sensors", ())) + tuple(exclude_sensors or ())
    unknown = [e for e in exclude if e not in rec.sensors]
    if unknown:
        raise InputError("exclude sensors", ", ".join(unknown), "sensor columns of the record: "
                         + ", ".join(rec.sensors), where=str(path))
    if known_k is None and probe.heat_pulse_energy is None:
        raise InputError("heat pulse energy", "(missing)", "the heat pulse's energy per length (option or "
                         "'# heat_pulse_energy [J/m]: ...' line), or known conductivities", where=str(path))
    live = np.array([name not in exclude for name in rec.sensors])
    pens, notes = find_penetrations(rec.time, rec.temperature[live], window, threshold)
    if not pens:
        raise InputError("penetrations", "none found", "a record in which the sensors jump by more than "
                         f"{1e3 * threshold:g} mK within {window:g} s at penetration", where=str(path))
    out = StationResult(record=str(path), penetrations=pens, results=[],
                        record_data=rec if keep_record else None, notes=[f"{path}: {n}" for n in notes])
    dur = probe.heat_pulse_duration
    for p in pens:  # one penetration per iteration; each reduction is vectorized over its samples
        reason = None
        if known_k is None and p.pulse is None:
            reason = f"pulled out {p.end - p.start:.0f} s after penetration, before a heat pulse"
        elif p.pulse is not None and known_k is None and p.end - (p.pulse + dur) < MIN_DECAY:
            reason = (f"pulled out {p.end - p.pulse - dur:.0f} s after the heat pulse ended (a pulse decay needs "
                      f"{MIN_DECAY:g} s)")
        elif (p.pulse if p.pulse is not None else p.end) - p.start < MIN_DECAY:
            reason = f"only {(p.pulse or p.end) - p.start:.0f} s of frictional decay (needs {MIN_DECAY:g} s)"
        if reason:
            out.skipped[p.label] = reason
            continue
        # the penetration from 1 s before its start to 2 s before its pull-out (the pull-out's own samples
        # belong to the water); its record keeps the station's clock
        part = rec.slice(p.start - 1.0, p.end - 2.0)
        try:
            res = reduce_record(part, s, penetration_time=p.start,
                                heat_pulse_time=p.pulse,  # with known k, only the end of the frictional window
                                heat_pulse_energy=probe.heat_pulse_energy, tilt=tilt_v,
                                tilt_sd=standard_deviation(tilt_in, "radian"), known_k=known_k, method=method,
                                probe=probe, exclude_sensors=exclude, draws=draws, seed=seed,
                                max_unphysical=max_unphysical, keep_record=keep_record, label=p.label)
        except InputError as e:
            out.skipped[p.label] = e.allowed if e.field == "sensors" else e.line()
            continue
        out.results.append(res)
        if not p.pulled_out:
            res.warnings.append(f"{path} ({p.label}): no pull-out seen; reduced to {p.end:g} s")
    if rec.start is not None:
        from datetime import timedelta

        out.times = {p.label: (rec.start + timedelta(seconds=p.start)).isoformat().replace("+00:00", "Z")
                     for p in pens}
    if navigation is not None:
        tn, x, y = read_navigation(navigation, rec.start)
        last, along = None, 0.0
        for p in pens:
            if not tn[0] <= p.start <= tn[-1]:
                out.positions[p.label] = None
                continue
            pos = (float(np.interp(p.start, tn, x)), float(np.interp(p.start, tn, y)))
            out.positions[p.label] = pos
            along += 0.0 if last is None else float(np.hypot(pos[0] - last[0], pos[1] - last[1]))
            out.distance[p.label] = along  # along the track from penetration to penetration
            last = pos
        missing = [k for k, v in out.positions.items() if v is None]
        if missing:  # the heat flows are kept; the missing positions are named
            for r in out.results:
                if r.label in missing:
                    r.warnings.append(f"{path} ({r.label}): no position (the navigation table does not cover "
                                      "its time)")
    return out


__all__ = ["Penetration", "StationResult", "find_penetrations", "read_navigation", "reduce_station"]
