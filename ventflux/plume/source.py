"""Plume sources: a forced plume from an orifice's fluxes, or a pure plume of given heat power.

A forced plume is described by its fluxes at the orifice, Boussinesq
bookkeeping at the ambient density ρ_a as the integral model uses it [1]_:
volume flux Q0 = ṁ/ρ_a, momentum flux M0 = ṁ ū/ρ_a (ṁ the vent fluid's mass
flux, ū its area-mean exit velocity), the heat power H it carries above
ambient (an enthalpy difference in one vent-fluid model), and an optional
absolute-salinity anomaly flux. The vent fluid is taken at the ambient's
salinity unless a salt anomaly is given (the vent-fluid model is pure water
and carries no salinity of its own).

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1–23.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pint

from ..errors import InputError
from ..orifice import DEFAULT_AMBIENT_SALINITY
from ..properties import seawater_state, specific_heat_content, vent_fluid_state
from ..units import Q_, magnitude, require_dimension


@dataclass(frozen=True)
class PlumeSource:
    """Source fluxes of a forced plume (quantities; arrays broadcast)."""

    volume_flux: pint.Quantity  # m³/s at ambient density
    momentum_flux: pint.Quantity  # m⁴/s²
    heat_power: pint.Quantity  # W above ambient
    salt_flux: pint.Quantity | None = None  # (g/kg)·m³/s, SA anomaly flux; None = ambient salinity

    def si(self):
        """(Q0, M0, H, S) as plain SI arrays."""
        S = 0.0 if self.salt_flux is None else self.salt_flux.to("g/kg*m^3/s").magnitude
        return (self.volume_flux.to("m^3/s").magnitude, self.momentum_flux.to("m^4/s^2").magnitude,
                self.heat_power.to("W").magnitude, S)


def plume_source(volume_flux, momentum_flux, heat_power, salt_flux=None) -> PlumeSource:
    """A forced-plume source from its fluxes (validated: Q0 > 0, M0 ≥ 0, H > 0)."""
    Q = require_dimension(volume_flux, "volume flux", "volume flux")
    M = require_dimension(momentum_flux, "momentum flux", "momentum flux")
    H = require_dimension(heat_power, "power", "heat power")
    for name, q, strict in (("volume flux", Q, True), ("momentum flux", M, False), ("heat power", H, True)):
        v = np.asarray(q.magnitude, float)
        if np.any(v <= 0 if strict else v < 0) or not np.all(np.isfinite(v)):
            raise InputError(name, f"{q:~P}", f"a {name} {'>' if strict else '≥'} 0")
    return PlumeSource(Q, M, H, salt_flux)


def plume_source_from_exit(temperature, velocity, diameter, pressure, ambient_temperature,
                           ambient_salinity=DEFAULT_AMBIENT_SALINITY, model=None) -> PlumeSource:
    """Forced-plume source from exit temperature, area-mean exit velocity and orifice diameter.

    Vent-fluid density and the heat carried come from the vent-fluid model
    (``ventflux.properties``, IAPWS-95 by default) at the absolute
    ``pressure``; the ambient density from TEOS-10 at practical salinity
    ``ambient_salinity`` (default 35, TEOS-10's reference salinity).
    """
    d = magnitude(require_dimension(diameter, "length", "diameter"), "m")
    w = magnitude(require_dimension(velocity, "velocity", "velocity"), "m/s")
    if np.any(np.asarray(d) <= 0):
        raise InputError("diameter", f"{diameter:~P}", "a diameter > 0")
    if np.any(np.asarray(w) <= 0):
        raise InputError("velocity", f"{velocity:~P}", "an exit velocity > 0")
    area = np.pi * np.asarray(d) ** 2 / 4.0
    rho_exit = vent_fluid_state(temperature, pressure, model).density.to("kg/m^3").magnitude
    dh = specific_heat_content(temperature, ambient_temperature, pressure, model).to("J/kg").magnitude
    rho_a = seawater_state(ambient_temperature, ambient_salinity, pressure).density.to("kg/m^3").magnitude
    mdot = rho_exit * w * area
    return PlumeSource(Q_(mdot / rho_a, "m^3/s"), Q_(mdot * w / rho_a, "m^4/s^2"), Q_(mdot * dh, "W"))


def plume_source_from_orifice(discharge) -> PlumeSource:
    """Adapter: a forced-plume source from an orifice estimate.

    Reads only ``mass_flux``, ``mean_velocity``, ``ambient_density`` and
    ``heat_power`` of ``discharge`` (e.g. ``ventflux.orifice.orifice_discharge``'s result).
    """
    mdot = discharge.mass_flux.to("kg/s").magnitude
    w = discharge.mean_velocity.to("m/s").magnitude
    rho_a = discharge.ambient_density.to("kg/m^3").magnitude
    return PlumeSource(Q_(mdot / rho_a, "m^3/s"), Q_(mdot * w / rho_a, "m^4/s^2"), discharge.heat_power.to("W"))
