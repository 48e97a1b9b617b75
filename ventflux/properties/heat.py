"""The heat a vent fluid carries.

The heat carried per kilogram of vent fluid is the enthalpy difference
between the fluid at its exit temperature and the *same* fluid at ambient
temperature, both at the in-situ pressure, from *one* equation of state:
enthalpies from two equations of state have different reference states and
must never be subtracted.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..units import Q_, magnitude


@dataclass(frozen=True)
class VentFluidState:
    enthalpy: object
    density: object


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
