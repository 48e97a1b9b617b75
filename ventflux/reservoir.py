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

Pore fluid in any state
-----------------------
Pore fluid is pure water from IAPWS-95 [2] in whatever single phase it has at
the reservoir's temperature and pressure: liquid-like, vapour-like (below the
critical pressure and above the saturation temperature: at 18.8 MPa and
600 °C it is a dense vapour, nothing boils) or supercritical. Cooled at
constant pressure from a vapour-like to a liquid state it condenses, and the
enthalpy difference includes that latent heat. The only states IAPWS-95 at
given temperature and pressure cannot place are those *on* the saturation
curve (two-phase, vapour fraction undetermined): within ``SATURATION_BAND``
of the saturation temperature either end is refused, naming the saturation
temperature; give a temperature off the curve. The boiling check of vent
exit fluid does not apply here.

The reservoir pressure is given, or computed from the seafloor pressure and
a depth below the seafloor (``reservoir_pressure``): hydrostatic under a
column of cold seawater of 1025 kg/m³ (a choice: a column of hot pore fluid
is lighter, so this is an upper bound on hydrostatic pressure) or
lithostatic under the rock density.

Three timescales answer "how long can it last":

* heat-mining time ``E / P`` at constant power ``P``;
* exponential decline: if the power is proportional to the reservoir's
  excess temperature ``θ`` (``P = P₀ θ/θ₀``), then ``E dθ/θ₀ = −P dt`` gives
  ``P(t) = P₀ exp(−t/τ)`` with ``τ = E / P₀``; the time to fall to a fraction
  ``f`` of the initial output is ``τ ln(1/f)``. Latent heat is treated as
  though released evenly over the temperature drop (an effective heat
  capacity), which is exact only for the sensible part;
* conductive cooling ``L² / κ`` of a body of size ``L`` and thermal
  diffusivity ``κ`` [1]. The length is the one the geometry gives: for a
  sheet (an area and a thickness) the thickness, the sheet taken as cooled
  through one face (its top, towards the circulating water; with both faces
  cooled, ``cooled_faces=2``, half the thickness); for a volume alone the
  cube root of the volume (an equant body assumed); or a length the user
  gives. The result names the length and its basis. For a sheet cooled
  through one face with the other insulated, the slowest conductive mode
  decays as ``exp(−π² κ t / 4L²)`` and a half-space conducts the sheet's
  heat ``ρ c ΔT L`` away in ``π L² / 4κ`` [1], both within a factor 2.5 of
  ``L²/κ`` (see ``tests/test_reservoir_edges.py``).

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
from .units import Q_, check_units, magnitude

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint

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
#: Half-width of the band around the saturation temperature in which a pore-fluid state at given
#: temperature and pressure is two-phase and refused (K; a choice, wider than CoolProp's flash tolerance).
SATURATION_BAND = 0.05
#: Density of the cold seawater column for a hydrostatic reservoir pressure (a choice; deep seawater is
#: 1027-1050 kg/m3 in situ, TEOS-10, and hot pore fluid lighter).
HYDROSTATIC_DENSITY = Q_(1025.0, "kg/m^3")
#: Standard acceleration of gravity (CGPM 1901, exact).
GRAVITY = Q_(9.80665, "m/s^2")
PRESSURE_REGIMES = ("hydrostatic", "lithostatic")


from .presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(frozen=True, repr=False)
class ReservoirHeat(Presentable):
    """Extractable heat of a reservoir, by part (quantities in J)."""

    total: pint.Quantity
    rock: pint.Quantity
    pore_fluid: pint.Quantity
    latent: pint.Quantity
    volume: pint.Quantity
    area: pint.Quantity | None = None  # given with a thickness (a sheet), else None
    thickness: pint.Quantity | None = None
    pore_fluid_phase: str = ""  # "liquid-like", "vapour-like" or "supercritical" at the initial state


@dataclass(frozen=True, repr=False)
class Lifetime(Presentable):
    """How long a reservoir sustains a vent's power, by three measures."""

    heat: ReservoirHeat
    mining_time: pint.Quantity  # E / P at constant power
    decline_time: pint.Quantity  # time to fall to spent_fraction of P under exponential decline
    efolding_time: pint.Quantity  # τ = E / P
    conductive_time: pint.Quantity  # L² / κ
    size: pint.Quantity  # L used for L²/κ
    controlling: np.ndarray  # "advective decline" or "conductive cooling", per element
    spent_fraction: float
    size_basis: str = ""  # which length L is: given, sheet thickness, half-thickness or cube root


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


def reservoir_pressure(seafloor_pressure, depth_below_seafloor, regime="hydrostatic", rock_density=ROCK_DENSITY):
    """Absolute reservoir pressure at ``depth_below_seafloor`` under the seafloor.

    ``p = p_seafloor + ρ g z`` with ``ρ`` the cold-seawater density 1025 kg/m³
    (``"hydrostatic"``, a choice; see module notes) or the rock density
    (``"lithostatic"``), ``g`` = 9.80665 m/s².

    Parameters
    ----------
    seafloor_pressure : pint.Quantity
        Absolute pressure at the seafloor.
    depth_below_seafloor : pint.Quantity
        Depth of the reservoir below the seafloor (≥ 0).
    regime : {"hydrostatic", "lithostatic"}
    rock_density : pint.Quantity, default 2900 kg/m³

    Returns
    -------
    pint.Quantity
        Absolute pressure [Pa].
    """
    if regime not in PRESSURE_REGIMES:
        raise InputError("pressure regime", str(regime), "one of " + ", ".join(PRESSURE_REGIMES))
    p0 = _positive(seafloor_pressure, "Pa", "pressure", "seafloor pressure")
    z = _positive(depth_below_seafloor, "m", "length", "depth below seafloor", allow_zero=True)
    rho = (HYDROSTATIC_DENSITY.to("kg/m^3").magnitude if regime == "hydrostatic"
           else _positive(rock_density, "kg/m^3", "density", "rock density"))
    return Q_(p0 + rho * GRAVITY.to("m/s^2").magnitude * z, "Pa")


def _pore_model(model):
    if model is None:
        from .properties.ventfluid import IAPWS95Water

        return IAPWS95Water(allow_vapour=True)  # any single phase; two-phase states are refused below
    if isinstance(model, str):
        from .properties import fluid_model

        return fluid_model(model)
    return model


def pore_fluid_phase(temperature, pressure):
    """Single phase of IAPWS-95 water at (T [K], p [Pa]): "liquid-like", "vapour-like" or "supercritical"."""
    from .properties.ventfluid import P_CRIT, T_CRIT, IAPWS95Water

    T, p = np.broadcast_arrays(np.asarray(temperature, float), np.asarray(pressure, float))
    tsat = IAPWS95Water().saturation_temperature(p)
    return np.where((p >= P_CRIT) & (T >= T_CRIT), "supercritical",
                    np.where(np.isfinite(tsat) & (T > tsat), "vapour-like", "liquid-like"))


def check_pore_fluid(temperature, temperature_drop, pressure, model=None):
    """Raise ``InputError`` unless the pore fluid has one phase at both ends of its cooling.

    Both the initial temperature ``T₀`` and the final ``T₀ − ΔT`` must lie in
    IAPWS-95's range at the reservoir pressure and off the saturation curve
    (farther than ``SATURATION_BAND`` from it). Fields named:
    ``reservoir temperature``, ``temperature drop``, ``reservoir pressure``.
    """
    T0 = np.asarray(magnitude(temperature, "K", "temperature", "reservoir temperature"), float)
    dT = _drop(temperature_drop)
    p = np.asarray(magnitude(pressure, "Pa", "pressure", "reservoir pressure"), float)
    low = T0 - dT
    if np.any(low < _FLUID_T_MIN):
        raise InputError("temperature drop", f"{np.max(dT):g} K",
                         f"a drop that leaves the pore fluid above {_FLUID_T_MIN - 273.15:.2f} degC "
                         f"(reservoir temperature {np.min(T0) - 273.15:.4g} degC), or porosity 0 for dry rock")
    m = _pore_model(model)
    try:
        m.check(T0, p, "reservoir temperature")
        m.check(low, p, "temperature drop")
    except InputError as e:
        raise InputError("reservoir pressure" if e.field == "pressure" else e.field, e.value, e.allowed) from None
    if model is None:
        tsat = m.saturation_temperature(np.broadcast_to(p, np.broadcast(T0, p).shape))
        for field, T in (("reservoir temperature", T0), ("temperature drop", low)):
            T = np.broadcast_to(T, tsat.shape)
            on = np.isfinite(tsat) & (np.abs(T - tsat) < SATURATION_BAND)
            if on.any():
                i = np.flatnonzero(on.ravel())[0]
                shown = (f"{T.ravel()[i] - 273.15:.6g} degC" if field == "reservoir temperature"
                         else f"a drop to {T.ravel()[i] - 273.15:.6g} degC")
                raise InputError(field, shown,
                                 f"a pore-fluid temperature off the saturation curve ({tsat.ravel()[i] - 273.15:.2f} "
                                 f"degC at {p.ravel()[i] if np.ndim(p) else p:.4g} Pa): on it the fluid is two-phase "
                                 "with an undetermined vapour fraction")


def pore_fluid_heat_density(temperature, temperature_drop, pressure, model=None):
    """Heat released per unit pore volume [J/m³]: ρ_f(T₀, p) [h(T₀, p) − h(T₀ − ΔT, p)], IAPWS-95 [2].

    The pore fluid takes its single phase (liquid-like, vapour-like or
    supercritical) at each end; see the module notes. ``model`` defaults
    to IAPWS-95 water in any single phase.
    """
    check_pore_fluid(temperature, temperature_drop, pressure, model)
    m = _pore_model(model)
    T0 = np.asarray(magnitude(temperature, "K", "temperature", "reservoir temperature"), float)
    low = T0 - _drop(temperature_drop)
    p = np.asarray(magnitude(pressure, "Pa", "pressure", "reservoir pressure"), float)
    h0, rho = m.enthalpy_density(T0, p)
    h1, _ = m.enthalpy_density(low, p)
    return Q_(rho * (h0 - h1), "J/m^3")


@check_units(temperature_drop="temperature", volume="volume", area="area", thickness="length",
             temperature="temperature", pressure="pressure", melt_volume="volume", depth_below_seafloor="length",
             seafloor_pressure="pressure")
def reservoir_heat(temperature_drop, volume=None, area=None, thickness=None, rock_density=ROCK_DENSITY,
                   rock_heat_capacity=ROCK_HEAT_CAPACITY, porosity=POROSITY, temperature=None, pressure=None,
                   melt_volume=None, latent_heat=LATENT_HEAT, melt_density=MELT_DENSITY, model=None,
                   depth_below_seafloor=None, seafloor_pressure=None, pressure_regime="hydrostatic"):
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
        pore fluid's IAPWS-95 enthalpy difference [2] when ``porosity > 0``
        (the fluid in whatever single phase it has there).
    depth_below_seafloor, seafloor_pressure : pint.Quantity, optional
        Instead of ``pressure``: the reservoir pressure from
        ``reservoir_pressure`` under ``pressure_regime``.
    pressure_regime : {"hydrostatic", "lithostatic"}
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
    if pressure is not None and depth_below_seafloor is not None:
        raise InputError("reservoir pressure", f"{pressure} and a depth below the seafloor",
                         "either a reservoir pressure or a depth below the seafloor, not both")
    if pressure is None and depth_below_seafloor is not None:
        if seafloor_pressure is None:
            raise InputError("seafloor pressure", "(missing)", "the seafloor pressure, with a depth below the seafloor")
        pressure = reservoir_pressure(seafloor_pressure, depth_below_seafloor, pressure_regime, rock_density)
    phase = ""
    if np.any(phi > 0):
        missing = [n for n, v in (("reservoir temperature", temperature), ("reservoir pressure", pressure))
                   if v is None]
        if missing:
            raise InputError(missing[0], "(missing)",
                             "a reservoir temperature and a pressure (or a depth below the seafloor) for the "
                             "pore fluid, or porosity 0 for dry rock")
        fluid = Q_(phi * pore_fluid_heat_density(temperature, Q_(dT, "K"), pressure, model).magnitude
                   * V.magnitude, "J")
        phases = np.unique(pore_fluid_phase(magnitude(temperature, "K"), magnitude(pressure, "Pa")))
        phase = "/".join(str(x) for x in phases)
    else:
        fluid = Q_(np.zeros(np.broadcast(phi, V.magnitude).shape), "J")
    if melt_volume is None:
        latent = Q_(0.0, "J")
    else:
        Vm = _positive(melt_volume, "m^3", "volume", "melt volume", allow_zero=True)
        latent = Q_(Vm * _positive(melt_density, "kg/m^3", "density", "melt density")
                    * _positive(latent_heat, "J/kg", "specific energy", "latent heat"), "J")
    total = rock + fluid + latent
    sheet = volume is None
    return ReservoirHeat(total=total, rock=rock, pore_fluid=fluid, latent=latent, volume=V,
                         area=Q_(magnitude(area, "m^2"), "m^2") if sheet else None,
                         thickness=Q_(magnitude(thickness, "m"), "m") if sheet else None,
                         pore_fluid_phase=phase)


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


def conductive_length(heat, size=None, cooled_faces=1):
    """Length ``L`` for ``L²/κ`` and what it is (see module notes).

    Returns
    -------
    (pint.Quantity, str)
        The given ``size``; else the sheet's thickness (``cooled_faces=1``)
        or half-thickness (``2``) when the reservoir is an area and a
        thickness; else the cube root of the volume.
    """
    if cooled_faces not in (1, 2):
        raise InputError("cooled faces", str(cooled_faces), "1 (the top face) or 2 (both faces of the sheet)")
    if size is not None:
        return Q_(_positive(size, "m", "length", "reservoir size"), "m"), "given length"
    if getattr(heat, "thickness", None) is not None:
        if cooled_faces == 2:
            return heat.thickness.to("m") / 2, "half the sheet's thickness (cooled through both faces)"
        return heat.thickness.to("m"), "sheet thickness (cooled through its top face)"
    return Q_(np.cbrt(heat.volume.to("m^3").magnitude), "m"), "cube root of the volume (an equant body)"


@check_units(power="power", size="length", diffusivity="diffusivity")
def reservoir_lifetime(power, heat, size=None, diffusivity=THERMAL_DIFFUSIVITY, fraction=SPENT_FRACTION,
                       cooled_faces=1):
    """Heat-mining, decline and conductive timescales side by side, with the controlling one.

    Parameters
    ----------
    power : pint.Quantity
        Present heat output drawn from the reservoir.
    heat : ReservoirHeat
        From ``reservoir_heat``.
    size : pint.Quantity, optional
        Length ``L`` for ``L²/κ``; by default the sheet's thickness (or half
        of it with ``cooled_faces=2``) for a reservoir given as an area and a
        thickness, else the cube root of the volume (``conductive_length``).
    cooled_faces : {1, 2}
        Faces of a sheet through which it cools (default 1, the top).
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
    L, basis = conductive_length(heat, size, cooled_faces)
    mining = heat_mining_time(power, heat)
    decline = decline_time(power, heat, fraction)
    cond = conductive_time(L, diffusivity)
    a, b = np.broadcast_arrays(decline.to("year").magnitude, cond.to("year").magnitude)
    controlling = np.where(a <= b, "advective decline", "conductive cooling")
    return Lifetime(heat=heat, mining_time=mining, decline_time=decline, efolding_time=mining,
                    conductive_time=cond, size=L.to("m"), controlling=controlling, spent_fraction=float(fraction),
                    size_basis=basis)


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
