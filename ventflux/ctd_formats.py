"""Reading a CTD cast: a CSV file, a netCDF file, an xarray Dataset or arrays.

Every form ends as the same columns (``depth``, ``pressure`` (sea pressure),
``temperature`` (in situ), ``salinity`` (practical)) that
``ventflux.profiles.read_ctd_cast`` then orders, checks, bins and turns into
an ``AmbientProfile``; so a cast gives the same profile whatever its format.

* **CSV** (``.csv``, ``.txt`` or any other suffix): headers carry units,
  ``depth [m]`` and/or ``pressure [dbar]``, ``temperature [degC]``,
  ``salinity`` (``ventflux.tables``).
* **netCDF** (``.nc``, ``.nc4``, ``.cdf``, ``.netcdf``; read with xarray)
  and **xarray Datasets**: variables are recognised by their CF
  ``standard_name`` attribute [1]_, never by their variable name, and
  converted from their ``units`` attribute [2]_ through ventflux's one pint
  registry. Recognised (``STANDARD_NAMES``):

  ======================================  =====================================
  standard_name                           read as
  ======================================  =====================================
  ``sea_water_pressure``                  sea pressure (what CTDs record) [3]_
  ``sea_water_pressure_due_to_sea_water`` sea pressure
  ``depth``                               depth below the sea surface (its
                                          ``positive`` attribute is honoured)
  ``sea_water_temperature``               in-situ temperature
  ``sea_water_practical_salinity``        practical salinity (PSS-78)
  ``sea_water_conservative_temperature``  TEOS-10 conservative temperature
  ``sea_water_absolute_salinity``         TEOS-10 absolute salinity
  ``sea_water_potential_temperature``     potential temperature (0 dbar)
  ======================================  =====================================

  The cast needs a depth or a pressure, a temperature and a salinity. A
  file that holds several temperatures (or salinities) is built from
  conservative temperature (absolute salinity) first, TEOS-10's variables
  of state, and each other one must agree with it within ``AGREEMENT`` or
  the cast is refused.
  Conservative or potential temperature and absolute salinity are turned
  into in-situ temperature and practical salinity with TEOS-10 (gsw:
  ``t_from_CT``, ``CT_from_pt``, ``SP_from_SA`` with a position, else
  ``SP_from_SR``, the inverse of what ``profiles`` applies). A value that is
  missing (``_FillValue``) is an error naming the level, never dropped.

All variables must lie along one dimension (the cast's levels), or the file holds several casts as CF's
discrete sampling geometry for profiles [4]_ (``featureType = "profile"``): a contiguous ragged array (a
variable along the casts with ``sample_dimension``: each cast's count of levels), an indexed ragged array (a
variable along the levels with ``instance_dimension``: each level's cast) or two-dimensional variables (cast,
level; a shorter cast padded with missing values, whose padding levels are left out and counted in the cast's
name). One cast is read: ``profile`` is its position (0 first) or its identifier (the variable with
``cf_role = "profile_id"``); a file of one cast needs none, and a file of several is refused without one,
listing them.

References
----------
.. [1] CF Standard Name Table, https://cfconventions.org/Data/cf-standard-names/current/build/cf-standard-name-table.html
.. [2] NetCDF Climate and Forecast (CF) Metadata Conventions, section 3.1 (units, UDUNITS syntax).
.. [4] NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8, chapter 9 and appendix H.3
   (discrete sampling geometries: profiles).
.. [3] CF defines ``sea_water_pressure`` to include the atmosphere's load;
   CTD files written with it (e.g. profiling-float data) store the sea
   pressure a CTD measures, which ventflux assumes. A file that stores
   absolute pressure must use another name or subtract one atmosphere.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from .errors import Collector, InputError
from .tables import QuantityTable, read_quantity_table

#: CF standard name → (role in the cast, dimension).
STANDARD_NAMES = {
    "sea_water_pressure": ("pressure", "pressure"),
    "sea_water_pressure_due_to_sea_water": ("pressure", "pressure"),
    "depth": ("depth", "length"),
    "sea_water_temperature": ("temperature", "temperature"),
    "sea_water_practical_salinity": ("salinity", "dimensionless"),
    "sea_water_conservative_temperature": ("conservative_temperature", "temperature"),
    "sea_water_absolute_salinity": ("absolute_salinity", "dimensionless"),
    "sea_water_potential_temperature": ("potential_temperature", "temperature"),
}
#: File suffixes read as netCDF; every other suffix is read as CSV.
NETCDF_SUFFIXES = (".nc", ".nc4", ".cdf", ".netcdf")
#: Units written for practical salinity that mean a number on the PSS-78 scale (CF's is "1"; older files
#: wrote "1e-3" or "psu" for the same numbers; common practice, no source).
_PSS78_UNITS = {"", "1", "psu", "pss-78", "pss78", "pss", "1e-3", "0.001", "unitless", "dimensionless"}
_TEMPERATURE = {"temperature", "conservative_temperature", "potential_temperature"}
_SALINITY = {"salinity", "absolute_salinity"}


def read_cast_columns(source, latitude=None, longitude=None, profile=None) -> QuantityTable:
    """The columns of a CTD cast from a file path, an ``xarray.Dataset`` or a ``QuantityTable``.

    Parameters
    ----------
    source : path-like, xarray.Dataset or QuantityTable
        A CSV or netCDF file (by suffix, see the module notes), a Dataset
        with CF standard names, or columns already read.
    latitude, longitude : float, optional
        Degrees; used to convert TEOS-10 variables to in-situ temperature
        and practical salinity (and depth to pressure for that).
    profile : int or str, optional
        For a netCDF file or Dataset of several casts: the cast to read, by position (0 first) or by its
        ``profile_id`` (see the module notes).

    Returns
    -------
    QuantityTable
        ``temperature`` (in situ), ``salinity`` (practical) and ``depth``
        and/or ``pressure`` (sea pressure), with ``path`` naming the source
        in messages and ``lines`` each level's place in it.
    """
    if profile is not None and (isinstance(source, QuantityTable) or not (
            _is_dataset(source) or Path(source).suffix.lower() in NETCDF_SUFFIXES)):
        raise InputError("profile", str(profile), "no profile for a CSV cast (one cast per file); a profile "
                         "selects one cast of a netCDF file of several")
    if isinstance(source, QuantityTable):
        return source
    if _is_dataset(source):
        name = source.attrs.get("id") or source.attrs.get("title") or "xarray Dataset"
        return _from_dataset(source, f"dataset '{name}'", latitude, longitude, profile)
    path = Path(source)
    if path.suffix.lower() in NETCDF_SUFFIXES:
        return _from_netcdf(path, latitude, longitude, profile)
    return read_quantity_table(path, columns={"temperature": "temperature", "salinity": "dimensionless"},
                               optional={"depth": "length", "sea_pressure": "pressure", "pressure": "pressure"},
                               alternatives=[("depth", "sea_pressure", "pressure")])


def cast_from_arrays(temperature=None, salinity=None, depth=None, sea_pressure=None, conservative_temperature=None,
                     absolute_salinity=None, latitude=None, longitude=None, source="arrays") -> QuantityTable:
    """Columns of a cast given as quantity arrays (see ``ventflux.profiles.ambient_profile``)."""
    columns = {k: v for k, v in (("temperature", temperature), ("salinity", salinity), ("depth", depth),
                                 ("pressure", sea_pressure), ("conservative_temperature", conservative_temperature),
                                 ("absolute_salinity", absolute_salinity)) if v is not None}
    from .units import Q_

    for a, b in (("temperature", "conservative_temperature"), ("salinity", "absolute_salinity")):
        if a in columns and b in columns:
            raise InputError(f"{a} and {b}", "both given", f"one of {a} or {b} (the cast would be ambiguous)")
    n = {k: np.size(v.magnitude if hasattr(v, "magnitude") else v) for k, v in columns.items()}
    if len(set(n.values())) > 1:
        raise InputError("cast", ", ".join(f"{k}: {v} values" for k, v in n.items()),
                         "arrays of one length (one value per level)")
    columns = {k: (Q_(np.ravel(np.asarray(v.magnitude, float)), v.units) if hasattr(v, "units")
                   else Q_(np.ravel(np.asarray(v, float)), "dimensionless")) for k, v in columns.items()}
    size = next(iter(n.values()), 0)
    lines = np.array([f"level {i}" for i in range(size)], dtype=object)
    return _complete(columns, lines, source, latitude, longitude, errs=Collector())


# --------------------------------------------------------------------------- netCDF and xarray
def _is_dataset(obj) -> bool:
    return type(obj).__name__ == "Dataset" and hasattr(obj, "data_vars") and hasattr(obj, "attrs")


def _from_netcdf(path: Path, latitude, longitude, profile=None) -> QuantityTable:
    if not path.is_file():
        raise InputError("file", str(path), "an existing, readable netCDF file")
    try:
        import xarray as xr
    except ImportError:  # pragma: no cover - xarray is a dependency
        raise InputError("file", str(path), "a CSV cast (reading netCDF needs xarray and h5netcdf)") from None
    try:
        # decode_times=False: the cast's times are not needed, and odd calendars must not stop the read.
        with xr.open_dataset(path, decode_times=False) as ds:
            ds.load()
            return _from_dataset(ds, str(path), latitude, longitude, profile)
    except InputError:
        raise
    except Exception as exc:  # noqa: BLE001 - any reader failure is the file's problem, said in one line
        raise InputError("file", str(path), f"a readable netCDF file ({type(exc).__name__}: {exc})") from None


def _casts(ds) -> tuple[str, str, str, np.ndarray | None] | None:
    """How a Dataset holds several casts: ``(layout, dimension of the casts, dimension of the levels, array)``.

    ``("contiguous", casts, levels, count of levels per cast)``, ``("indexed", casts, levels, cast of each
    level)`` or ``("2d", casts, levels, None)`` (variables along (cast, level); a depth or pressure along the
    levels alone may be shared by every cast); None for one cast along one dimension.
    """
    for var in ds.variables.values():
        if "sample_dimension" in var.attrs and var.ndim == 1:
            return "contiguous", var.dims[0], str(var.attrs["sample_dimension"]), np.asarray(var.values)
    for var in ds.variables.values():
        if "instance_dimension" in var.attrs and var.ndim == 1:
            return "indexed", str(var.attrs["instance_dimension"]), var.dims[0], np.asarray(var.values)
    two = {var.dims for var in ds.variables.values()
           if str(var.attrs.get("standard_name", "")).strip() in STANDARD_NAMES and var.ndim == 2}
    if len(two) == 1:
        casts, levels = next(iter(two))
        return "2d", casts, levels, None
    return None


def _one_cast(ds, where: str, profile):
    """The Dataset of the one cast to read, and how messages name it (see the module notes)."""
    layout = _casts(ds)
    if layout is None:
        if profile is not None:
            raise InputError("profile", str(profile), "no profile: this file holds one cast", where=where)
        return ds, where
    kind, dim, obs, per = layout
    n = int(ds.sizes.get(dim, 0))
    if n == 0 and kind == "indexed" and per is not None and per.size:  # no variable along the casts themselves
        n = int(np.nanmax(per)) + 1
    ids = None
    for var in ds.variables.values():
        if str(var.attrs.get("cf_role", "")).strip() == "profile_id" and var.dims == (dim,):
            ids = [v.decode() if isinstance(v, bytes) else str(v) for v in np.asarray(var.values).tolist()]
    listing = f"0 to {n - 1}" + (f", or an identifier: {', '.join(ids[:12])}{' …' if n > 12 else ''}" if ids else "")
    if profile is None and n == 1:
        profile = 0
    if profile is None:
        raise InputError("profile", "(none)", f"one cast of the file's {n}, by position {listing}", where=where)
    k = -1
    if isinstance(profile, (int, np.integer)) and not isinstance(profile, bool):
        k = int(profile)
    elif ids is not None and str(profile) in ids:
        k = ids.index(str(profile))
    if not 0 <= k < n:
        raise InputError("profile", str(profile), f"one of the file's {n} casts: a position {listing}",
                         where=where)
    name = ids[k] if ids else k
    if kind == "2d":
        one = ds.isel({dim: k})
        # CF's incomplete multidimensional arrays pad a shorter cast with missing values: a level where every
        # variable of the cast is missing is padding, not a measurement (a level missing only some is an error)
        own = [v for v, var in ds.variables.items() if var.dims == (dim, obs)
               and str(var.attrs.get("standard_name", "")).strip() in STANDARD_NAMES]
        pad = np.all([~np.isfinite(np.asarray(one[v].values, float)) for v in own], axis=0)
        if pad.any():
            one = one.isel({obs: np.flatnonzero(~pad)})
            return one, f"{where} (cast {name}; {int(pad.sum())} padding levels of the file's layout left out)"
    else:
        counts = np.asarray(per)
        if kind == "contiguous":
            start = int(counts[:k].sum())
            rows = np.arange(start, start + int(counts[k]))
        else:
            rows = np.flatnonzero(counts == k)
        one = ds.isel({obs: rows})
    return one, f"{where} (cast {name})"


def _from_dataset(ds, where: str, latitude, longitude, profile=None) -> QuantityTable:
    ds, where = _one_cast(ds, where, profile)
    errs = Collector()
    found: dict = {}
    for name, var in {**dict(ds.coords), **dict(ds.data_vars)}.items():
        std = str(var.attrs.get("standard_name", "")).strip()
        if std not in STANDARD_NAMES:
            continue
        role = STANDARD_NAMES[std][0]
        if role in found:
            errs.add(InputError("variable", f"{name} ({std})", f"one variable per quantity; '{found[role][0]}' "
                                "has the same standard_name", where=where))
            continue
        found[role] = (name, var)
    if not any(r in found for r in ("depth", "pressure")):
        errs.add(InputError("variable", "(none)", "a variable with standard_name 'sea_water_pressure' or 'depth'",
                            where=where))
    if not _TEMPERATURE & set(found):
        errs.add(InputError("variable", "(none)", "a variable with standard_name 'sea_water_temperature', "
                            "'sea_water_conservative_temperature' or 'sea_water_potential_temperature'", where=where))
    if not _SALINITY & set(found):
        errs.add(InputError("variable", "(none)", "a variable with standard_name 'sea_water_practical_salinity' or "
                            "'sea_water_absolute_salinity'", where=where))
    errs.raise_if_any()
    dims = {found[r][1].dims for r in found}
    if len(dims) != 1 or len(next(iter(dims))) != 1:
        raise InputError("variable", ", ".join(f"{v[0]}{tuple(v[1].dims)}" for v in found.values()),
                         "one-dimensional variables along one dimension (the cast's levels); for a file of "
                         "several casts select one first, e.g. read_ctd_cast(ds.isel(profile=0))", where=where)
    dim = next(iter(dims))[0]
    columns = {}
    for role, (name, var) in found.items():
        with errs.check():
            columns[role] = _quantity(name, var, STANDARD_NAMES[var.attrs["standard_name"].strip()][1], where)
    errs.raise_if_any()
    lines = np.array([f"{dim}[{i}]" for i in range(ds.sizes[dim])], dtype=object)
    for role, (name, _) in found.items():
        for i in np.flatnonzero(~np.isfinite(columns[role].magnitude)):
            errs.add(InputError(name, "missing value", "a finite number at every level", where=f"{where}:{lines[i]}"))
    names = {role: name for role, (name, _) in found.items()}
    return _complete(columns, lines, where, latitude, longitude, errs, names)


def _quantity(name, var, dimension, where):
    from .units import DIMENSIONS, Q_, ureg

    raw = var.attrs.get("units")
    text = "" if raw is None else str(raw).strip()
    values = np.asarray(var.values, float)
    if dimension == "dimensionless" and STANDARD_NAMES[var.attrs["standard_name"].strip()][0] == "salinity":
        if text.lower() not in _PSS78_UNITS:
            raise InputError(f"{name}.units", text, "a practical salinity unit: '1' (CF), 'PSU' or '1e-3'",
                             where=where)
        return Q_(values, "dimensionless")
    if not text:
        raise InputError(f"{name}.units", "(missing)", "a units attribute", where=where)
    try:
        unit = ureg.parse_units(_pint_unit(text))
    except Exception:  # noqa: BLE001 - pint raises several kinds for an unknown unit
        raise InputError(f"{name}.units", text, f"a UDUNITS unit of {dimension}", where=where) from None
    q = Q_(values, unit)
    if not q.check(DIMENSIONS[dimension]):
        raise InputError(f"{name}.units", text, f"a unit of {dimension}", where=where)
    if name and var.attrs.get("standard_name", "").strip() == "depth" and \
            str(var.attrs.get("positive", "down")).strip().lower() == "up":
        q = Q_(-q.magnitude, q.units)  # CF: depth with positive="up" counts upward
    return q


#: UDUNITS spellings that pint does not read as written (CF section 3.1).
_UDUNITS = {"degree_celsius": "degC", "degrees_celsius": "degC", "celsius": "degC", "degree_c": "degC",
            "degrees_c": "degC", "deg_c": "degC", "degc": "degC", "decibars": "dbar", "decibar": "dbar",
            "meters": "m", "metres": "m", "meter": "m", "metre": "m", "degree_kelvin": "K", "kelvin": "K"}


def _pint_unit(text: str) -> str:
    """A UDUNITS unit string as pint reads it: ``g kg-1`` → ``g*kg**-1``, ``degree_Celsius`` → ``degC``."""
    low = text.strip()
    if low.lower() in _UDUNITS:
        return _UDUNITS[low.lower()]
    tokens = low.replace("·", " ").split()
    out = []
    for tok in tokens:
        m = re.fullmatch(r"([A-Za-z_]+)(-?\d+)", tok)
        if m:
            base = _UDUNITS.get(m.group(1).lower(), m.group(1))
            out.append(f"{base}**{m.group(2)}")
        else:
            out.append(_UDUNITS.get(tok.lower(), tok))
    return "*".join(out)


# --------------------------------------------------------------------------- TEOS-10 variables to in-situ
#: Which variable a cast is built from when a file holds several of one kind, first preferred; the others are
#: checked against it (``AGREEMENT``). TEOS-10's variables of state come first: SA and CT are what the
#: profile's densities and N² are computed from, and a file that gives them may include the salinity anomaly
#: of its position [2]_ of ``ventflux.profiles``.
PREFERENCE = (("conservative_temperature", "temperature", "potential_temperature"),
              ("absolute_salinity", "salinity"))
#: Largest disagreement accepted between two variables of one kind in a file: float32 storage and rounding of
#: temperatures [K]; for salinities, the size of TEOS-10's absolute-salinity anomaly, which a cast read without
#: a position cannot include (up to about 0.03 g/kg; from memory). A choice made here, no source.
AGREEMENT = {"conservative_temperature": 1e-3, "temperature": 1e-3, "potential_temperature": 1e-3,
             "absolute_salinity": 0.05, "salinity": 0.05}


def _complete(columns, lines, where, latitude, longitude, errs, names=None) -> QuantityTable:
    """In-situ temperature and practical salinity, from TEOS-10 variables where those were given.

    When a file holds several variables of one kind (in-situ and conservative temperature, say), the first of
    ``PREFERENCE`` is used and each other one must agree with it within ``AGREEMENT``, or the cast is refused.
    """
    import gsw

    from .properties.seawater import absolute_salinity
    from .units import Q_

    errs.raise_if_any()
    names = names or {}
    lat0 = 0.0 if latitude is None else float(latitude)
    if "pressure" in columns:
        p = columns["pressure"].to("dbar").magnitude
    else:
        p = gsw.p_from_z(-columns["depth"].to("m").magnitude, lat0)
    temperature, salinity = (next(r for r in group if r in columns) for group in PREFERENCE)
    out = {k: v for k, v in columns.items() if k in ("depth", "pressure")}
    if salinity == "salinity":
        sp = columns["salinity"].to("dimensionless").magnitude
    elif latitude is not None and longitude is not None:
        sp = gsw.SP_from_SA(columns["absolute_salinity"].to("g/kg").magnitude, p, float(longitude), float(latitude))
    else:  # the inverse of the reference salinity that profiles uses without a position
        sp = gsw.SP_from_SR(columns["absolute_salinity"].to("g/kg").magnitude)
    SA = absolute_salinity(sp, p, longitude, latitude)
    if temperature == "temperature":
        t = columns["temperature"].to("degC").magnitude
    else:
        CT = columns["conservative_temperature"].to("degC").magnitude if temperature == "conservative_temperature" \
            else gsw.CT_from_pt(SA, columns["potential_temperature"].to("degC").magnitude)
        t = gsw.t_from_CT(SA, CT, p)
    implied = {"conservative_temperature": lambda: (gsw.CT_from_t(SA, t, p), "degC"),
               "temperature": lambda: (t, "degC"),
               "potential_temperature": lambda: (gsw.pt0_from_t(SA, t, p), "degC"),
               "absolute_salinity": lambda: (SA, "g/kg"),
               "salinity": lambda: (sp, "dimensionless")}
    for role, tolerance in AGREEMENT.items():
        if role in columns and role not in (temperature, salinity):
            value, unit = implied[role]()
            gap = np.abs(columns[role].to(unit).magnitude - value)
            if np.nanmax(gap) > tolerance:
                i = int(np.nanargmax(gap))
                used = names.get(temperature if "temperature" in role else salinity, "the cast")
                shown = f"{columns[role][i].to(unit).magnitude:.6g}{'' if unit == 'dimensionless' else ' ' + unit}"
                errs.add(InputError(names.get(role, role), shown,
                                    f"a value that agrees with '{used}' within {tolerance:g} {unit} (TEOS-10 gives "
                                    f"{value[i]:.6g}); a file's variables of one kind must describe the same water",
                                    where=f"{where}:{lines[i]}"))
    errs.raise_if_any()
    out["temperature"] = Q_(t, "degC")
    out["salinity"] = Q_(sp, "dimensionless")
    return QuantityTable(path=Path(str(where)), columns=out, lines=lines)
