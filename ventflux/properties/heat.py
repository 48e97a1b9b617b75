"""The heat a vent fluid carries.

The heat carried per kilogram of vent fluid is the enthalpy difference
between the fluid at its exit temperature and the *same* fluid at ambient
temperature, both at the in-situ pressure, from *one* equation of state:
enthalpies from two equations of state have different reference states and
must never be subtracted.

The constant-c_p shortcut
-------------------------
People compare with the shortcut ``c_p (T − T_a)``; ventflux shows it beside
the enthalpy difference, never instead of it, with *one* definition
everywhere (orifice, diffuse, summarize water): ``c_p`` is TEOS-10's
``c_p0`` = 3991.868 J/(kg K) [1], the constant heat capacity that makes
conservative temperature proportional to potential enthalpy. It is a
constant, the same at every state, so the shortcut depends on nothing but
the temperature difference; the mass flux it is applied to is the one of
the enthalpy result. At 350 °C and 25 MPa (ambient 2 °C) the shortcut falls 12.7 %
short (the mean heat capacity of water between 2 and 350 °C is higher);
for a few kelvin of warming of 2 °C seawater at 20 MPa it reads 1.6 % high
(the in-situ heat capacity there is 3927 J/(kg K), IAPWS-08).

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010 (TEOS-10), Manuals and Guides No. 56, eq. (3.3.3).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pint

from ..errors import InputError
from ..units import Q_, magnitude
from .seawater import CP0

#: Heat capacity of the constant-c_p shortcut: TEOS-10's c_p0 [1], J/(kg K).
SHORTCUT_HEAT_CAPACITY = Q_(CP0, "J/(kg*K)")


def shortcut_heat_content(temperature, ambient_temperature, heat_capacity=SHORTCUT_HEAT_CAPACITY):
    """The constant-c_p shortcut ``c_p (T − T_a)`` [J/kg], for comparison only (see module notes).

    Parameters
    ----------
    temperature, ambient_temperature : pint.Quantity
        Warm and ambient temperatures (absolute temperatures).
    heat_capacity : pint.Quantity, default TEOS-10's c_p0 = 3991.868 J/(kg K) [1]

    Returns
    -------
    pint.Quantity
        Specific heat content by the shortcut [J/kg].
    """
    cp = heat_capacity
    if not (hasattr(cp, "check") and cp.check("[length] ** 2 / [time] ** 2 / [temperature]")):
        raise InputError("shortcut heat capacity", str(cp), "a specific heat capacity, e.g. '3992 J/(kg K)'")
    dT = (np.asarray(magnitude(temperature, "K", "temperature", "temperature"), float)
          - np.asarray(magnitude(ambient_temperature, "K", "temperature", "ambient temperature"), float))
    return (cp * Q_(dT, "K")).to("J/kg")


@dataclass(frozen=True)
class VentFluidState:
    enthalpy: pint.Quantity
    density: pint.Quantity


def _model(model):
    if model is None or isinstance(model, str):
        from .models import fluid_model

        return fluid_model(model or "iapws95-water")
    return model


def vent_fluid_state(temperature, pressure, model=None, field="temperature") -> VentFluidState:
    """Specific enthalpy and density of vent fluid at in-situ temperature and absolute pressure.

    Parameters
    ----------
    temperature, pressure : pint.Quantity
    model : FluidModel or str, optional
        Default: pure water, IAPWS-95.

    Returns
    -------
    VentFluidState
        Enthalpy [J/kg] in the model's own reference state, density [kg/m³].
    """
    m = _model(model)
    T = magnitude(temperature, "K", "temperature", field)
    p = magnitude(pressure, "Pa", "pressure", "pressure")
    m.check(T, p, field)
    h, d = m.enthalpy_density(T, p)
    return VentFluidState(Q_(h, "J/kg"), Q_(d, "kg/m^3"))


def _coldest_seawater(p):
    """Lowest in-situ freezing point of any seawater TEOS-10 covers (42 g/kg, air-saturated) [K] at ``p`` [Pa]."""
    from .seawater_heat import SA_MAX, freezing_temperature

    return freezing_temperature(SA_MAX, np.clip((np.asarray(p, float) - 101_325.0) / 1e4, 0, None)) + 273.15


def ambient_enthalpy(model, temperature, pressure, field="ambient temperature"):
    """Enthalpy [J/kg] of the vent-fluid model at the ambient end, down to seawater's freezing point.

    Ambient bottom water can be colder than 0.01 °C, the lower bound of
    IAPWS-95's stated range (the triple point), yet liquid: seawater freezes
    at −1.9 °C at the surface and lower at depth, and pure water under more
    than about 10 MPa melts below the triple-point temperature too. For the
    IAPWS-95 pure-water model the ambient end is then IAPWS-95's liquid
    continued below 0.01 °C (``_cold_liquid_continuation``), down to the
    freezing point of the saltiest seawater TEOS-10 covers at that pressure;
    IAPWS-95 itself extrapolates smoothly into the subcooled liquid (IAPWS
    R6-95(2018), from memory).
    The seawater model at the ambient end refuses water below its own
    freezing point. Other fluid models keep their own range.

    Parameters
    ----------
    model : FluidModel
    temperature, pressure : array_like
        Ambient temperature [K] and absolute pressure [Pa].

    Returns
    -------
    numpy.ndarray
        Specific enthalpy [J/kg] in the model's reference state.
    """
    T, p = np.broadcast_arrays(np.asarray(temperature, float), np.asarray(pressure, float))
    from .ventfluid import T_MIN

    cold = (T < T_MIN) if getattr(model, "name", None) == "iapws95-water" else np.zeros(T.shape, bool)
    if cold.any():
        floor = _coldest_seawater(p[cold])
        below = T[cold] < floor
        if below.any():
            i = np.flatnonzero(below)[0]
            raise InputError(field, f"{T[cold][i] - 273.15:.4g} degC",
                             f"liquid seawater, at or above {floor[i] - 273.15:.3f} degC (the freezing point of "
                             f"42 g/kg seawater at {p[cold][i] / 1e6:.4g} MPa, TEOS-10)")
    model.check(np.where(cold, T_MIN, T), p, field)  # pressure range, and everything but the cold end
    h = np.empty(T.shape)
    if (~cold).any():
        h[~cold], _ = model.enthalpy_density(T[~cold], p[~cold])
    if cold.any():
        h[cold] = _cold_liquid_continuation(model, T[cold], p[cold])
    return h


def _cold_liquid_continuation(model, T, p):
    """IAPWS-95 liquid enthalpy below 0.01 °C: the quadratic through the model's own values at 0.01, 1.01, 2.01 °C.

    Vectorized and consistent with the model's values above (the nodes are
    the model's own, tabulated or direct). Against IAPWS-95 solved directly
    in the liquid (CoolProp HEOS, phase imposed) it is within 2 J/kg down to
    seawater's freezing point at pressures up to 25 MPa, 6 J/kg at 50 MPa
    and 100 J/kg at 100 MPa (−11 °C), measured (``tests/test_seawater_heat.py``):
    below 1e-4 of a hot vent fluid's heat content (1.6 MJ/kg at 350 °C).
    """
    from .ventfluid import T_MIN

    nodes = T_MIN + np.array([0.0, 1.0, 2.0])
    hh, _ = model.enthalpy_density(np.broadcast_to(nodes[:, None], (3, p.size)), np.broadcast_to(p, (3, p.size)))
    x = T - T_MIN
    d1, d2 = hh[1] - hh[0], hh[2] - hh[1]
    return hh[0] + d1 * x + 0.5 * (d2 - d1) * x * (x - 1.0)


def specific_heat_content(temperature, ambient_temperature, pressure, model=None):
    """Heat carried per unit mass: h(T_exit, p) − h(T_ambient, p), one fluid model.

    Parameters
    ----------
    temperature : pint.Quantity
        Exit temperature of the vent fluid.
    ambient_temperature : pint.Quantity
        Temperature of the ambient seawater.
    pressure : pint.Quantity
        Absolute in-situ pressure.
    model : FluidModel or str, optional

    Returns
    -------
    pint.Quantity
        Specific enthalpy difference [J/kg].

    Raises
    ------
    InputError
        If the exit temperature is not above ambient, or a point lies outside
        the model's validity or in two-phase conditions.
    """
    m = _model(model)
    T = np.asarray(magnitude(temperature, "K", "temperature", "temperature"), float)
    Ta = np.asarray(magnitude(ambient_temperature, "K", "temperature", "ambient temperature"), float)
    p = np.asarray(magnitude(pressure, "Pa", "pressure", "pressure"), float)
    if np.any(T <= Ta):
        i = np.flatnonzero(np.broadcast_to(T <= Ta, np.broadcast(T, Ta).shape).ravel())[0]
        raise InputError("temperature", f"{np.broadcast_to(T, np.broadcast(T, Ta).shape).ravel()[i] - 273.15:.4g} degC",
                         "an exit temperature above the ambient temperature")
    m.check(T, p, "temperature")
    h1, _ = m.enthalpy_density(T, p)
    h0 = ambient_enthalpy(m, Ta, p)
    return Q_(h1 - h0, "J/kg")
