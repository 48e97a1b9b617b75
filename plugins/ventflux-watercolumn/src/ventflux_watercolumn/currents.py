"""Currents from a separate record: a current meter's time series or an ADCP's profiles in time.

Reading
-------
netCDF: the velocity components are found by their CF standard names
``eastward_sea_water_velocity`` and ``northward_sea_water_velocity`` [1]
(whatever the variables are called), with dimensions ``(time,)`` for a
current meter or ``(time, bin)`` for an ADCP (either order). Time is the
variable with standard name ``time`` (or the time dimension's coordinate
with units ``<unit> since <epoch>``). An ADCP's bins are placed by a
variable with standard name ``depth`` (m; ``positive = "up"`` is turned
into depth) or ``sea_water_pressure_due_to_sea_water`` (dbar, sea pressure).

CSV (units in the headers): ``time [s]``, ``current_east [m/s]``,
``current_north [m/s]``, and for an ADCP a ``depth [m]`` or
``sea_pressure [dbar]`` column, one row per time and bin (long format).

A missing value (NaN, fill value, empty cell) is filled in time from the
same bin's neighbours; a bin or a time with no value at all is dropped. Both
are counted and reported.

Interpolation to the section
----------------------------
Each sample's current is the record's linear interpolation in time at the
sample's time, and for an ADCP linear in depth (or sea pressure) between
the bins at the sample's depth: bilinear, vectorized. Nothing is
extrapolated in time: a section whose samples fall outside the record's
time span is refused. Samples above the shallowest or below the deepest bin
take that bin's value; they are counted in the notes.

Times are compared in seconds since each file's epoch; two netCDF epochs are
reconciled. A CSV's ``time [s]`` has no epoch: it is compared as written
(the notes say so), so a CSV record and a section must count seconds from
the same origin.

Uncertainty (a stated rule)
---------------------------
Two parts, each one offset along the section's normal per draw (drawn once
per draw and shared by every sample, i.e. systematic over the section):

- the instrument's accuracy, given by the user (``current_uncertainty``),
  normal with that standard deviation;
- the record's variability that interpolation cannot follow: over the
  section's time span (and, for an ADCP, the bins spanning the section's
  depths), the covariance of the east and north components estimated from
  successive differences, Σ = ⟨δu δuᵀ⟩ / 2 with δu the change from one
  record to the next (the mean square successive difference [2]). A slow
  tide is followed by the interpolation and adds little; noise and
  fluctuations faster than the record's interval add their full variance.
  Drawn as a normal offset with that covariance, projected on each
  section's normal.

What no record can tell is how far the current at the mooring differs from
the current at the section; a user who knows it adds it to
``current_uncertainty``.

References
----------
.. [1] CF Standard Name Table (version 84), cfconventions.org.
.. [2] von Neumann, J., Kent, R. H., Bellinson, H. R. and Hart, B. I. (1941).
   The mean square successive difference. Ann. Math. Stat. 12, 153–162.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from ventflux.plugin_api import Collector, InputError

from .reading import SUFFIXES, convert, epoch_of, open_netcdf, renamed_columns, standard_names

LEVEL_NAMES = {"depth": ("depth",), "sea_pressure": ("sea_water_pressure_due_to_sea_water",)}


@dataclass(frozen=True)
class CurrentRecord:
    """A current record on its own grid: times (T,), optional bins (B,), velocities (T,) or (T, B), m/s."""

    source: str
    time: np.ndarray  # s since ``epoch`` (or as written)
    east: np.ndarray
    north: np.ndarray
    levels: np.ndarray | None = None  # bin depth (m) or sea pressure (dbar), increasing
    level_kind: str | None = None  # "depth" or "sea_pressure"
    epoch: np.datetime64 | None = None
    filled: int = 0  # missing values filled in time from the same bin
    dropped: dict = field(default_factory=dict)  # "times"/"bins" -> how many were dropped for having no value
    notes: tuple = ()


def read_current_record(path) -> CurrentRecord:
    """Read a current meter's or ADCP's record (netCDF with CF standard names, or CSV with units in headers).

    Parameters
    ----------
    path : path-like

    Returns
    -------
    CurrentRecord

    Raises
    ------
    InputError or InputErrors
        Every problem of the file at once, naming the file and the variable or line.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("current record", str(path), "an existing CSV or netCDF file")
    if path.suffix.lower() == ".csv":
        rec = _read_csv(path)
    elif path.suffix.lower() in SUFFIXES:
        rec = _read_netcdf(path)
    else:
        raise InputError("current record", str(path), "a file ending in " + ", ".join(SUFFIXES))
    return _clean(rec)


def _read_csv(path):
    from ventflux.plugin_api import read_quantity_table

    t = read_quantity_table(path, {"time": "time", "current_east": "velocity", "current_north": "velocity"},
                            optional={"depth": "length", "sea_pressure": "pressure", "pressure": "pressure"},
                            allow_missing=True)
    notes = renamed_columns(path, t, {"depth": "", "sea_pressure": ""})
    time = t["time"].to("s").magnitude
    e, n = t["current_east"].to("m/s").magnitude, t["current_north"].to("m/s").magnitude
    kind = "depth" if "depth" in t else "sea_pressure" if "sea_pressure" in t else None
    if kind is None:
        order = np.argsort(time, kind="stable")
        return CurrentRecord(str(path), time[order], e[order], n[order], notes=tuple(notes))
    lev = t[kind].to("m" if kind == "depth" else "dbar").magnitude
    if np.isnan(time).any() or np.isnan(lev).any():
        raise InputError("time" if np.isnan(time).any() else kind, "(empty)", "a time and a bin on every row of an "
                         "ADCP record", where=str(path))
    times, ti = np.unique(time, return_inverse=True)
    levels, li = np.unique(lev, return_inverse=True)
    E = np.full((times.size, levels.size), np.nan)
    N = np.full_like(E, np.nan)
    E[ti, li], N[ti, li] = e, n
    return CurrentRecord(str(path), times, E, N, levels=levels, level_kind=kind, notes=tuple(notes))


def _read_netcdf(path):
    errs = Collector()
    ds = open_netcdf(path, "current record")
    where = str(path)
    with ds:
        by = standard_names(ds)
        ue, un = by.get("eastward_sea_water_velocity"), by.get("northward_sea_water_velocity")
        if ue is None or un is None:
            raise InputError("variable", "(no standard_name eastward_sea_water_velocity and "
                             "northward_sea_water_velocity)", "both velocity components", where=where)
        U, V = ds[ue], ds[un]
        tvar = by.get("time")
        if tvar is None:
            tvar = next((d for d in U.dims if d in ds.variables and " since " in str(ds[d].attrs.get("units", ""))),
                        None)
        if tvar is None or ds[tvar].ndim != 1 or ds[tvar].dims[0] not in U.dims:
            raise InputError("variable", "(no time)", "a variable with standard_name time along one dimension of "
                             f"{ue}", where=where)
        tdim = ds[tvar].dims[0]
        kind = lvar = None
        if U.ndim == 2:
            for k, names in LEVEL_NAMES.items():
                lvar = next((by[nm] for nm in names if nm in by), None)
                if lvar is not None:
                    kind = k
                    break
            if lvar is None or ds[lvar].ndim != 1 or ds[lvar].dims[0] not in U.dims or ds[lvar].dims[0] == tdim:
                raise InputError("variable", "(no bin depth)", "a variable with standard_name depth or "
                                 f"sea_water_pressure_due_to_sea_water along the bins of {ue}", where=where)
            U, V = U.transpose(tdim, ds[lvar].dims[0]), V.transpose(tdim, ds[lvar].dims[0])
        elif U.ndim != 1:
            raise InputError(f"{ue} dimensions", str(U.dims), "(time,) or (time, bin)", where=where)
        if V.dims != U.dims:
            errs.add(InputError(f"{un} dimensions", str(V.dims), f"those of {ue} {U.dims}", where=where))
        tunits, epoch = epoch_of(str(ds[tvar].attrs.get("units", "")), tvar, where)
        time = convert(np.asarray(ds[tvar].values, float), tunits, "time", tvar, errs, where)
        e = convert(np.asarray(U.values, float), str(U.attrs.get("units", "")), "current_east", ue, errs, where)
        n = convert(np.asarray(V.values, float), str(V.attrs.get("units", "")), "current_north", un, errs, where)
        levels = None
        if lvar is not None:
            levels = convert(np.asarray(ds[lvar].values, float), str(ds[lvar].attrs.get("units", "")), kind, lvar,
                             errs, where)
            if levels is not None and kind == "depth" and str(ds[lvar].attrs.get("positive", "down")).lower() == "up":
                levels = -levels
        errs.raise_if_any()
    assert time is not None and e is not None and n is not None
    return CurrentRecord(where, time, e, n, levels=levels, level_kind=kind, epoch=epoch)


def _clean(rec: CurrentRecord) -> CurrentRecord:
    """Sort, drop times and bins with no value, fill the remaining gaps in time (counted)."""
    errs = Collector()
    for name, v in (("time", rec.time), ("current_east", rec.east), ("current_north", rec.north)):
        if np.isinf(v).any():
            errs.add(InputError(name, "infinite", "finite values (or a fill value for a missing one)",
                                where=rec.source))
    errs.raise_if_any()
    t, E, N = rec.time, rec.east, rec.north
    dropped = {}
    ok_t = np.isfinite(t)
    E2 = E.reshape(t.size, -1)
    N2 = N.reshape(t.size, -1)
    miss = ~np.isfinite(E2) | ~np.isfinite(N2)
    ok_t &= ~miss.all(axis=1)
    ok_b = ~miss[ok_t].all(axis=0) if ok_t.any() else np.zeros(E2.shape[1], bool)
    if (~ok_t).any():
        dropped["times"] = int((~ok_t).sum())
    if rec.levels is not None and (~ok_b).any():
        dropped["bins"] = int((~ok_b).sum())
    t, E2, N2, miss = t[ok_t], E2[ok_t][:, ok_b], N2[ok_t][:, ok_b], miss[ok_t][:, ok_b]
    if t.size < 2:
        raise InputError("current record", f"{t.size} times with a value", "at least 2 times", where=rec.source)
    order = np.argsort(t, kind="stable")
    t, E2, N2, miss = t[order], E2[order], N2[order], miss[order]
    if (np.diff(t) <= 0).any():
        i = int(np.flatnonzero(np.diff(t) <= 0)[0])
        raise InputError("time", f"{t[i]:g} s twice", "one record per time (per bin)", where=rec.source)
    filled = int(miss.sum())
    for j in np.flatnonzero(miss.any(axis=0)):  # a loop over bins (tens), not over samples
        ok = ~miss[:, j]
        E2[~ok, j] = np.interp(t[~ok], t[ok], E2[ok, j])
        N2[~ok, j] = np.interp(t[~ok], t[ok], N2[ok, j])
    levels = None
    if rec.levels is not None:
        levels = np.asarray(rec.levels, float)[ok_b]
        if not np.isfinite(levels).all():
            raise InputError(rec.level_kind or "bins", "missing", "a depth for every bin", where=rec.source)
        lo = np.argsort(levels)
        levels, E2, N2 = levels[lo], E2[:, lo], N2[:, lo]
        E, N = E2, N2
    else:
        E, N = E2[:, 0], N2[:, 0]
    return replace(rec, time=t, east=E, north=N, levels=levels, filled=filled, dropped=dropped)


@dataclass(frozen=True)
class RecordMatch:
    """The record during the section (for the variability rule) and what the matching did."""

    east: np.ndarray  # record values within the section's time span, (T,) or (T, bins), m/s
    north: np.ndarray
    outside_bins: int  # samples above or below the ADCP's bins (held at the nearest bin)
    notes: tuple

    def covariance(self) -> np.ndarray:
        """Covariance (2, 2), (m/s)², of east and north from successive differences in time [2] (module notes)."""
        de = np.diff(self.east, axis=0).ravel()
        dn = np.diff(self.north, axis=0).ravel()
        if de.size < 2:
            return np.zeros((2, 2))
        d = np.stack([de, dn])
        return (d @ d.T) / (2.0 * de.size)

    def variability(self, normal) -> float:
        """Standard deviation, m/s, of the variability along ``normal`` (``covariance`` projected)."""
        n = np.asarray(normal, float)
        return float(np.sqrt(n @ self.covariance() @ n))


def currents_at(record: CurrentRecord, data, depth=None):
    """The record's current at every sample of a section, and what the matching did.

    Parameters
    ----------
    record : CurrentRecord
    data : SectionData
    depth : numpy.ndarray, optional
        Sample depths, m (for an ADCP binned in depth).

    Returns
    -------
    (SectionData, RecordMatch)
        The section with ``current_east``/``current_north`` set, and the match.
    """
    notes = []
    t = np.asarray(data.time, float)
    rt = np.asarray(record.time, float)
    if record.epoch is not None and data.epoch is not None:
        rt = rt + (record.epoch - data.epoch) / np.timedelta64(1, "s")
    elif (record.epoch is None) != (data.epoch is None):
        notes.append(f"Times of the current record {Path(record.source).name} and of the section compared as written "
                     "(one file gives no epoch): both must count seconds from the same origin.")
    if t.min() < rt[0] or t.max() > rt[-1]:
        raise InputError("current record", record.source, f"a record covering the section's times ({t.min():g} to "
                         f"{t.max():g} s; it covers {rt[0]:g} to {rt[-1]:g} s, and nothing is extrapolated)")
    k = np.clip(np.searchsorted(rt, t, side="right") - 1, 0, rt.size - 2)
    wt = (t - rt[k]) / (rt[k + 1] - rt[k])
    within = (rt >= t.min() - 1e-9) & (rt <= t.max() + 1e-9)
    within |= np.isin(np.arange(rt.size), [k.min(), k.max() + 1])  # the records bracketing the section's ends
    outside = 0
    if record.levels is None:
        E, N = record.east, record.north
        ue = (1 - wt) * E[k] + wt * E[k + 1]
        un = (1 - wt) * N[k] + wt * N[k + 1]
        ve, vn = E[within], N[within]
    else:
        lev = depth if record.level_kind == "depth" else data.sea_pressure
        if lev is None:
            raise InputError("current record", record.source, "sample depths for a record binned in depth")
        L = record.levels
        if L.size == 1:
            j, wz = np.zeros(t.size, int), np.zeros(t.size)
        else:
            j = np.clip(np.searchsorted(L, lev, side="right") - 1, 0, L.size - 2)
            wz = np.clip((lev - L[j]) / (L[j + 1] - L[j]), 0.0, 1.0)
        outside = int(((lev < L[0]) | (lev > L[-1])).sum())
        jj = np.minimum(j + 1, L.size - 1)

        def bilinear(U):
            return ((1 - wt) * ((1 - wz) * U[k, j] + wz * U[k, jj]) + wt * ((1 - wz) * U[k + 1, j] + wz * U[k + 1, jj]))

        ue, un = bilinear(record.east), bilinear(record.north)
        bins = (L >= np.min(lev) - 1e-9) & (L <= np.max(lev) + 1e-9)
        if not bins.any():
            bins = np.isin(np.arange(L.size), [j.min(), jj.max()])
        ve, vn = record.east[within][:, bins], record.north[within][:, bins]
        if outside:
            notes.append(f"{outside} samples lie above the shallowest or below the deepest bin of the current record "
                         "and take that bin's current.")
    if record.filled:
        notes.append(f"{record.filled} missing values of the current record filled in time from the same bin.")
    for what, cnt in record.dropped.items():
        notes.append(f"{cnt} {what} of the current record dropped (no value).")
    notes.extend(record.notes)
    return (replace(data, current_east=ue, current_north=un),
            RecordMatch(east=np.asarray(ve, float), north=np.asarray(vn, float), outside_bins=outside,
                        notes=tuple(notes)))
