"""A water-column section (tow-yo, vehicle or CTD profiles) from CSV or netCDF.

CSV: one row per sample, units in the headers (``ventflux.tables``)::

    time [s], east [m], north [m], sea_pressure [dbar], temperature [degC], salinity, optical, current_east [m/s], ...

Position is ``east``/``north`` (local, metres) or ``latitude``/``longitude``
(degrees). ``sea_pressure`` is sea pressure (absolute minus one standard
atmosphere), as a CTD reports it (the old header ``pressure [dbar]`` is
accepted for one release, with a deprecation line); ``temperature`` is in situ (ITS-90);
``salinity`` is practical salinity. Optional: ``optical`` (light
backscatter or turbidity, any linear scale, no unit), ``current_east`` and
``current_north`` (a current meter's or ADCP's velocity at each sample) and
``profile`` (an integer per sample, when profiles are not to be found from
the pressure record).

netCDF: variables are found by their CF standard names [1] (names of the
variables are free): ``time``; ``latitude``/``longitude`` or
``projection_x_coordinate``/``projection_y_coordinate``;
``sea_water_pressure_due_to_sea_water`` (sea pressure) or
``sea_water_pressure`` (absolute, one standard atmosphere is subtracted);
``sea_water_temperature``; ``sea_water_practical_salinity``; optionally
``sea_water_turbidity`` or
``volume_backwards_scattering_coefficient_of_radiative_flux_in_sea_water``,
``eastward_sea_water_velocity`` and ``northward_sea_water_velocity``.
Units come from each variable's ``units`` attribute (UDUNITS spelling,
``m s-1``); times are ``<unit> since <epoch>`` and are read as that number of
seconds, exactly as the CSV's ``time [s]`` (the epoch is kept, so that a
current record with another epoch can be matched to the section).

Two netCDF layouts are read: the flat one (every variable along one sample
dimension, a trajectory) and the profile × level one of the CF discrete
sampling geometries (``featureType = "profile"``, orthogonal or incomplete
multidimensional array: data variables ``(profile, level)``, coordinates
such as ``time(profile)`` or ``sea_pressure(level)`` broadcast to them). In
the second, the profile is the dimension of a one-dimensional time (or, failing
that, the one a one-dimensional pressure does not have, or else the first), and
the samples are taken profile by profile; messages name a sample by its flat
index ``profile × levels + level``.

Missing values (an empty CSV cell or ``nan``, a netCDF fill value or NaN) are
not refused: the sample is dropped and counted under each variable that was
missing (``SectionData.dropped``; reported in the notes, the JSON and a
survey's warnings). A variable with no value at all, or a profile (given by
numbers or by the netCDF layout) with no complete sample, is refused,
naming it. Infinities and text that is not a number are refused.

Times must increase sample by sample unless the profiles are numbered (a
``profile`` column, or the profile × level layout): casts may then carry one
time each, and an up-cast stored by level runs against time.

Geographic positions become local east/north metres about the section's
mean position (equirectangular, mean Earth radius 6 371 km [2]; over a
section of a few km the distortion is below 1e-6, common practice, no
source).

References
----------
.. [1] CF Standard Name Table (version 84), cfconventions.org.
.. [2] Moritz, H. (2000). Geodetic Reference System 1980. J. Geodesy 74,
   128–133 (mean radius R₁ = 6 371 008.8 m).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ventflux.plugin_api import RENAMED_COLUMNS, Collector, InputError, deprecation_line, ureg, warn_deprecated

#: Mean Earth radius, m [2].
EARTH_RADIUS = 6_371_008.8

SUFFIXES = (".csv", ".nc", ".nc4", ".cdf")

CF_NAMES = {
    "time": ("time",),
    "latitude": ("latitude",),
    "longitude": ("longitude",),
    "east": ("projection_x_coordinate",),
    "north": ("projection_y_coordinate",),
    "sea_pressure": ("sea_water_pressure_due_to_sea_water", "sea_water_pressure"),
    "temperature": ("sea_water_temperature",),
    "salinity": ("sea_water_practical_salinity",),
    "optical": ("sea_water_turbidity", "volume_backwards_scattering_coefficient_of_radiative_flux_in_sea_water"),
    "current_east": ("eastward_sea_water_velocity",),
    "current_north": ("northward_sea_water_velocity",),
}
UNITS = {"time": "s", "latitude": "degree", "longitude": "degree", "east": "m", "north": "m", "sea_pressure": "dbar",
         "temperature": "degC", "current_east": "m/s", "current_north": "m/s", "depth": "m"}
#: CSV columns: name → dimension (``ventflux.units.DIMENSIONS``).
CSV_REQUIRED = {"time": "time", "temperature": "temperature", "salinity": "dimensionless"}
CSV_OPTIONAL = {"sea_pressure": "pressure", "east": "length", "north": "length", "latitude": "angle",
                "longitude": "angle", "optical": "dimensionless", "current_east": "velocity",
                "current_north": "velocity", "profile": "dimensionless"}
LAYOUTS = ("samples", "profile × level")


@dataclass(frozen=True)
class SectionData:
    """Samples of one section as float arrays in fixed units (named in each field)."""

    source: str
    time: np.ndarray  # s (since ``epoch`` when the file gives one)
    east: np.ndarray  # m, local
    north: np.ndarray  # m, local
    sea_pressure: np.ndarray  # dbar
    temperature: np.ndarray  # degC, in situ
    salinity: np.ndarray  # practical salinity
    latitude: float | None = None  # mean position, degrees (TEOS-10 absolute salinity, gravity)
    longitude: float | None = None
    optical: np.ndarray | None = None
    current_east: np.ndarray | None = None  # m/s
    current_north: np.ndarray | None = None  # m/s
    profile: np.ndarray | None = None  # given profile numbers
    lines: np.ndarray | None = None  # file line (CSV) or index (netCDF) of each sample, for messages
    dropped: dict = field(default_factory=dict)  # variable -> samples dropped because it was missing there
    n_dropped: int = 0  # samples dropped (a sample missing several variables counts once)
    epoch: np.datetime64 | None = None  # origin of ``time`` (netCDF ``since``), None for a CSV
    layout: str = "samples"
    notes: tuple = ()  # what reading changed or accepted (deprecated column names)
    origin: tuple | None = None  # (latitude, longitude) of east = north = 0 when positions were geographic

    @property
    def size(self) -> int:
        return int(self.time.size)

    def where(self, i) -> str:
        """``file:line`` (CSV) or ``file:sample i`` (netCDF) of sample ``i``, for messages."""
        return _where(self.source, np.arange(self.size) if self.lines is None else self.lines, i)

    def dropped_note(self) -> str | None:
        """One line counting the samples dropped for missing values, per variable (None if none)."""
        if not self.n_dropped:
            return None
        per = ", ".join(f"{k} {v}" for k, v in self.dropped.items())
        return (f"{self.n_dropped} of {self.n_dropped + self.size} samples dropped for missing values "
                f"(missing: {per}).")


def read_section(path, latitude=None, longitude=None) -> SectionData:
    """Read a section from a CSV (units in headers) or a netCDF file (CF standard names).

    Parameters
    ----------
    path : path-like
        ``.csv``, or ``.nc``/``.nc4``/``.cdf`` (flat or profile × level layout).
    latitude, longitude : float, optional
        Degrees; used when the file gives local east/north positions only.

    Returns
    -------
    SectionData

    Raises
    ------
    InputError or InputErrors
        Every problem of the file at once, each naming the file and line (or variable).
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("section file", str(path), "an existing CSV or netCDF file")
    if path.suffix.lower() == ".csv":
        cols, lines, notes = _read_csv(path)
        epoch, layout = None, "samples"
    elif path.suffix.lower() in SUFFIXES:
        cols, lines, epoch, layout = _read_netcdf(path)
        notes = []
    else:
        raise InputError("section file", str(path), "a file ending in " + ", ".join(SUFFIXES))
    return _assemble(cols, lines, str(path), latitude, longitude, epoch=epoch, layout=layout, notes=notes)


def renamed_columns(path, table, wanted) -> list[str]:
    """Take old column spellings (``RENAMED_COLUMNS``) under their new names, one deprecation line each."""
    notes = []
    for old, new in RENAMED_COLUMNS.items():
        if new in wanted and new not in table and old in table:
            table.columns[new] = table.columns.pop(old)
            unit = f" [{table[new].units:~}]" if str(table[new].units) != "dimensionless" else ""
            warn_deprecated(f"{old}{unit}", f"{new}{unit}", str(path))
            notes.append(deprecation_line(f"{old}{unit}", f"{new}{unit}", str(path)))
    return notes


def _read_csv(path):
    from ventflux.plugin_api import read_quantity_table

    optional = dict(CSV_OPTIONAL)
    optional.update({old: CSV_OPTIONAL[new] for old, new in RENAMED_COLUMNS.items() if new in CSV_OPTIONAL})
    t = read_quantity_table(path, CSV_REQUIRED, optional=optional, allow_missing=True,
                            alternatives=[("sea_pressure", *[o for o, n in RENAMED_COLUMNS.items()
                                                             if n == "sea_pressure"]),
                                          ("east", "latitude"), ("north", "longitude")])
    notes = renamed_columns(path, t, CSV_OPTIONAL)
    cols = {}
    for name in t.columns:
        if name not in CSV_REQUIRED and name not in CSV_OPTIONAL:
            continue
        unit = UNITS.get(name)
        q = t[name]
        cols[name] = q.to(unit).magnitude if unit else q.to("dimensionless").magnitude
    return cols, t.lines, notes


def udunits(text: str) -> str:
    """UDUNITS spelling (``m s-1``, ``degrees_north``) to what pint reads."""
    text = text.strip()
    text = {"degrees_north": "degree", "degrees_east": "degree", "degree_north": "degree",
            "degree_east": "degree", "psu": "", "PSU": "", "1": ""}.get(text, text)
    return re.sub(r"([A-Za-z])(-?\d+)", r"\1**\2", text)


def open_netcdf(path, what="section file"):
    """``xarray.Dataset`` of a netCDF file (not decoded in time); one line naming the file if unreadable."""
    import xarray as xr

    try:
        return xr.open_dataset(path, decode_times=False, decode_cf=True, mask_and_scale=True)
    except Exception as exc:  # noqa: BLE001 - any unreadable file is the user's to fix
        raise InputError(what, str(path), f"a readable netCDF file ({type(exc).__name__})") from None


def standard_names(ds) -> dict:
    """CF standard name → the first variable carrying it."""
    out: dict = {}
    for var in list(ds.variables):
        sn = ds[var].attrs.get("standard_name")
        if sn:
            out.setdefault(sn, var)
    return out


def epoch_of(units: str, label: str, where: str):
    """``(unit, epoch)`` of a CF time unit ``<unit> since <epoch>`` (epoch None when absent)."""
    m = re.match(r"^\s*(\w+)\s+since\s+(.+?)\s*$", units)
    if not m:
        return units, None
    text = m.group(2).replace("T", " ").rstrip("Z").replace(" UTC", "").strip()
    parts = text.split()
    try:
        epoch = np.datetime64(parts[0] + ("T" + parts[1] if len(parts) > 1 else ""), "ms")
    except ValueError:
        raise InputError(f"{label} units", units, "'<unit> since <date>' with an ISO date (UDUNITS)",
                         where=where) from None
    return m.group(1), epoch


def convert(values, units, key, label, errs, where):
    """``values`` (with their UDUNITS ``units``) in ``UNITS[key]``; None (and an error collected) if impossible."""
    try:
        if key in UNITS:
            return ureg.Quantity(values, udunits(units)).to(UNITS[key]).magnitude
        if key == "salinity" and udunits(units) not in ("", "1"):
            raise ValueError
        return values
    except Exception:  # noqa: BLE001 - pint raises several kinds for an unknown or wrong unit
        errs.add(InputError(f"{label} units", units, f"a unit convertible to {UNITS.get(key, '1')}", where=where))
        return None


def _profile_dims(ds, ref, found):
    """``(profile dimension, level dimension)`` of a 2-D data variable ``ref`` (see the module notes)."""
    for key in ("time", "latitude", "longitude", "east", "north"):
        v = found.get(key)
        if v is not None and ds[v].ndim == 1 and ds[v].dims[0] in ref.dims:
            return ds[v].dims[0], next(d for d in ref.dims if d != ds[v].dims[0])
    v = found.get("sea_pressure")
    if v is not None and ds[v].ndim == 1 and ds[v].dims[0] in ref.dims:
        return next(d for d in ref.dims if d != ds[v].dims[0]), ds[v].dims[0]
    return ref.dims[0], ref.dims[1]


def _read_netcdf(path):
    errs = Collector()
    ds = open_netcdf(path)
    with ds:
        by_name = standard_names(ds)
        found = {key: next((by_name[n] for n in names if n in by_name), None) for key, names in CF_NAMES.items()}
        found = {k: v for k, v in found.items() if v is not None}
        for key in ("time", "sea_pressure", "temperature", "salinity"):
            if key not in found:
                errs.add(InputError("variable", f"(no standard_name {' or '.join(CF_NAMES[key])})",
                                    f"a variable with that CF standard name for {key}", where=str(path)))
        if not ("east" in found and "north" in found) and not ("latitude" in found and "longitude" in found):
            errs.add(InputError("variable", "(no position)", "latitude and longitude, or projection_x_coordinate "
                                "and projection_y_coordinate", where=str(path)))
        ref = ds[found["temperature"]] if "temperature" in found else None
        layout = "samples"
        if ref is not None and ref.ndim == 2:
            layout = "profile × level"
            pdim, ldim = _profile_dims(ds, ref, found)
            ref = ref.transpose(pdim, ldim)
        elif ref is not None and ref.ndim != 1:
            errs.add(InputError(f"{found['temperature']} dimensions", str(ref.dims), "one sample dimension, or "
                                "(profile, level) (CF featureType profile)", where=str(path)))
        cols, epoch = {}, None
        for key, var in found.items():
            da = ds[var]
            label = f"{var} (standard_name {da.attrs['standard_name']})"
            if layout != "samples" and ref is not None:
                if not set(da.dims) <= set(ref.dims):
                    errs.add(InputError(f"{label} dimensions", str(da.dims), f"dimensions among {ref.dims}",
                                        where=str(path)))
                    continue
                da = da.broadcast_like(ref).transpose(*ref.dims)
            values = np.asarray(da.values, float).ravel()
            units = str(da.attrs.get("units", ""))
            if key == "time":
                with errs.check():
                    units, epoch = epoch_of(units, label, str(path))
            values = convert(values, units, key, label, errs, str(path))
            if values is None:
                continue
            if key == "sea_pressure" and da.attrs["standard_name"] == "sea_water_pressure":
                from ventflux.plugin_api import STANDARD_ATMOSPHERE

                values = values - STANDARD_ATMOSPHERE / 1e4
            cols[key] = values
        errs.raise_if_any()
        if layout != "samples":
            assert ref is not None  # a profile layout is only set from the temperature variable
            P, L = ref.shape
            cols["profile"] = np.repeat(np.arange(1.0, P + 1), L)
        n = cols["time"].size
        for key, v in cols.items():
            if v.size != n:
                errs.add(InputError(key, f"{v.size} values", f"one value per sample ({n}, as time)", where=str(path)))
        errs.raise_if_any()
        for key, v in cols.items():
            bad = np.flatnonzero(np.isinf(v))
            if bad.size:
                errs.add(InputError(key, "infinite", "a finite number (or a fill value for a missing one) at every "
                                    "sample", where=f"{path}:sample {bad[0]}"))
        errs.raise_if_any()
    return cols, np.arange(n), epoch, layout


def drop_missing(cols, lines, source):
    """Drop samples with a missing (NaN) value; refuse an empty variable or profile. Returns kept columns too.

    Returns ``(cols, lines, dropped per variable, samples dropped)``.
    """
    errs = Collector()
    for key, v in cols.items():
        if v.size and np.isnan(v).all():
            errs.add(InputError(key, "(no value)", "a variable with at least one value (every sample is missing "
                                "it)", where=source))
    errs.raise_if_any()
    missing = {k: np.isnan(v) for k, v in cols.items()}
    dropped = {k: int(m.sum()) for k, m in missing.items() if m.any()}
    if not dropped:
        return cols, lines, {}, 0
    bad = np.logical_or.reduce(list(missing.values()))
    prof = cols.get("profile")
    if prof is not None:
        ids = np.unique(prof[~np.isnan(prof)])
        kept = np.unique(prof[~bad])
        empty = np.setdiff1d(ids, kept)
        if empty.size:
            raise InputError("profile", ", ".join(f"{p:g}" for p in empty[:5]) + (" ..." if empty.size > 5 else ""),
                             "profiles with at least one complete sample (every sample of these misses a value)",
                             where=source)
    keep = ~bad
    return {k: v[keep] for k, v in cols.items()}, np.asarray(lines)[keep], dropped, int(bad.sum())


def _assemble(cols, lines, source, latitude, longitude, epoch=None, layout="samples", notes=()) -> SectionData:
    cols, lines, dropped, n_dropped = drop_missing(cols, lines, source)
    errs = Collector()
    lat0 = lon0 = None
    origin = None
    if "latitude" in cols:
        lat, lon = cols["latitude"], cols["longitude"]
        for name, v, lim in (("latitude", lat, 90), ("longitude", lon, 360)):
            bad = np.flatnonzero(np.abs(v) > lim)
            if bad.size:
                errs.add(InputError(name, f"{v[bad[0]]:g}", f"degrees between {-lim} and {lim}",
                                    where=_where(source, lines, bad[0])))
        errs.raise_if_any()
        lat0, lon0 = float(np.mean(lat)), float(np.mean(lon))
        east, north = local_east_north(lat, lon, lat0, lon0)
        origin = (lat0, lon0)
    else:
        east, north = cols["east"], cols["north"]
        lat0 = None if latitude is None else float(latitude)
        lon0 = None if longitude is None else float(longitude)
    t, p = cols["time"], cols["sea_pressure"]
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size and "profile" not in cols:  # numbered profiles (a column, or profile × level) may share a time
        errs.add(InputError("time", f"{t[bad[0] + 1]:g} s after {t[bad[0]]:g} s", "times that increase sample by "
                            "sample", where=_where(source, lines, bad[0] + 1)))
    for name, v, lo, hi in (("sea_pressure", p, 0.0, 8000.0), ("salinity", cols["salinity"], 0.0, 42.0)):
        bad = np.flatnonzero((v < lo) | (v > hi))
        if bad.size:
            errs.add(InputError(name, f"{v[bad[0]]:g}", f"a value from {lo:g} to {hi:g} ({bad.size} samples outside)",
                                where=_where(source, lines, bad[0])))
    if ("current_east" in cols) != ("current_north" in cols):
        errs.add(InputError("current", "one component", "both current_east and current_north, or neither",
                            where=source))
    prof = cols.get("profile")
    if prof is not None:
        bad = np.flatnonzero(prof != np.round(prof))
        if bad.size:
            errs.add(InputError("profile", f"{prof[bad[0]]:g}", "an integer profile number",
                                where=_where(source, lines, bad[0])))
    if t.size < 10:
        errs.add(InputError("section file", f"{t.size} samples", "at least 10 samples", where=source))
    errs.raise_if_any()
    return SectionData(source=source, time=t, east=np.asarray(east, float), north=np.asarray(north, float),
                       sea_pressure=p, temperature=cols["temperature"], salinity=cols["salinity"],
                       latitude=lat0, longitude=lon0, optical=cols.get("optical"),
                       current_east=cols.get("current_east"), current_north=cols.get("current_north"),
                       profile=None if prof is None else prof.astype(int), lines=np.asarray(lines),
                       dropped=dropped, n_dropped=n_dropped, epoch=epoch, layout=layout, notes=tuple(notes),
                       origin=origin)


def local_east_north(lat, lon, lat0, lon0):
    """East and north, m, of positions (degrees) about ``(lat0, lon0)`` (equirectangular, see the notes)."""
    east = np.radians(np.asarray(lon) - lon0) * EARTH_RADIUS * np.cos(np.radians(lat0))
    north = np.radians(np.asarray(lat) - lat0) * EARTH_RADIUS
    return east, north


def _where(source, lines, i):
    kind = "" if source.endswith(".csv") else "sample "
    return f"{source}:{kind}{int(lines[i])}"
