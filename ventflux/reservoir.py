"""Heat reservoirs beneath a vent field: stored heat, lifetimes and sizes.

A reservoir is a volume ``V`` of hot rock (or an area × a thickness) that a
vent field cools by a temperature drop ``ΔT``. Its extractable heat is

    E = V [(1 − φ) ρ_r c_r ΔT + φ ρ_f Δh_f] + V_melt ρ_melt L

with rock density ``ρ_r`` and heat capacity ``c_r``, porosity ``φ`` filled
with pore fluid whose heat content ``Δh_f = h(T₀, p) − h(T₀ − ΔT, p)`` is an
IAPWS-95 enthalpy difference at the reservoir pressure (density ``ρ_f`` at
``T₀``), and optionally a melt lens of volume ``V_melt`` that releases its
latent heat of crystallization ``L``. Rock has no equation of state in the
property layer, so its heat is ``ρ c ΔT`` with a constant heat capacity.

Three timescales answer "how long can it last":

* heat-mining time ``E / P`` at constant power ``P``;
* exponential decline: if the power is proportional to the reservoir's
  excess temperature ``θ`` (``P = P₀ θ/θ₀``), then ``E dθ/θ₀ = −P dt`` gives
  ``P(t) = P₀ exp(−t/τ)`` with ``τ = E / P₀``; the time to fall to a fraction
  ``f`` of the initial output is ``τ ln(1/f)``. Latent heat is treated as
  though released evenly over the temperature drop (an effective heat
  capacity), which is exact only for the sensible part;
* conductive cooling ``L² / κ`` of a body of size ``L`` and thermal
  diffusivity ``κ`` [1].

The reservoir loses its heat by whichever of advection (the vents) and
conduction is faster, so the *shorter* of the decline time and ``L²/κ``
controls its life.

Defaults
--------
Rock density 2900 kg/m³ and heat capacity 1000 J/(kg K) for basaltic and
gabbroic crust, thermal diffusivity 1e-6 m²/s (the values used throughout
[1]; from memory); porosity 0.05 (from memory: a few per cent is typical of
the upper oceanic crust's dikes and gabbro at depth); latent heat of
crystallization of basaltic melt 4.0e5 J/kg (from memory: published values
span about 3.2e5–4.2e5 J/kg) and melt density 2700 kg/m³ (from memory).

References
----------
.. [1] Turcotte, D. L. and Schubert, G. (2002). Geodynamics, 2nd ed.,
   Cambridge University Press, chapter 4 (heat conduction).
.. [2] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .diffuse import temperature_difference
from .errors import InputError
from .properties import specific_heat_content, vent_fluid_state
from .units import Q_, magnitude

# Defaults, sources in the module notes ("Defaults").
#: Basaltic and gabbroic crust [1] (from memory).
ROCK_DENSITY = Q_(2900.0, "kg/m^3")
#: Specific heat capacity of crustal rock [1] (from memory).
ROCK_HEAT_CAPACITY = Q_(1000.0, "J/(kg*K)")
#: Thermal diffusivity of rock [1] (from memory).
THERMAL_DIFFUSIVITY = Q_(1.0e-6, "m^2/s")
#: Pore fraction of the upper oceanic crust, a few per cent (from memory).
POROSITY = 0.05
#: Latent heat of crystallization of basaltic melt; published values span about 3.2e5–4.2e5 J/kg (from memory).
LATENT_HEAT = Q_(4.0e5, "J/kg")
#: Density of basaltic melt (from memory).
MELT_DENSITY = Q_(2700.0, "kg/m^3")
#: Output fraction at which a declining reservoir counts as spent (a choice, not a law).
SPENT_FRACTION = 0.1
_FLUID_T_MIN = 273.16  # K, the triple point: IAPWS-95's lower temperature bound [2]


@dataclass(frozen=True)
class ReservoirHeat:
    """Extractable heat of a reservoir, by part (quantities in J)."""

    total: object
    rock: object
    pore_fluid: object
    latent: object
    volume: object


@dataclass(frozen=True)
class Lifetime:
    """How long a reservoir sustains a vent's power, by three measures."""

    heat: ReservoirHeat
    mining_time: object  # E / P at constant power
    decline_time: object  # time to fall to spent_fraction of P under exponential decline
    efolding_time: object  # τ = E / P
    conductive_time: object  # L² / κ
    size: object  # L used for L²/κ
    controlling: np.ndarray  # "advective decline" or "conductive cooling", per element
    spent_fraction: float


def _article(word):
    return "an" if word[:1] in "aeiou" else "a"


def _positive(q, unit, dimension, field, allow_zero=False):
    v = np.asarray(magnitude(q, unit, dimension, field), float)
    bad = v < 0 if allow_zero else v <= 0
    if np.any(bad):
        sign = "≥" if allow_zero else ">"
        raise InputError(field, f"{np.min(v):g} {unit}", f"{_article(dimension)} {dimension} {sign} 0")
    return v


def _drop(temperature_drop):
    """A temperature drop in K (> 0), ``degC`` read as a difference."""
    return _positive(temperature_difference(temperature_drop, "temperature drop"), "K", "temperature",
                     "temperature drop")


def reservoir_volume(volume=None, area=None, thickness=None):
    """Volume of the hot rock: ``volume`` itself, or ``area × thickness`` (exactly one way)."""
    if volume is not None and (area is not None or thickness is not None):
        raise InputError("volume", f"{volume}", "either a volume or an area and a thickness, not both")
    if volume is not None:
        return Q_(_positive(volume, "m^3", "volume", "volume"), "m^3")
    if area is None or thickness is None:
        raise InputError("volume", "none", "a volume, or an area and a thickness")
    return Q_(_positive(area, "m^2", "area", "area") * _positive(thickness, "m", "length", "thickness"), "m^3")


def pore_fluid_heat_density(temperature, temperature_drop, pressure, model=None):
    """Heat released per unit pore volume [J/m³]: ρ_f(T₀, p) [h(T₀, p) − h(T₀ − ΔT, p)], IAPWS-95 [2]."""
    T0 = magnitude(temperature, "K", "temperature", "reservoir temperature")
    dT = _drop(temperature_drop)
    low = np.asarray(T0 - dT)
    if np.any(low < _FLUID_T_MIN):
        raise InputError("temperature drop", f"{np.max(dT):g} K",
                         f"a drop that leaves the pore fluid above {_FLUID_T_MIN - 273.15:.2f} degC "
                         f"(reservoir temperature {np.min(T0) - 273.15:.4g} degC), or porosity 0 for dry rock")
    T1 = Q_(low, "K")
    dh = specific_heat_content(Q_(T0, "K"), T1, pressure, model)
    rho = vent_fluid_state(Q_(T0, "K"), pressure, model, field="reservoir temperature").density
    return (rho * dh).to("J/m^3")


def reservoir_heat(temperature_drop, volume=None, area=None, thickness=None, rock_density=ROCK_DENSITY,
                   rock_heat_capacity=ROCK_HEAT_CAPACITY, porosity=POROSITY, temperature=None, pressure=None,
                   melt_volume=None, latent_heat=LATENT_HEAT, melt_density=MELT_DENSITY, model=None):
    """Heat a reservoir gives up when it cools by ``temperature_drop``.

    Parameters
    ----------
    temperature_drop : pint.Quantity
        Cooling of the hot rock, a temperature difference > 0 (``degC`` is
        read as a difference: ``"300 degC"`` is 300 K).
    volume : pint.Quantity, optional
        Hot-rock volume; or give ``area`` and ``thickness``.
    rock_density, rock_heat_capacity : pint.Quantity
        Defaults 2900 kg/m³ and 1000 J/(kg K) (from memory, [1]).
    porosity : float, default 0.05
        Pore fraction of the volume (from memory); 0 for none.
    temperature, pressure : pint.Quantity
        Initial reservoir temperature and absolute pressure, needed for the
        pore fluid's IAPWS-95 enthalpy difference [2] when ``porosity > 0``.
    melt_volume : pint.Quantity, optional
        Volume of a melt lens that crystallizes.
    latent_heat, melt_density : pint.Quantity
        Defaults 4.0e5 J/kg and 2700 kg/m³ (from memory).

    Returns
    -------
    ReservoirHeat

    References
    ----------
    .. [1] Turcotte & Schubert (2002), Geodynamics, 2nd ed., ch. 4.
    .. [2] IAPWS R6-95(2018).
    """
    V = reservoir_volume(volume, area, thickness)
    phi = np.asarray(magnitude(porosity, "dimensionless", "dimensionless", "porosity"), float)
    if np.any((phi < 0) | (phi >= 1)):
        raise InputError("porosity", f"{np.min(phi):g}", "a porosity from 0 to below 1")
    rho = _positive(rock_density, "kg/m^3", "density", "rock density")
    c = _positive(rock_heat_capacity, "J/(kg*K)", "specific heat capacity", "rock heat capacity")
    dT = _drop(temperature_drop)
    rock = Q_((1 - phi) * rho * c * dT * V.magnitude, "J")
    if np.any(phi > 0):
        if temperature is None or pressure is None:
            raise InputError("reservoir temperature", "none",
                             "a reservoir temperature and pressure for the pore fluid (or porosity 0)")
        fluid = Q_(phi * pore_fluid_heat_density(temperature, Q_(dT, "K"), pressure, model).magnitude
                   * V.magnitude, "J")
    else:
        fluid = Q_(np.zeros(np.broadcast(phi, V.magnitude).shape), "J")
    if melt_volume is None:
        latent = Q_(0.0, "J")
    else:
        Vm = _positive(melt_volume, "m^3", "volume", "melt volume", allow_zero=True)
        latent = Q_(Vm * _positive(melt_density, "kg/m^3", "density", "melt density")
                    * _positive(latent_heat, "J/kg", "specific energy", "latent heat"), "J")
    total = rock + fluid + latent
    return ReservoirHeat(total=total, rock=rock, pore_fluid=fluid, latent=latent, volume=V)


def heat_mining_time(power, heat):
    """Time for constant ``power`` to extract ``heat`` (a quantity in J or a ReservoirHeat)."""
    E = heat.total if isinstance(heat, ReservoirHeat) else heat
    P = _positive(power, "W", "power", "power")
    return (Q_(magnitude(E, "J", "energy", "heat"), "J") / Q_(P, "W")).to("year")


def decline_time(power, heat, fraction=SPENT_FRACTION):
    """Time for an exponentially declining output to fall to ``fraction`` of ``power``: (E/P₀) ln(1/f)."""
    f = np.asarray(fraction, float)
    if np.any((f <= 0) | (f >= 1)):
        raise InputError("spent fraction", f"{np.min(f):g}", "a fraction between 0 and 1")
    return heat_mining_time(power, heat) * np.log(1.0 / f)


def conductive_time(size, diffusivity=THERMAL_DIFFUSIVITY):
    """Conductive cooling timescale ``L² / κ`` of a body of size ``L`` [1] (Turcotte & Schubert ch. 4)."""
    L = _positive(size, "m", "length", "reservoir size")
    k = _positive(diffusivity, "m^2/s", "diffusivity", "thermal diffusivity")
    return Q_(L**2 / k, "s").to("year")


def reservoir_lifetime(power, heat, size=None, diffusivity=THERMAL_DIFFUSIVITY, fraction=SPENT_FRACTION):
    """Heat-mining, decline and conductive timescales side by side, with the controlling one.

    Parameters
    ----------
    power : pint.Quantity
        Present heat output drawn from the reservoir.
    heat : ReservoirHeat
        From ``reservoir_heat``.
    size : pint.Quantity, optional
        Length ``L`` for ``L²/κ``; default the cube root of the volume, or the
        thickness for a sheet-like reservoir should be passed explicitly.
    diffusivity : pint.Quantity, default 1e-6 m²/s (from memory, [1])
    fraction : float, default 0.1
        Output fraction at which a declining reservoir counts as spent.

    Returns
    -------
    Lifetime
        ``controlling`` names, per element, the shorter of the decline time
        and ``L²/κ``: the faster way the reservoir loses its heat.

    References
    ----------
    .. [1] Turcotte & Schubert (2002), Geodynamics, 2nd ed., ch. 4.
    """
    L = size if size is not None else Q_(np.cbrt(heat.volume.to("m^3").magnitude), "m")
    mining = heat_mining_time(power, heat)
    decline = decline_time(power, heat, fraction)
    cond = conductive_time(L, diffusivity)
    a, b = np.broadcast_arrays(decline.to("year").magnitude, cond.to("year").magnitude)
    controlling = np.where(a <= b, "advective decline", "conductive cooling")
    return Lifetime(heat=heat, mining_time=mining, decline_time=decline, efolding_time=mining,
                    conductive_time=cond, size=L.to("m"), controlling=controlling, spent_fraction=float(fraction))


def reservoir_size_for(power, duration, temperature_drop, area=None, **heat_options):
    """Hot-rock volume needed to sustain ``power`` for ``duration`` at constant output.

    The heat per unit volume is found with ``reservoir_heat`` on 1 m³ (same
    options: porosity, pore fluid, rock properties; a melt lens is not
    scaled), and the volume is ``P t / e``.

    Returns
    -------
    dict
        ``volume`` (m³ and km³), ``cube_side`` (m), and ``thickness`` if an
        ``area`` is given.
    """
    if "melt_volume" in heat_options:
        raise InputError("melt volume", heat_options["melt_volume"], "no melt lens when sizing a reservoir")
    P = _positive(power, "W", "power", "power")
    t = _positive(duration, "s", "time", "duration")
    per_m3 = reservoir_heat(temperature_drop, volume=Q_(1.0, "m^3"), **heat_options).total.to("J").magnitude
    V = Q_(P * t / per_m3, "m^3")
    out = {"volume": V, "volume_km3": V.to("km^3"), "cube_side": Q_(np.cbrt(V.magnitude), "m"),
           "heat_per_volume": Q_(per_m3, "J/m^3")}
    if area is not None:
        out["thickness"] = Q_(V.magnitude / _positive(area, "m^2", "area", "area"), "m")
    return out
