"""Ambient water-column profiles: a CTD cast, or a constant buoyancy frequency.

A CTD cast is a CSV whose headers carry units (``ventflux.tables``): a depth
or a pressure column, in-situ ``temperature`` and practical ``salinity``::

    pressure [dbar],temperature [degC],salinity
    1800.0,2.61,34.58
    ...

A ``pressure`` column is *sea pressure* (zero at the sea surface), as CTDs
report it; a ``depth`` column is metres below the sea surface, positive down.
With only one of them the other follows from TEOS-10's ``p_from_z`` /
``z_from_p`` at the given latitude (0° if none). TEOS-10 [1]_ then gives
absolute salinity (the position-dependent anomaly when latitude and
longitude are both given, the reference salinity otherwise), conservative
temperature, potential density (reference 0 dbar) and the squared buoyancy
frequency N² (``gsw.Nsquared``).

Processing, in this order:

1. **Order.** Depths must increase (down-cast) or decrease (up-cast) strictly
   from row to row; a cast with loops or repeated depths is refused, naming
   the first line that breaks the order. Up-casts are reversed.
2. **Validity.** Every row must lie in TEOS-10's oceanographic funnel [2]_,
   and no temperature or salinity sample may be a spike: a sample whose
   ``|V2 − (V1 + V3)/2| − |(V3 − V1)/2|`` against its neighbours in depth
   exceeds 6 °C / 0.9 above 500 dbar and 2 °C / 0.3 at or below it (the spike
   test of a profiling-float programme's real-time quality control [3]_;
   thresholds from memory) is refused, naming its line.
3. **Binning.** Rows are averaged in depth bins ``window`` wide (default
   ``DEFAULT_WINDOW``, 5 m; ``window=None`` keeps every row). Averaging SA and
   CT (not in-situ temperature) keeps the averages conservative. This removes
   sensor noise and salinity spiking at scales far below a plume's rise of
   tens to hundreds of metres while keeping the structure that sets it (a
   choice made here; common practice, no source).
4. **Stability.** N² < 0 between bins is kept when the unstable stretch is
   short (a noise or mixing inversion; the plume model works with densities
   directly and copes with it), and the cast is refused when a contiguous
   unstable stretch is longer than ``max_unstable`` (default
   ``DEFAULT_MAX_UNSTABLE``, 50 m; a choice made here, no source), because a
   water column overturning over such a height is not steady.

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation of
   seawater – 2010: Calculation and use of thermodynamic properties.
   Intergovernmental Oceanographic Commission, Manuals and Guides No. 56.
.. [2] McDougall, T. J. and Barker, P. M. (2011). Getting started with TEOS-10
   and the Gibbs Seawater (GSW) Oceanographic Toolbox, SCOR/IAPSO WG127.
.. [3] Wong, A., Keeley, R., Carval, T. and the Argo Data Management Team
   (2020). Argo Quality Control Manual for CTD and Trajectory Data, version
   3.3, doi:10.13155/33951, §2.1.2, real-time test 9 (spike test).
"""

from __future__ import annotations

from dataclasses import dataclass

import gsw
import numpy as np
import pint

from .errors import Collector, InputError
from .properties.seawater import absolute_salinity, check_funnel, sea_pressure_dbar
from .ctd_formats import read_cast_columns
from .units import Q_, check_units, magnitude, require_dimension

#: Default bin width for a CTD cast (a choice made here; see the module notes).
DEFAULT_WINDOW = Q_(5.0, "m")
#: Longest contiguous stretch with N² < 0 that a cast may have (a choice made here).
DEFAULT_MAX_UNSTABLE = Q_(50.0, "m")
#: Grid spacing of a constant-N profile (a choice: linear interpolation on it is exact to < 1e-6 K).
CONSTANT_N_SPACING = Q_(2.0, "m")


from .presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(frozen=True, repr=False)
class AmbientProfile(Presentable):
    """A water column ordered by increasing depth; every field a quantity array.

    Attributes
    ----------
    depth : metres below the sea surface (positive down, increasing).
    sea_pressure : dbar (absolute pressure minus one standard atmosphere).
    temperature : in-situ temperature.
    practical_salinity : PSS-78 (dimensionless).
    absolute_salinity, conservative_temperature : TEOS-10 (g/kg, degC).
    potential_density : TEOS-10 density at the sea surface pressure (kg/m³).
    buoyancy_frequency_squared : N² (1/s²) at ``n2_depth``, between the points.
    n2_depth : depths of the N² values (midpoints).
    latitude, longitude : degrees, or None.
    source : where the profile came from (a file path, or ``"constant N"``).
    window : bin width used (None: no binning).
    """

    depth: pint.Quantity
    sea_pressure: pint.Quantity
    temperature: pint.Quantity
    practical_salinity: pint.Quantity
    absolute_salinity: pint.Quantity
    conservative_temperature: pint.Quantity
    potential_density: pint.Quantity
    buoyancy_frequency_squared: pint.Quantity
    n2_depth: pint.Quantity
    latitude: float | None
    longitude: float | None
    source: str
    window: pint.Quantity | None = None

    def mean_buoyancy_frequency(self, lower_depth, height):
        """Depth-weighted mean N over ``height`` above ``lower_depth``: sqrt(∫N² dz / height).

        Negative stretches count against the mean; a non-positive mean gives NaN.
        Arrays broadcast; plain SI floats in and out (m, 1/s).
        """
        z2 = np.asarray(lower_depth, float)
        z1 = z2 - np.asarray(height, float)
        d = self.n2_depth.to("m").magnitude
        n2 = self.buoyancy_frequency_squared.to("1/s^2").magnitude
        # Cumulative integral of N² on the midpoint grid, then differences.
        dd = np.concatenate([[self.depth[0].to("m").magnitude], d, [self.depth[-1].to("m").magnitude]])
        nn = np.concatenate([[n2[0]], n2, [n2[-1]]])
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (nn[1:] + nn[:-1]) * np.diff(dd))])
        integral = np.interp(z2, dd, cum) - np.interp(z1, dd, cum)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = integral / (z2 - z1)
        return np.where(mean > 0, np.sqrt(np.abs(mean)), np.nan)


def _degrees(x, field):
    if x is None:
        return None
    from .limits import check_position

    v = float(x.to("degree").magnitude) if hasattr(x, "to") else float(x)
    return check_position("latitude" if field == "latitude" else "longitude", v, field)


def read_ctd_cast(path, latitude=None, longitude=None, window=DEFAULT_WINDOW,
                  max_unstable=DEFAULT_MAX_UNSTABLE, profile=None) -> AmbientProfile:
    """Read and process a CTD cast into an ``AmbientProfile``.

    Parameters
    ----------
    path : path-like or xarray.Dataset
        CSV with ``depth [m]`` and/or ``sea_pressure [dbar]`` (formerly ``pressure``),
        ``temperature [degC]`` (in situ) and ``salinity`` (practical); or a
        netCDF file (``.nc``) or an ``xarray.Dataset`` whose variables carry
        CF standard names and units (``ventflux.ctd_formats``).
    latitude, longitude : float (degrees) or pint.Quantity, optional
        Position; latitude sets gravity and the depth–pressure relation, and
        both together give TEOS-10's absolute-salinity anomaly.
    window : pint.Quantity (length) or None
        Bin width (see the module notes); None keeps every row.
    max_unstable : pint.Quantity (length)
        Longest contiguous stretch with N² < 0 that is accepted.
    profile : int or str, optional
        For a netCDF file of several casts (CF profiles): which one, by position (0 first) or identifier.

    Returns
    -------
    AmbientProfile

    Raises
    ------
    InputError or InputErrors
        Missing columns, non-numeric cells, a non-monotonic or unstable cast,
        or rows outside TEOS-10's validity, each with file and line.
    """
    lat = _degrees(latitude, "latitude")
    lon = _degrees(longitude, "longitude")
    # A CSV or netCDF file (by suffix), an xarray Dataset, or arrays: the same columns (ventflux.ctd_formats).
    tbl = read_cast_columns(path, lat, lon, profile)
    path = tbl.path  # how messages and the profile's ``source`` name the cast
    where = lambda i: f"{path}:{tbl.lines[i]}"  # noqa: E731
    lat0 = 0.0 if lat is None else lat
    # "pressure" is the column's name before ventflux.vocabulary (sea pressure too), read for one release.
    sea = "sea_pressure" if "sea_pressure" in tbl else "pressure" if "pressure" in tbl else None
    if sea is not None:
        p = tbl[sea].to("dbar").magnitude  # sea pressure, as a CTD reports it
        key, label = p, sea
    if "depth" in tbl:
        z = tbl["depth"].to("m").magnitude
        key, label = z, "depth"
    # Absurd rows (a pressure of 1e30 dbar) are refused below with their values as written; the TEOS-10
    # arithmetic on them may overflow meanwhile, which is no news to the user (numpy would print it).
    with np.errstate(all="ignore"):
        if sea is None:
            p = gsw.p_from_z(-z, lat0)
        if "depth" not in tbl:
            z = -gsw.z_from_p(p, lat0)
    # Every problem of the cast at once: each row outside the ocean's ranges, then the order of the others.
    errs = Collector()
    t = tbl["temperature"].to("degC").magnitude
    sp = tbl["salinity"].to("dimensionless").magnitude
    rows_ok = np.ones(z.size, bool)
    out_of_ocean = ~((z >= 0) & (z <= 11000))  # NaN too; checked on the depth, named by the column read
    rows_ok &= ~out_of_ocean
    for i in np.flatnonzero(out_of_ocean):
        allowed = ("a value from 0 to 11000" if label == "depth" else
                   f"a sea pressure from 0 to {float(gsw.p_from_z(-11000.0, lat0)):.0f} dbar (11000 m depth at the "
                   "cast's latitude)")
        errs.add(InputError(label, f"{key[i]:g}", allowed, where=where(i)))
    bad_salinity = ~((sp >= 0) & (sp <= 42))
    rows_ok &= ~bad_salinity
    for i in np.flatnonzero(bad_salinity):
        errs.add(InputError("salinity", f"{sp[i]:g}", "a value from 0 to 42", where=where(i)))
    inside = np.flatnonzero(~out_of_ocean)  # the order of the rows in the ocean: one absurd row is one error
    step = np.diff(key[inside])
    if inside.size > 1:
        sign = 1.0 if step[0] > 0 else -1.0
        bad = np.flatnonzero(~(sign * step > 0))
        if bad.size:
            i, before = inside[bad[0] + 1], inside[bad[0]]
            errs.add(InputError(label, f"{key[i]:g}", f"values that strictly {'increase' if sign > 0 else 'decrease'} "
                                f"row by row (a single down- or up-cast); after {key[before]:g}", where=where(i)))
    order = np.argsort(z)
    with np.errstate(all="ignore"):
        SA = absolute_salinity(np.clip(sp, 0, 42), np.clip(p, 0, None), lon, lat)
        CT = gsw.CT_from_t(SA, t, p)
        outside = np.flatnonzero(~np.asarray(gsw.infunnel(SA, CT, p), bool) & rows_ok)
    for i in outside:
        errs.add(InputError("temperature", f"{t[i]:g} degC at {p[i]:.0f} dbar",
                            "seawater within TEOS-10's validity (freezing point to 40 degC, 0-8000 dbar)",
                            where=where(i)))
    valid = rows_ok.copy()
    valid[outside] = False
    for e in _check_spikes(z, p, t, sp, order, where, valid):
        errs.add(e)
    errs.raise_if_any()
    z, p, SA, CT, t, sp = (a[order] for a in (z, p, SA, CT, t, sp))
    if window is not None:
        w = float(magnitude(require_dimension(window, "length", "window"), "m"))
        if not w > 0:
            raise InputError("window", f"{window:~P}", "a bin width > 0 m, or none")
        z, p, SA, CT, t, sp = _bin(w, z, p, SA, CT, t, sp)
    if z.size < 3:
        raise InputError("ctd cast", str(path), "at least 3 depth levels after binning (a longer cast or a "
                         "narrower window)")
    prof = _profile(z, p, SA, CT, t, sp, lat, lon, str(path), window)
    _check_stability(prof, max_unstable, path)
    return prof


@check_units(temperature="temperature", salinity="dimensionless", depth="length", sea_pressure="pressure",
             conservative_temperature="temperature", absolute_salinity="dimensionless")
def ambient_profile(*, depth=None, sea_pressure=None, temperature=None, salinity=None, conservative_temperature=None,
                    absolute_salinity=None, latitude=None, longitude=None, window=DEFAULT_WINDOW,
                    max_unstable=DEFAULT_MAX_UNSTABLE, source="arrays") -> AmbientProfile:
    """An ``AmbientProfile`` from arrays, processed exactly as a cast read from a file.

    Parameters
    ----------
    depth : pint.Quantity (length), optional
        Depth below the sea surface, positive down, one value per level.
    sea_pressure : pint.Quantity (pressure), optional
        Sea pressure (absolute minus one standard atmosphere); give it, the
        depth, or both.
    temperature : pint.Quantity (temperature), optional
        In-situ temperature; or give ``conservative_temperature``.
    salinity : float array or dimensionless pint.Quantity, optional
        Practical salinity (PSS-78); or give ``absolute_salinity``.
    conservative_temperature : pint.Quantity, optional
        TEOS-10 conservative temperature.
    absolute_salinity : pint.Quantity (e.g. g/kg), optional
        TEOS-10 absolute salinity.
    latitude, longitude, window, max_unstable
        As for ``read_ctd_cast``.
    source : str
        How messages and the profile name the cast.

    Returns
    -------
    AmbientProfile

    Examples
    --------
    >>> from ventflux.units import Q_
    >>> prof = ambient_profile(depth=Q_([1500, 1700, 1900, 2100], "m"), temperature=Q_([3.1, 2.8, 2.5, 2.3], "degC"),
    ...                        salinity=[34.55, 34.58, 34.6, 34.62], window=None)
    >>> prof.depth.size
    4
    """
    from .ctd_formats import cast_from_arrays

    for given, names in (((depth, sea_pressure), "depth or sea_pressure"),
                         ((temperature, conservative_temperature), "temperature or conservative_temperature"),
                         ((salinity, absolute_salinity), "salinity or absolute_salinity")):
        if all(g is None for g in given):
            raise InputError(names, "(missing)", f"one of {names}")
    cast = cast_from_arrays(temperature=temperature, salinity=salinity, depth=depth, sea_pressure=sea_pressure,
                            conservative_temperature=conservative_temperature, absolute_salinity=absolute_salinity,
                            latitude=_degrees(latitude, "latitude"), longitude=_degrees(longitude, "longitude"),
                            source=source)
    return read_ctd_cast(cast, latitude=latitude, longitude=longitude, window=window, max_unstable=max_unstable)


def _bin(w, z, *cols):
    """Average every column in depth bins ``w`` wide; empty bins are dropped."""
    k = np.floor((z - z[0]) / w).astype(int)
    counts = np.bincount(k)
    keep = counts > 0
    out = [np.bincount(k, weights=c)[keep] / counts[keep] for c in (z, *cols)]
    return out


def _profile(z, p, SA, CT, t, sp, lat, lon, source, window):
    n2, p_mid = gsw.Nsquared(SA, CT, p, lat=0.0 if lat is None else lat)
    z_mid = 0.5 * (z[1:] + z[:-1])
    return AmbientProfile(
        depth=Q_(z, "m"), sea_pressure=Q_(p, "dbar"), temperature=Q_(t, "degC"),
        practical_salinity=Q_(sp, "dimensionless"), absolute_salinity=Q_(SA, "g/kg"),
        conservative_temperature=Q_(CT, "degC"), potential_density=Q_(gsw.rho(SA, CT, 0.0), "kg/m^3"),
        buoyancy_frequency_squared=Q_(n2, "1/s^2"), n2_depth=Q_(z_mid, "m"),
        latitude=lat, longitude=lon, source=source, window=window)


#: Spike test of a cast (a profiling-float programme's real-time QC, test 9 [3]_; thresholds from memory):
#: a sample whose
#: ``|V2 − (V1 + V3)/2| − |(V3 − V1)/2|`` against its neighbours in depth exceeds the threshold is a spike.
#: (sea pressure from which the deep threshold applies [dbar], shallow and deep threshold).
SPIKE_DEEP_FROM = 500.0
SPIKE_TEMPERATURE = (6.0, 2.0)  # degC
SPIKE_SALINITY = (0.9, 0.3)  # practical salinity


def spike_test_value(v):
    """``|V2 − (V1 + V3)/2| − |(V3 − V1)/2|`` of each interior sample of ``v`` (NaN at both ends).

    The spike test of a profiling-float programme's real-time quality control [3]_: large where one
    sample departs from both its neighbours in the same direction, zero across
    a steady gradient or a single step.

    Examples
    --------
    >>> spike_test_value(np.array([2.0, 2.0, 0.0, 2.0, 2.0]))
    array([nan,  0.,  2.,  0., nan])
    """
    v = np.asarray(v, float)
    out = np.full(v.shape, np.nan)
    out[1:-1] = np.abs(v[1:-1] - 0.5 * (v[2:] + v[:-2])) - np.abs(0.5 * (v[2:] - v[:-2]))
    return out


def _check_spikes(z, p, t, sp, order, where, valid) -> list[InputError]:
    """One error per spiked sample (temperature or salinity), in depth order, naming the file's line.

    Rows already refused for their range (``valid`` False) are not reported again.

    The binning averages a spike into a bin, where it can still fold the
    stratification over (a cold spike of 2 K in a 5 m bin of a deep cast is
    a density step no plume crosses): the run would then find draws without a
    plume solution that ``--check`` never saw. Spikes are refused at reading,
    with the published test and its thresholds.
    """
    out: list[InputError] = []
    if z.size < 3:
        return out
    ps = p[order]
    deep = ps >= SPIKE_DEEP_FROM
    for name, v, unit, (shallow, deep_limit) in (("temperature", t, " degC", SPIKE_TEMPERATURE),
                                                 ("salinity", sp, "", SPIKE_SALINITY)):
        test = spike_test_value(v[order])
        limit = np.where(deep, deep_limit, shallow)
        with np.errstate(invalid="ignore"):
            bad = np.flatnonzero((test > limit) & valid[order])
        for j in bad:
            i = order[j]
            out.append(InputError(name, f"{v[i]:g}{unit} at {ps[j]:.0f} dbar",
                                  f"no spike: within {limit[j]:g}{unit} of its neighbours' mean beyond their own "
                                  f"difference (real-time spike test, {'at or below' if deep[j] else 'above'} "
                                  f"{SPIKE_DEEP_FROM:g} dbar); remove the sample or correct it", where=where(i)))
    return out


def _check_stability(prof, max_unstable, path):
    limit = float(magnitude(require_dimension(max_unstable, "length", "max_unstable"), "m"))
    z = prof.depth.to("m").magnitude
    neg = prof.buoyancy_frequency_squared.magnitude < 0
    # Runs of consecutive negative intervals: interval i spans z[i]..z[i+1].
    edges = np.diff(np.concatenate([[0], neg.astype(int), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    for s, e in zip(starts, ends):
        length = z[e] - z[s]
        if length > limit:
            raise InputError("ctd cast", str(path),
                             f"a statically stable cast: N² < 0 from {z[s]:.0f} m to {z[e]:.0f} m depth "
                             f"({length:.0f} m, more than the {limit:g} m allowed)")


def constant_stratification(buoyancy_frequency, temperature, salinity, depth=None, pressure=None,
                            latitude=None, longitude=None, height=None,
                            spacing=CONSTANT_N_SPACING) -> AmbientProfile:
    """A water column with constant N above a vent, built with TEOS-10.

    Absolute salinity is uniform and conservative temperature increases
    upward so that N² = g α_Θ dΘ/dz is the same everywhere (α_Θ evaluated at
    each level's own Θ and pressure) [1]_.

    Parameters
    ----------
    buoyancy_frequency : pint.Quantity (frequency)
        N > 0.
    temperature : pint.Quantity
        In-situ temperature at the vent depth.
    salinity : float or pint.Quantity
        Practical salinity at the vent depth.
    depth, pressure : pint.Quantity
        The vent's depth below the sea surface, or its *absolute* pressure
        (ventflux's convention for a single value); give one.
    latitude, longitude : optional
        Degrees.
    height : pint.Quantity (length), optional
        Height of the column above the vent; default up to the sea surface.
    spacing : pint.Quantity (length)
        Grid spacing.

    Returns
    -------
    AmbientProfile
    """
    N = float(magnitude(require_dimension(buoyancy_frequency, "frequency", "buoyancy frequency"), "1/s"))
    if not N > 0:
        raise InputError("buoyancy frequency", f"{buoyancy_frequency:~P}", "a buoyancy frequency N > 0 s^-1")
    return _column(N, temperature, salinity, depth, pressure, latitude, longitude, height, spacing, "constant N")


def uniform_ambient(temperature, salinity, depth=None, pressure=None, latitude=None, longitude=None,
                    height=None, spacing=CONSTANT_N_SPACING) -> AmbientProfile:
    """An unstratified column (uniform SA and CT, N = 0) above a vent; see ``constant_stratification``."""
    return _column(0.0, temperature, salinity, depth, pressure, latitude, longitude, height, spacing, "uniform")


def vent_depth_of(depth=None, pressure=None, latitude=None):
    """Vent depth [m] from a depth or an absolute pressure (exactly one must be given)."""
    if (depth is None) == (pressure is None):
        raise InputError("vent depth", "both" if depth is not None else "neither",
                         "exactly one of a depth or a pressure for the vent")
    lat = 0.0 if latitude is None else latitude
    if depth is not None:
        z = float(magnitude(require_dimension(depth, "length", "depth"), "m"))
        if not 0 < z <= 11000:
            raise InputError("depth", f"{depth:~P}", "a depth below the sea surface, 0 to 11000 m")
        return z
    ps = float(sea_pressure_dbar(require_dimension(pressure, "pressure", "pressure")))
    if not 0 < ps <= 8000:
        raise InputError("pressure", f"{pressure:~P}", "an absolute pressure above one atmosphere, up to 80 MPa "
                         "(TEOS-10 validity)")
    return float(-gsw.z_from_p(ps, lat))


def _column(N, temperature, salinity, depth, pressure, latitude, longitude, height, spacing, source):
    lat = _degrees(latitude, "latitude")
    lon = _degrees(longitude, "longitude")
    lat0 = 0.0 if lat is None else lat
    zv = vent_depth_of(depth, pressure, lat0)
    h = zv if height is None else float(magnitude(require_dimension(height, "length", "height"), "m"))
    if not 0 < h <= zv:
        raise InputError("height", f"{h:g} m", f"a column height from 0 to the vent depth, {zv:g} m")
    dz = float(magnitude(spacing, "m", "length", "spacing"))
    n = max(int(np.ceil(h / dz)), 2)
    z = np.linspace(zv - h, zv, n + 1)
    p = gsw.p_from_z(-z, lat0)
    t0 = float(magnitude(require_dimension(temperature, "temperature", "ambient temperature"), "degC"))
    sp0 = float(salinity.to("dimensionless").magnitude) if hasattr(salinity, "to") else float(salinity)
    if not 0 <= sp0 <= 42:
        raise InputError("ambient salinity", f"{sp0:g}", "a practical salinity from 0 to 42")
    SA0 = float(absolute_salinity(sp0, p[-1], lon, lat))
    CT0 = float(gsw.CT_from_t(SA0, t0, p[-1]))
    check_funnel(SA0, CT0, p[-1], np.asarray(t0))
    SA = np.full_like(z, SA0)
    CT = np.full_like(z, CT0)
    if N > 0:
        g = gsw.grav(lat0, p)
        rise = zv - z  # height above the vent
        for _ in range(4):  # fixed point: α depends on the Θ being built
            rate = N * N / (g * gsw.alpha(SA, CT, p))
            # cumulative trapezoid from the vent upward (arrays run top to bottom)
            seg = 0.5 * (rate[1:] + rate[:-1]) * -np.diff(rise)
            CT = CT0 + np.concatenate([np.cumsum(seg[::-1])[::-1], [0.0]])
        check_funnel(SA, CT, p, field="ambient temperature (top of the constant-N column)")
    t = gsw.t_from_CT(SA, CT, p)
    sp = gsw.SP_from_SA(SA, p, 0.0 if lon is None else lon, lat0) if lon is not None and lat is not None \
        else gsw.SP_from_SR(SA)
    prof = _profile(z, p, SA, CT, t, sp, lat, lon, source, None)
    return prof
