"""Diffuse-flow thermistor arrays: temperature anomalies over a patch and their periodic modulation.

Many sensors over a venting patch record temperature together with a
reference sensor in the ambient water. Per sensor, the anomaly
``ΔT_i(t) = T_i(t) − T_ref(t)`` gives a mean, a standard deviation and
percentiles; per patch, the mean over its sensors of the anomaly series gives
the patch's mean anomaly (what the diffuse estimator takes) and its
variability, with the standard deviation between the sensors' means showing
how uneven the patch is. Dominant periods come from the periodogram of each
detrended, Hann-windowed anomaly series [1], all sensors at once; only
periods that fit at least twice into the record are reported. Tidal
modulation shows up near the semidiurnal (12.42 h, M2) and diurnal periods.

Records with slightly uneven sampling are interpolated linearly onto a
uniform grid at the median interval before the spectrum (means use the
samples as recorded, weighted by the time each represents).

References
----------
.. [1] Press, W. H., Teukolsky, S. A., Vetterling, W. T. and Flannery, B. P.
   (2007). Numerical Recipes, 3rd ed., Cambridge University Press, §13.4
   (power spectrum estimation using the FFT, with a data window).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import interpolate, signal
from ventflux.plugin_api import InputError
from ventflux.plugin_api import read_quantity_table
from ventflux.plugin_api import parse_column_name

from .fitting import require_increasing


@dataclass(frozen=True)
class ArrayResult:
    """Anomaly statistics per sensor and per patch (K, s)."""

    sensors: tuple
    sensor_mean: np.ndarray
    sensor_std: np.ndarray
    sensor_p05: np.ndarray
    sensor_p95: np.ndarray
    sensor_periods: np.ndarray  # (n_sensors, n_peaks) s, NaN where fewer peaks
    patches: dict  # name -> dict of statistics

    def as_dict(self) -> dict:
        return {"sensors": [{"sensor": s, "mean_anomaly_K": self.sensor_mean[i], "std_anomaly_K": self.sensor_std[i],
                             "p05_anomaly_K": self.sensor_p05[i], "p95_anomaly_K": self.sensor_p95[i],
                             "dominant_periods_h": [p / 3600 for p in self.sensor_periods[i] if np.isfinite(p)]}
                            for i, s in enumerate(self.sensors)],
                "patches": self.patches}


def _weights(t):
    """Time each sample represents (half the intervals on either side)."""
    dt = np.diff(t)
    w = np.empty_like(t)
    w[0], w[-1] = dt[0] / 2, dt[-1] / 2
    w[1:-1] = (dt[:-1] + dt[1:]) / 2
    return w / w.sum()


def dominant_periods(time, series, n_peaks=3):
    """The ``n_peaks`` strongest periods [s] of each row of ``series`` (sensors × samples), strongest first."""
    t = np.asarray(time, float)
    x = np.atleast_2d(np.asarray(series, float))
    dt = float(np.median(np.diff(t)))
    if np.ptp(np.diff(t)) > 0.01 * dt:  # uneven sampling: onto a uniform grid first
        grid = np.arange(t[0], t[-1] + 0.5 * dt, dt)
        x = interpolate.interp1d(t, x, axis=-1, assume_sorted=True)(np.minimum(grid, t[-1]))
        t = grid
    f, pxx = signal.periodogram(x, fs=1.0 / dt, window="hann", detrend="linear", axis=-1)
    span = t[-1] - t[0]
    ok = (f > 0) & (f >= 2.0 / span)
    pxx = np.where(ok[None, :], pxx, 0.0)
    # local maxima only, so one broad peak is not reported twice
    peak = np.zeros_like(pxx, bool)
    peak[:, 1:-1] = (pxx[:, 1:-1] > pxx[:, :-2]) & (pxx[:, 1:-1] >= pxx[:, 2:])
    score = np.where(peak, pxx, -1.0)
    order = np.argsort(-score, axis=1)[:, :n_peaks]
    valid = np.take_along_axis(score, order, axis=1) > 0
    with np.errstate(divide="ignore"):  # f = 0 is never a valid peak (masked above)
        periods = 1.0 / f[order]
    return np.where(valid, periods, np.nan)


def array_anomalies(time, temperature, reference, sensors, patches=None, n_peaks=3) -> ArrayResult:
    """Anomaly statistics of a thermistor array (plain SI arrays: s, K).

    Parameters
    ----------
    time : ndarray, shape (n,)
        Increasing times.
    temperature : ndarray, shape (n_sensors, n)
    reference : ndarray, shape (n,)
        Ambient reference sensor.
    sensors : sequence of str
    patches : dict, optional
        Patch name → list of sensor names; default one patch of all sensors.

    Returns
    -------
    ArrayResult
    """
    t = np.asarray(time, float)
    T = np.atleast_2d(np.asarray(temperature, float))
    dT = T - np.asarray(reference, float)[None, :]
    w = _weights(t)
    mean = dT @ w
    std = np.sqrt(((dT - mean[:, None]) ** 2) @ w)
    p05, p95 = np.percentile(dT, [5, 95], axis=1)
    periods = dominant_periods(t, dT, n_peaks)
    sensors = tuple(sensors)
    patches = patches or {"patch": list(sensors)}
    out = {}
    for name, members in patches.items():  # a few patches; the series work stays vectorized
        idx = [sensors.index(m) for m in members]
        series = dT[idx].mean(axis=0)
        m = float(series @ w)
        sd_time = float(np.sqrt(((series - m) ** 2) @ w))
        spread = float(np.std(mean[idx], ddof=1)) if len(idx) > 1 else 0.0
        per = dominant_periods(t, series[None, :], n_peaks)[0]
        out[name] = {"sensors": list(members), "mean_anomaly_K": m, "std_anomaly_K": sd_time,
                     "sensor_spread_K": spread,
                     "dominant_periods_h": [p / 3600 for p in per if np.isfinite(p)],
                     # for `ventflux diffuse --anomaly`: mean ± the between-sensor spread (or the temporal sd)
                     "anomaly_for_diffuse": f"{m:.4g} ± {max(spread, sd_time):.2g} K"}
    return ArrayResult(sensors=sensors, sensor_mean=mean, sensor_std=std, sensor_p05=p05, sensor_p95=p95,
                       sensor_periods=periods, patches=out)


def read_array_record(path, reference="ambient", sensors=None):
    """Read an array record: ``time [s]``, a reference column and sensor columns (all ``[degC]`` or ``[K]``).

    Without ``sensors``, every column headed with a temperature unit except
    the reference is a sensor. Returns ``(time_s, temperature_K, reference_K,
    sensor_names)``.
    """
    try:
        with open(path, encoding="utf-8-sig") as fh:
            header = next((ln for ln in fh if ln.strip() and not ln.lstrip().startswith("#")), "")
    except (OSError, UnicodeDecodeError):
        raise InputError("file", str(path), "an existing, readable CSV file") from None
    names = [parse_column_name(c)[0] for c in header.strip().split(",")]
    if sensors is None:
        sensors = [n for n in names if n not in ("time", reference)]
    if not sensors:
        raise InputError("sensors", "(none)", f"sensor columns besides 'time' and '{reference}'", where=str(path))
    for s in sensors:
        if s in ("time", reference):
            raise InputError("sensors", s, f"sensor columns other than 'time' and the reference '{reference}'",
                             where=str(path))
    tbl = read_quantity_table(path, {"time": "time", reference: "temperature", **{s: "temperature" for s in sensors}})
    t = tbl["time"].to("s").magnitude
    require_increasing(t, tbl.lines, path, "time", "s")
    if t.size < 8:
        raise InputError("record", f"{t.size} samples", "at least 8 samples", where=str(path))
    T = np.vstack([tbl[s].to("K").magnitude for s in sensors])
    return t, T, tbl[reference].to("K").magnitude, list(sensors)
