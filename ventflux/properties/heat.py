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
the enthalpy result. At 350 °C and 25 MPa the shortcut falls about 14 %
short (the mean heat capacity of water between 2 and 350 °C is higher).

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010 (TEOS-10), Manuals and Guides No. 56, eq. (3.3.3).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

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
    enthalpy: object
    density: object


def _model(model):
    if model is None or isinstance(model, str):
        from . import fluid_model

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
    m.check(Ta, p, "ambient temperature")
    m.check(T, p, "temperature")
    h1, _ = m.enthalpy_density(T, p)
    h0, _ = m.enthalpy_density(Ta, p)
    return Q_(h1 - h0, "J/kg")
