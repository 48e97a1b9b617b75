"""Ambient seawater from TEOS-10 through gsw.

Pressures: ventflux's public functions take *absolute* pressure (what the
vent-fluid equation of state needs). gsw takes *sea pressure* (absolute minus
one standard atmosphere, in dbar); the conversion happens here and nowhere
else. CTD casts report sea pressure, and ``pressure [dbar]`` columns are read
as such (see ``ventflux.profiles``).

Validity: ambient seawater must lie in TEOS-10's oceanographic standard
range (absolute salinity 0–42 g/kg, in-situ temperature from the freezing
point to 40 °C, sea pressure 0–10 000 dbar; ``seawater_heat.check_teos10``).
Heat capacity and enthalpy come from gsw's exact Gibbs-function routines
(``*_t_exact``), valid in all of that range; density and expansion from its
75-term expression in conservative temperature, fitted in the "oceanographic
funnel" [2] (gsw's ``infunnel``). The funnel sets no upper temperature above
500 dbar and, at depth, ends at about −2.3 °C, above the in-situ freezing
point: ambient water colder than that (polar or deep bottom water at its
freezing point) is accepted, with a 75-term density extrapolated by a few
kelvin: at the freezing point it differs from the exact Gibbs function's
(``gsw.rho_t_exact``) by 5e-8 at 1000 dbar, 1.5e-7 at 3000–5000 dbar and
5e-6 at 9000 dbar (measured). ``check_funnel`` remains for profiles. Warm seawater beyond
40 °C has its own joined model in ``seawater_heat``.

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010: Calculation and use of thermodynamic properties.
   Intergovernmental Oceanographic Commission, Manuals and Guides No. 56.
.. [2] McDougall, T. J. and Barker, P. M. (2011). Getting started with TEOS-10
   and the Gibbs Seawater (GSW) Oceanographic Toolbox, SCOR/IAPSO WG127.
"""

from __future__ import annotations

from dataclasses import dataclass

import gsw
import numpy as np
import pint

from ..errors import InputError
from ..units import Q_, magnitude

#: One standard atmosphere in Pa (the zero of sea pressure) [1].
STANDARD_ATMOSPHERE = 101_325.0
#: Practical salinity assumed for ambient seawater wherever none is given: 35,
#: the salinity of TEOS-10's Reference-Composition standard seawater [1]. Deep
#: water is 34.6-34.9 (from memory); the difference moves heat power by < 0.1 %.
REFERENCE_SALINITY = 35.0
#: TEOS-10's "specific heat" cp0 for conservative temperature, J/(kg K) [1], eq. (3.3.3).
CP0 = gsw.cp0 if hasattr(gsw, "cp0") else 3991.86795711963


@dataclass(frozen=True)
class SeawaterState:
    """Seawater at one or more in-situ points (arrays of quantities)."""

    absolute_salinity: pint.Quantity
    conservative_temperature: pint.Quantity
    density: pint.Quantity
    thermal_expansion: pint.Quantity  # with respect to conservative temperature
    heat_capacity: pint.Quantity  # isobaric, at in-situ temperature
    enthalpy: pint.Quantity  # specific enthalpy, TEOS-10's reference state
    sea_pressure: pint.Quantity


def sea_pressure_dbar(pressure) -> np.ndarray:
    """Absolute pressure (quantity) → sea pressure in dbar, as gsw wants it."""
    return (magnitude(pressure, "Pa", "pressure", "pressure") - STANDARD_ATMOSPHERE) / 1e4


def pressure_from_depth(depth, latitude=None):
    """Absolute in-situ pressure at ``depth`` below the sea surface (TEOS-10's ``p_from_z``).

    Parameters
    ----------
    depth : pint.Quantity
        Depth below the sea surface (positive down).
    latitude : pint.Quantity or float, optional
        Latitude in degrees north; 0° if not given (the latitude changes
        pressure at 2500 m by about 0.5 %).

    Returns
    -------
    pint.Quantity
        Absolute pressure (sea pressure plus one atmosphere).
    """
    z = magnitude(depth, "m", "length", "depth")
    if np.any(np.asarray(z) < 0):
        raise InputError("depth", f"{np.min(z):g} m", "a depth ≥ 0 m below the sea surface")
    lat = 0.0 if latitude is None else _degrees(latitude)
    p_sea = gsw.p_from_z(-np.asarray(z, float), lat)
    return Q_(p_sea * 1e4 + STANDARD_ATMOSPHERE, "Pa")


def _degrees(angle):
    return angle.to("degree").magnitude if hasattr(angle, "to") else np.asarray(angle, float)


def absolute_salinity(practical_salinity, sea_pressure, longitude=None, latitude=None):
    """Absolute salinity [g/kg]; the reference-composition value when no position is given."""
    sp = np.asarray(practical_salinity, float)
    if longitude is None or latitude is None:
        return gsw.SR_from_SP(sp)
    return gsw.SA_from_SP(sp, sea_pressure, _degrees(longitude), _degrees(latitude))


def _salinity_number(salinity):
    if hasattr(salinity, "to"):
        return np.asarray(salinity.to("dimensionless").magnitude, float)
    return np.asarray(salinity, float)


def check_funnel(SA, CT, p_sea, t=None, field="ambient temperature"):
    """Raise ``InputError`` for any point outside TEOS-10's oceanographic funnel [2]."""
    SA, CT, p_sea = np.broadcast_arrays(np.asarray(SA, float), np.asarray(CT, float), np.asarray(p_sea, float))
    inside = np.asarray(gsw.infunnel(SA, CT, p_sea), bool)
    if inside.all():
        return
    i = np.flatnonzero(~inside.ravel())[0]
    sa, ct, p = SA.ravel()[i], CT.ravel()[i], p_sea.ravel()[i]
    if not 0 <= sa <= 42:
        raise InputError("ambient salinity", f"{sa:.4g} g/kg absolute", "0 to 42 g/kg (TEOS-10 validity)")
    if not 0 <= p <= 8000:
        raise InputError("pressure", f"{p:.5g} dbar sea pressure", "0 to 8000 dbar (TEOS-10 validity)")
    shown = f"{t.ravel()[i] if t is not None else ct:.4g} degC"
    raise InputError(field, shown,
                     f"seawater between the freezing point and 40 degC at {p:.0f} dbar (TEOS-10 validity); "
                     "hot vent fluid belongs to the vent-fluid model")


def seawater_state(temperature, salinity, pressure, longitude=None, latitude=None, check=True) -> SeawaterState:
    """TEOS-10 properties of seawater at in-situ temperature, salinity and pressure.

    Parameters
    ----------
    temperature : pint.Quantity
        In-situ temperature.
    salinity : float or pint.Quantity
        Practical salinity (PSS-78, dimensionless).
    pressure : pint.Quantity
        Absolute pressure.
    longitude, latitude : optional
        Position for TEOS-10's absolute-salinity anomaly; without it the
        reference salinity (standard composition) is used.
    check : bool
        Refuse points outside TEOS-10's range (freezing point to 40 °C,
        0–42 g/kg, 0–10 000 dbar).

    Returns
    -------
    SeawaterState
    """
    t = np.asarray(magnitude(temperature, "degC", "temperature", "ambient temperature"), float)
    sp = _salinity_number(salinity)
    if np.any(sp < 0) or np.any(sp > 42):
        raise InputError("ambient salinity", f"{np.ravel(sp)[0]:g}", "a practical salinity from 0 to 42")
    p = sea_pressure_dbar(pressure)
    SA = absolute_salinity(sp, p, longitude, latitude)
    CT = gsw.CT_from_t(SA, t, p)
    if check:
        from .seawater_heat import check_teos10

        check_teos10(SA, t, p)
    return SeawaterState(
        absolute_salinity=Q_(SA, "g/kg"),
        conservative_temperature=Q_(CT, "degC"),
        density=Q_(gsw.rho(SA, CT, p), "kg/m^3"),
        thermal_expansion=Q_(gsw.alpha(SA, CT, p), "1/K"),  # 75-term; no caller here needs it exact
        heat_capacity=Q_(gsw.cp_t_exact(SA, t, p), "J/(kg*K)"),
        enthalpy=Q_(gsw.enthalpy_t_exact(SA, t, p), "J/kg"),
        sea_pressure=Q_(p, "dbar"),
    )


def buoyancy_frequency_squared(SA, CT, sea_pressure, latitude=0.0):
    """N² [1/s²] between the points of a profile (TEOS-10 ``Nsquared``).

    Parameters are plain arrays in TEOS-10's units (g/kg, °C, dbar), ordered
    downward; returns ``(N2, p_mid)`` with ``p_mid`` in dbar.
    """
    N2, p_mid = gsw.Nsquared(np.asarray(SA, float), np.asarray(CT, float), np.asarray(sea_pressure, float),
                             lat=_degrees(latitude) if latitude is not None else 0.0)
    return Q_(N2, "1/s^2"), Q_(p_mid, "dbar")
