"""A water-column section (tow-yo, vehicle or CTD profiles) from CSV or netCDF.

CSV: one row per sample, units in the headers (``ventflux.tables``)::

    time [s], east [m], north [m], pressure [dbar], temperature [degC], salinity, optical, current_east [m/s], ...

Position is ``east``/``north`` (local, metres) or ``latitude``/``longitude``
(degrees). ``pressure`` is sea pressure (absolute minus one standard
atmosphere), as a CTD reports it; ``temperature`` is in situ (ITS-90);
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
seconds, exactly as the CSV's ``time [s]``.

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
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ventflux.plugin_api import Collector, InputError
from ventflux.plugin_api import ureg

#: Mean Earth radius, m [2].
EARTH_RADIUS = 6_371_008.8

SUFFIXES = (".csv", ".nc", ".nc4", ".cdf")

CF_NAMES = {
    "time": ("time",),
    "latitude": ("latitude",),
    "longitude": ("longitude",),
    "east": ("projection_x_coordinate",),
    "north": ("projection_y_coordinate",),
    "pressure": ("sea_water_pressure_due_to_sea_water", "sea_water_pressure"),
    "temperature": ("sea_water_temperature",),
    "salinity": ("sea_water_practical_salinity",),
    "optical": ("sea_water_turbidity", "volume_backwards_scattering_coefficient_of_radiative_flux_in_sea_water"),
    "current_east": ("eastward_sea_water_velocity",),
    "current_north": ("northward_sea_water_velocity",),
}
UNITS = {"time": "s", "latitude": "degree", "longitude": "degree", "east": "m", "north": "m", "pressure": "dbar",
         "temperature": "degC", "current_east": "m/s", "current_north": "m/s"}


@dataclass(frozen=True)
class SectionData:
    """Samples of one section as float arrays in fixed units (named in each field)."""

    source: str
    time: np.ndarray  # s
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

    @property
    def size(self) -> int:
        return int(self.time.size)

    def where(self, i) -> str:
        """``file:line`` (CSV) or ``file:sample i`` (netCDF) of sample ``i``, for messages."""
        return _where(self.source, np.arange(self.size) if self.lines is None else self.lines, i)


def read_section(path, latitude=None, longitude=None) -> SectionData:
    """Read a section from a CSV (units in headers) or a netCDF file (CF standard names).

    Parameters
    ----------
    path : path-like
        ``.csv``, or ``.nc``/``.nc4``/``.cdf``.
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
        cols, lines = _read_csv(path)
    elif path.suffix.lower() in SUFFIXES:
        cols, lines = _read_netcdf(path)
    else:
        raise InputError("section file", str(path), "a file ending in " + ", ".join(SUFFIXES))
    return _assemble(cols, lines, str(path), latitude, longitude)


def _read_csv(path):
    from ventflux.plugin_api import read_quantity_table

    t = read_quantity_table(
        path, {"time": "time", "pressure": "pressure", "temperature": "temperature", "salinity": "dimensionless"},
        optional={"east": "length", "north": "length", "latitude": "angle", "longitude": "angle",
                  "optical": "dimensionless", "current_east": "velocity", "current_north": "velocity",
                  "profile": "dimensionless"},
        alternatives=[("east", "latitude"), ("north", "longitude")])
    cols = {}
    for name in t.columns:
        unit = UNITS.get(name)
        q = t[name]
        cols[name] = q.to(unit).magnitude if unit else q.to("dimensionless").magnitude
    return cols, t.lines


def _udunits(text: str) -> str:
    """UDUNITS spelling (``m s-1``, ``degrees_north``) to what pint reads."""
    text = text.strip()
    text = {"degrees_north": "degree", "degrees_east": "degree", "degree_north": "degree",
            "degree_east": "degree", "psu": "", "PSU": "", "1": ""}.get(text, text)
    return re.sub(r"([A-Za-z])(-?\d+)", r"\1**\2", text)


def _read_netcdf(path):
    import xarray as xr

    errs = Collector()
    try:
        ds = xr.open_dataset(path, decode_times=False, decode_cf=True, mask_and_scale=True)
    except Exception as exc:  # noqa: BLE001 - any unreadable file is the user's to fix
        raise InputError("section file", str(path), f"a readable netCDF file ({type(exc).__name__})") from None
    with ds:
        by_name = {}
        for var in list(ds.variables):
            sn = ds[var].attrs.get("standard_name")
            if sn:
                by_name.setdefault(sn, var)
        cols = {}
        for key, names in CF_NAMES.items():
            var = next((by_name[n] for n in names if n in by_name), None)
            if var is None:
                continue
            da = ds[var]
            values = np.asarray(da.values, float).ravel()
            units = str(da.attrs.get("units", ""))
            label = f"{var} (standard_name {da.attrs['standard_name']})"
            if key == "time":
                m = re.match(r"^\s*(\w+)\s+since\s+", units)
                units = m.group(1) if m else units
            try:
                if key in UNITS:
                    values = ureg.Quantity(values, _udunits(units)).to(UNITS[key]).magnitude
                elif key == "salinity" and _udunits(units) not in ("", "1"):
                    raise ValueError
            except Exception:  # noqa: BLE001 - pint raises several kinds for an unknown or wrong unit
                errs.add(InputError(f"{label} units", units, f"a unit convertible to {UNITS.get(key, '1')}",
                                    where=str(path)))
                continue
            if key == "pressure" and da.attrs["standard_name"] == "sea_water_pressure":
                from ventflux.plugin_api import STANDARD_ATMOSPHERE

                values = values - STANDARD_ATMOSPHERE / 1e4
            cols[key] = values
        for key in ("time", "pressure", "temperature", "salinity"):
            if key not in cols:
                errs.add(InputError("variable", f"(no standard_name {' or '.join(CF_NAMES[key])})",
                                    f"a variable with that CF standard name for {key}", where=str(path)))
        if not ("east" in cols and "north" in cols) and not ("latitude" in cols and "longitude" in cols):
            errs.add(InputError("variable", "(no position)", "latitude and longitude, or projection_x_coordinate "
                                "and projection_y_coordinate", where=str(path)))
        errs.raise_if_any()
        n = cols["time"].size
        for key, v in cols.items():
            if v.size != n:
                errs.add(InputError(key, f"{v.size} values", f"one value per sample ({n}, as time)", where=str(path)))
        errs.raise_if_any()
        for key, v in cols.items():
            bad = np.flatnonzero(~np.isfinite(v))
            if bad.size:
                errs.add(InputError(key, "missing or non-finite", "a finite number at every sample",
                                    where=f"{path}:sample {bad[0]}"))
        errs.raise_if_any()
    return cols, np.arange(n)


def _assemble(cols, lines, source, latitude, longitude) -> SectionData:
    errs = Collector()
    lat0 = lon0 = None
    if "latitude" in cols:
        lat, lon = cols["latitude"], cols["longitude"]
        for name, v, lim in (("latitude", lat, 90), ("longitude", lon, 360)):
            bad = np.flatnonzero(np.abs(v) > lim)
            if bad.size:
                errs.add(InputError(name, f"{v[bad[0]]:g}", f"degrees between {-lim} and {lim}",
                                    where=_where(source, lines, bad[0])))
        errs.raise_if_any()
        lat0, lon0 = float(np.mean(lat)), float(np.mean(lon))
        east = np.radians(lon - lon0) * EARTH_RADIUS * np.cos(np.radians(lat0))
        north = np.radians(lat - lat0) * EARTH_RADIUS
    else:
        east, north = cols["east"], cols["north"]
        lat0 = None if latitude is None else float(latitude)
        lon0 = None if longitude is None else float(longitude)
    t, p = cols["time"], cols["pressure"]
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size:
        errs.add(InputError("time", f"{t[bad[0] + 1]:g} s after {t[bad[0]]:g} s", "times that increase sample by "
                            "sample", where=_where(source, lines, bad[0] + 1)))
    for name, v, lo, hi in (("pressure", p, 0.0, 8000.0), ("salinity", cols["salinity"], 0.0, 42.0)):
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
                       profile=None if prof is None else prof.astype(int), lines=np.asarray(lines))


def _where(source, lines, i):
    kind = "" if source.endswith(".csv") else "sample "
    return f"{source}:{kind}{int(lines[i])}"
