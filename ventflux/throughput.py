"""Water throughput of a vent: from heat power to mass and volume flux.

A vent that discharges heat power ``P`` carries it in fluid whose specific
heat content is the enthalpy difference ``Δh = h(T, p) − h(T_a, p)`` between
the exit temperature ``T`` and the ambient temperature ``T_a`` at the in-situ
pressure ``p``, both ends from the same equation of state (IAPWS-95 pure
water, ``ventflux.properties.specific_heat_content``). The mass flux is
``P / Δh``; its volume at the vent is ``ṁ / ρ(T, p)`` (IAPWS-95) and the
volume of seawater drawn in at ambient conditions is ``ṁ / ρ_sw(T_a, S, p)``
(TEOS-10). The constant-c_p shortcut ``c_p0 ΔT`` (one definition for the
package, ``ventflux.properties.heat.shortcut_heat_content``: TEOS-10's c_p0) is
returned beside it, to show what the shortcut would have said; it is never
used for the answer.

Every function takes pint quantities, scalars or arrays (Monte Carlo draws),
and broadcasts them.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance.
.. [2] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010. IOC Manuals and Guides No. 56.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pint

from .errors import InputError
from .orifice import DEFAULT_AMBIENT_SALINITY
from .properties import seawater_state, specific_heat_content, vent_fluid_state
from .properties.heat import shortcut_heat_content
from .units import Q_, magnitude


@dataclass(frozen=True)
class WaterThroughput:
    """Fluid carried by a vent's heat power (all quantities, broadcast shape)."""

    specific_heat_content: pint.Quantity  # Δh, J/kg, IAPWS-95 at both ends
    mass_flux: pint.Quantity  # kg/s
    volume_flux_vent: pint.Quantity  # m³/s at exit temperature and in-situ pressure
    volume_flux_ambient: pint.Quantity  # m³/s of ambient seawater
    annual_mass: pint.Quantity  # kg/yr
    annual_volume: pint.Quantity  # km³/yr of ambient seawater
    vent_density: pint.Quantity
    ambient_density: pint.Quantity
    shortcut_heat_content: pint.Quantity  # c_p0 · (T − T_a), J/kg, for comparison only
    shortcut_mass_flux: pint.Quantity  # P / (c_p ΔT), kg/s, for comparison only


def water_throughput(power, temperature, pressure, ambient_temperature, salinity=DEFAULT_AMBIENT_SALINITY, model=None):
    """Mass and volume flux and annual throughput of fluid carrying ``power``.

    Parameters
    ----------
    power : pint.Quantity
        Heat power of the vent (> 0).
    temperature : pint.Quantity
        Exit temperature of the vent fluid.
    pressure : pint.Quantity
        Absolute in-situ pressure.
    ambient_temperature : pint.Quantity
        In-situ temperature of the ambient seawater.
    salinity : float or pint.Quantity, default 35
        Practical salinity of the ambient seawater (for its TEOS-10 density
        and heat capacity); the default is TEOS-10's Reference-Composition
        salinity, as for the orifice estimate.
    model : str or FluidModel, optional
        Vent-fluid equation of state; default IAPWS-95 pure water [1].

    Returns
    -------
    WaterThroughput

    References
    ----------
    .. [1] IAPWS R6-95(2018).
    .. [2] IOC, SCOR and IAPSO (2010), TEOS-10.
    """
    P = magnitude(power, "W", "power", "power")
    if np.any(np.asarray(P) <= 0):
        raise InputError("power", f"{np.min(P):g} W", "a heat power > 0")
    dh = specific_heat_content(temperature, ambient_temperature, pressure, model).to("J/kg")
    vent = vent_fluid_state(temperature, pressure, model)
    amb = seawater_state(ambient_temperature, salinity, pressure)
    mdot = Q_(P, "W") / dh
    shortcut = shortcut_heat_content(temperature, ambient_temperature)
    per_year = Q_(1.0, "year")
    return WaterThroughput(
        specific_heat_content=dh,
        mass_flux=mdot.to("kg/s"),
        volume_flux_vent=(mdot / vent.density).to("m^3/s"),
        volume_flux_ambient=(mdot / amb.density).to("m^3/s"),
        annual_mass=(mdot * per_year).to("kg") / per_year,
        annual_volume=(mdot / amb.density * per_year).to("km^3") / per_year,
        vent_density=vent.density,
        ambient_density=amb.density,
        shortcut_heat_content=shortcut,
        shortcut_mass_flux=(Q_(P, "W") / shortcut).to("kg/s"),
    )
