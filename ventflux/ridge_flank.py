"""Ridge-flank heat deficit: conductive heat flow against plate-cooling references.

Young ocean floor loses heat both by conduction (measured as seafloor heat
flow) and by seawater circulating through the crust. Conductive cooling
models predict the *total* loss, so the shortfall of the measured conductive
heat flow below a reference, integrated over crustal age, is the heat carried
away by circulating water.

References (each a function below):

* half-space cooling [1]: ``T(y, t) = T₀ + ΔT erf(y / 2√(κt))``, surface heat
  flow ``q = k ΔT / √(π κ t)`` and subsidence below the ridge crest
  ``w = (2 ρ_m α ΔT / (ρ_m − ρ_w)) √(κ t / π)``;
* GDH1 [2], a plate model fitted to heat flow and depth (age ``t`` in Myr):
  ``q = 510 t^(-1/2)`` mW/m² for t ≤ 55 and ``48 + 96 exp(−0.0278 t)``
  beyond; depth ``2600 + 365 t^(1/2)`` m for t < 20 and
  ``5651 − 2473 exp(−0.0278 t)`` beyond (coefficients from memory).

Integrated over age from ``t₀`` to ``t₁`` the deficit ``∫ (q_ref − q_obs) dt``
is an energy per unit area [J/m²]. Crust younger than the first observation
is not covered by the observations, yet there the reference heat flow is
largest; the result reports separately the reference's own heat loss from
age 0 to the first observation, ``∫₀^t₀ q_ref dt`` (exact: for the half-space
``2 k ΔT √(t₀ / π κ)``), which is the deficit there if conduction carries
none of it (an upper bound), and the deficit from the axis, the sum of
both. Which one the water column uses is the caller's choice
(``DEFICIT_SPANS``; default the observed ages only). Ocean floor of age ``t`` lies at
``x = u t`` from the ridge (half spreading rate ``u``), so in steady state the
advective heat loss per unit ridge length is ``u ∫ (q_ref − q_obs) dt`` per
flank [W/m]. Dividing the deficit by the heat taken up per unit volume of
seawater warmed by ``ΔT_f`` (``ρ Δh``, a TEOS-10 enthalpy difference [3])
gives the equivalent column of circulated seawater.

Parameter defaults follow [1] (from memory): k = 3.3 W/(m K), κ = 1e-6 m²/s,
ΔT = T_m − T₀ = 1300 K, ρ_m = 3300 kg/m³, ρ_w = 1000 kg/m³,
α = 3e-5 1/K, ridge-crest depth 2500 m; the seafloor at T₀ = 0 °C (a choice).

References
----------
.. [1] Turcotte, D. L. and Schubert, G. (2002). Geodynamics, 2nd ed.,
   Cambridge University Press, chapter 4 (half-space
   cooling of the oceanic lithosphere and ocean-floor subsidence).
.. [2] Stein, C. A. and Stein, S. (1992). A model for the global variation in
   oceanic depth and heat flow with lithospheric age. Nature 359, 123–129.
.. [3] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010. IOC Manuals and Guides No. 56.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import erf

from .diffuse import temperature_difference as _difference
from .errors import InputError
from .orifice import DEFAULT_AMBIENT_SALINITY
from .properties import seawater_state
from .properties.seawater import absolute_salinity, sea_pressure_dbar
from .properties.seawater_heat import seawater_heat_content
from .reservoir import _article
from .units import Q_, magnitude

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint

# Half-space parameters, the values used in [1] (from memory).
#: Thermal conductivity of the lithosphere.
CONDUCTIVITY = Q_(3.3, "W/(m*K)")
#: Thermal diffusivity of the lithosphere.
DIFFUSIVITY = Q_(1.0e-6, "m^2/s")
#: Mantle minus surface temperature, T_m − T₀.
TEMPERATURE_DIFFERENCE = Q_(1300.0, "K")
#: Seafloor temperature T₀ (a choice: deep bottom water is within a few kelvin of it).
SURFACE_TEMPERATURE = Q_(0.0, "degC")
#: Mantle density ρ_m.
MANTLE_DENSITY = Q_(3300.0, "kg/m^3")
#: Water density ρ_w in the isostatic balance.
WATER_DENSITY = Q_(1000.0, "kg/m^3")
#: Volumetric thermal expansion coefficient of the mantle α.
EXPANSIVITY = Q_(3.0e-5, "1/K")
#: Ridge-crest depth.
RIDGE_DEPTH = Q_(2500.0, "m")
REFERENCES = ("gdh1", "half-space")
#: Age spans of the deficit: the observed ages only, or from the axis (age 0) to the last observation.
DEFICIT_SPANS = ("observed", "from-axis")

# GDH1 coefficients [2] (from memory), age in Myr, heat flow in mW/m², depth in m.
_GDH1_Q_YOUNG, _GDH1_Q_OLD, _GDH1_Q_AMP, _GDH1_DECAY = 510.0, 48.0, 96.0, 0.0278
_GDH1_Q_SWITCH = 55.0
_GDH1_D0, _GDH1_D_SLOPE, _GDH1_D_OLD, _GDH1_D_AMP, _GDH1_D_SWITCH = 2600.0, 365.0, 5651.0, 2473.0, 20.0


def _si(q, unit, dimension, field, minimum=None):
    v = np.asarray(magnitude(q, unit, dimension, field), float)
    if minimum is not None and np.any(v < minimum):
        raise InputError(field, f"{np.min(v):g} {unit}", f"{_article(dimension)} {dimension} ≥ {minimum:g} {unit}")
    return v


def _positive(q, unit, dimension, field):
    v = _si(q, unit, dimension, field)
    if np.any(v <= 0):
        raise InputError(field, f"{np.min(v):g} {unit}", f"{_article(dimension)} {dimension} > 0")
    return v


def _half_space(conductivity=CONDUCTIVITY, diffusivity=DIFFUSIVITY, temperature_difference=TEMPERATURE_DIFFERENCE):
    """Half-space parameters in SI (W/(m K), m²/s, K), each checked > 0."""
    return (_positive(conductivity, "W/(m*K)", "thermal conductivity", "thermal conductivity"),
            _positive(diffusivity, "m^2/s", "diffusivity", "thermal diffusivity"),
            _positive(_difference(temperature_difference, "temperature difference"), "K", "temperature",
                      "temperature difference"))


def half_space_temperature(depth, age, temperature_difference=TEMPERATURE_DIFFERENCE,
                           surface_temperature=SURFACE_TEMPERATURE, diffusivity=DIFFUSIVITY):
    """Temperature in a cooling half-space, ``T₀ + ΔT erf(y / 2√(κt))`` [1].

    Parameters
    ----------
    depth : pint.Quantity
        Depth ``y`` below the seafloor (≥ 0).
    age : pint.Quantity
        Age ``t`` of the lithosphere (> 0).
    temperature_difference : pint.Quantity, default 1300 K
        Mantle minus surface temperature.
    surface_temperature : pint.Quantity, default 0 degC
    diffusivity : pint.Quantity, default 1e-6 m²/s

    Returns
    -------
    pint.Quantity
        Temperature.

    References
    ----------
    .. [1] Turcotte & Schubert (2002), Geodynamics, 2nd ed., ch. 4 (half-space cooling).
    """
    y = _si(depth, "m", "length", "depth", minimum=0.0)
    t = _positive(age, "s", "time", "age")
    _, kappa, dT = _half_space(diffusivity=diffusivity, temperature_difference=temperature_difference)
    T0 = _si(surface_temperature, "K", "temperature", "surface temperature")
    return Q_(T0 + dT * erf(y / (2.0 * np.sqrt(kappa * t))), "K")


def half_space_heat_flow(age, conductivity=CONDUCTIVITY, temperature_difference=TEMPERATURE_DIFFERENCE,
                         diffusivity=DIFFUSIVITY):
    """Surface heat flow of a cooling half-space, ``q = k ΔT / √(π κ t)`` [1].

    Parameters
    ----------
    age : pint.Quantity
        Lithospheric age (> 0).
    conductivity : pint.Quantity, default 3.3 W/(m K)
    temperature_difference : pint.Quantity, default 1300 K
    diffusivity : pint.Quantity, default 1e-6 m²/s

    Returns
    -------
    pint.Quantity
        Heat flow [mW/m²].

    References
    ----------
    .. [1] Turcotte & Schubert (2002), Geodynamics, 2nd ed., ch. 4 (half-space cooling).
    """
    t = _positive(age, "s", "time", "age")
    k, kappa, dT = _half_space(conductivity, diffusivity, temperature_difference)
    return Q_(k * dT / np.sqrt(np.pi * kappa * t), "W/m^2").to("mW/m^2")


def half_space_depth(age, ridge_depth=RIDGE_DEPTH, mantle_density=MANTLE_DENSITY, water_density=WATER_DENSITY,
                     expansivity=EXPANSIVITY, temperature_difference=TEMPERATURE_DIFFERENCE, diffusivity=DIFFUSIVITY):
    """Ocean depth over a cooling half-space in isostatic balance [1].

    ``depth = ridge_depth + (2 ρ_m α ΔT / (ρ_m − ρ_w)) √(κ t / π)``.

    Returns
    -------
    pint.Quantity
        Depth below sea level [m].

    References
    ----------
    .. [1] Turcotte & Schubert (2002), Geodynamics, 2nd ed., ch. 4 (ocean-floor subsidence).
    """
    t = _si(age, "s", "time", "age", minimum=0.0)
    rho_m = _positive(mantle_density, "kg/m^3", "density", "mantle density")
    rho_w = _positive(water_density, "kg/m^3", "density", "water density")
    if np.any(rho_m <= rho_w):
        raise InputError("mantle density", f"{np.min(rho_m):g} kg/m^3", "a mantle density above the water density")
    a = np.asarray(magnitude(expansivity, "1/K", field="thermal expansivity"), float)
    if np.any(a <= 0):
        raise InputError("thermal expansivity", f"{np.min(a):g} 1/K", "an expansivity > 0")
    _, kappa, dT = _half_space(diffusivity=diffusivity, temperature_difference=temperature_difference)
    d0 = _si(ridge_depth, "m", "length", "ridge depth", minimum=0.0)
    return Q_(d0 + 2 * rho_m * a * dT / (rho_m - rho_w) * np.sqrt(kappa * t / np.pi), "m")


def _myr(age, field="age"):
    return _si(age, "Myr", "time", field, minimum=0.0)


def plate_heat_flow_gdh1(age):
    """GDH1 heat flow [2] (Stein & Stein 1992; coefficients from memory) [mW/m²].

    ``510 t^(-1/2)`` for t ≤ 55 Myr, ``48 + 96 exp(−0.0278 t)`` beyond.
    """
    t = _myr(age)
    if np.any(t <= 0):
        raise InputError("age", f"{np.min(t):g} Myr", "an age > 0 (the heat flow is infinite at the ridge axis)")
    young = _GDH1_Q_YOUNG / np.sqrt(t)
    old = _GDH1_Q_OLD + _GDH1_Q_AMP * np.exp(-_GDH1_DECAY * t)
    return Q_(np.where(t <= _GDH1_Q_SWITCH, young, old), "mW/m^2")


def plate_depth_gdh1(age):
    """GDH1 ocean depth [2] (Stein & Stein 1992; coefficients from memory) [m].

    ``2600 + 365 t^(1/2)`` for t < 20 Myr, ``5651 − 2473 exp(−0.0278 t)`` beyond.
    """
    t = _myr(age)
    young = _GDH1_D0 + _GDH1_D_SLOPE * np.sqrt(t)
    old = _GDH1_D_OLD - _GDH1_D_AMP * np.exp(-_GDH1_DECAY * t)
    return Q_(np.where(t < _GDH1_D_SWITCH, young, old), "m")


def _gdh1_cumulative(t):
    """∫₀ᵗ q_GDH1 dt' in (mW/m²)·Myr, exact."""
    ts = _GDH1_Q_SWITCH
    young = 2 * _GDH1_Q_YOUNG * np.sqrt(np.minimum(t, ts))
    tail = np.maximum(t - ts, 0.0)
    old = _GDH1_Q_OLD * tail + _GDH1_Q_AMP / _GDH1_DECAY * (np.exp(-_GDH1_DECAY * ts)
                                                         - np.exp(-_GDH1_DECAY * np.maximum(t, ts)))
    return young + old


def reference_heat_flow(age, reference="gdh1", **half_space):
    """Conductive reference heat flow [mW/m²]: ``"gdh1"`` or ``"half-space"`` (with its parameters)."""
    _check_reference(reference, half_space)
    if reference == "gdh1":
        return plate_heat_flow_gdh1(age)
    return half_space_heat_flow(age, **half_space)


def cumulative_reference_heat(age_from, age_to, reference="gdh1", **half_space):
    """Heat lost per unit area between two ages by the reference, ``∫ q_ref dt`` [J/m²], exactly."""
    _check_reference(reference, half_space)
    t0, t1 = _myr(age_from, "age from"), _myr(age_to, "age to")
    if reference == "gdh1":
        e = Q_(_gdh1_cumulative(t1) - _gdh1_cumulative(t0), "mW/m^2 * Myr")
    else:
        k, kappa, dT = _half_space(**half_space)
        s = Q_(1.0, "Myr").to("s").magnitude
        e = Q_(2 * k * dT / np.sqrt(np.pi * kappa) * (np.sqrt(t1 * s) - np.sqrt(t0 * s)), "J/m^2")
    return e.to("J/m^2")


def _check_reference(reference, half_space):
    if reference not in REFERENCES:
        raise InputError("reference", reference, "one of " + ", ".join(REFERENCES))
    allowed = {"conductivity", "diffusivity", "temperature_difference"}
    extra = set(half_space) - allowed if reference == "half-space" else set(half_space)
    if extra:
        raise InputError("reference parameter", ", ".join(sorted(extra)),
                         "conductivity, diffusivity and temperature_difference, for the half-space reference only")


@dataclass(frozen=True)
class HeatDeficit:
    """Advective heat loss of a ridge flank inferred from conductive heat flow."""

    reference: str
    age_from: pint.Quantity
    age_to: pint.Quantity
    reference_heat: pint.Quantity  # ∫ q_ref dt, J/m²
    conductive_heat: pint.Quantity  # ∫ q_obs dt, J/m²
    deficit: pint.Quantity  # J/m², advective heat loss per unit area
    mean_advective_flux: pint.Quantity  # deficit / age span, mW/m²
    fraction: pint.Quantity  # deficit / reference heat
    per_length: pint.Quantity | None  # W/m of ridge, both flanks, if a spreading rate is given (else None)
    #: ∫₀^t₀ q_ref dt, J/m²: the reference's heat loss younger than the first age
    before_first: pint.Quantity | None = None
    deficit_from_axis: pint.Quantity | None = None  # deficit + before_first, J/m² (no conduction before the first age)
    per_length_from_axis: pint.Quantity | None = None  # W/m, like per_length, from the axis

    def span(self, which="observed"):
        """``(deficit, per_length)`` over the observed ages or from the axis (``DEFICIT_SPANS``)."""
        if which not in DEFICIT_SPANS:
            raise InputError("deficit span", str(which), "one of " + ", ".join(DEFICIT_SPANS))
        if which == "observed":
            return self.deficit, self.per_length
        return self.deficit_from_axis, self.per_length_from_axis


def heat_deficit(age, heat_flow, reference="gdh1", half_spreading_rate=None, flanks=2, **half_space):
    """Conductive heat-flow deficit integrated over crustal age.

    Parameters
    ----------
    age : pint.Quantity
        Ages of the heat-flow observations along the flank (at least two,
        distinct, along axis 0).
    heat_flow : pint.Quantity
        Observed conductive heat flow at those ages; extra trailing axes
        (e.g. Monte Carlo draws) broadcast.
    reference : {"gdh1", "half-space"}
        Conductive cooling reference (see module notes).
    half_spreading_rate : pint.Quantity, optional
        Spreading rate of one flank; gives the heat loss per unit ridge length.
    flanks : int, default 2
        Flanks counted in the per-length figure.
    **half_space
        ``conductivity``, ``diffusivity``, ``temperature_difference`` of the
        half-space reference.

    Returns
    -------
    HeatDeficit
        The observed heat flow is integrated by the trapezoid rule between
        the observations, the reference exactly over the same age span;
        ``before_first`` is the reference's heat loss from age 0 to the first
        observation and ``deficit_from_axis`` the deficit with it added.
    """
    t = _myr(age)
    if t.ndim != 1 or t.size < 2:
        raise InputError("age", f"{t.size} value(s)", "at least two observation ages")
    order = np.argsort(t)
    t = t[order]
    if np.any(np.diff(t) <= 0):
        raise InputError("age", "repeated ages", "distinct observation ages")
    q = _si(heat_flow, "mW/m^2", "heat flux", "heat flow", minimum=0.0)
    if q.shape[:1] != (t.size,):
        raise InputError("heat flow", f"{q.shape[0] if q.ndim else 1} value(s)", f"one heat flow per age ({t.size})")
    q = q[order]
    dt = np.diff(t).reshape((-1,) + (1,) * (q.ndim - 1))
    observed = Q_(np.sum(0.5 * (q[1:] + q[:-1]) * dt, axis=0), "mW/m^2 * Myr").to("J/m^2")
    ref = cumulative_reference_heat(Q_(t[0], "Myr"), Q_(t[-1], "Myr"), reference, **half_space)
    deficit = ref - observed
    span = Q_(t[-1] - t[0], "Myr")
    before = cumulative_reference_heat(Q_(0.0, "Myr"), Q_(t[0], "Myr"), reference, **half_space)
    from_axis = deficit + before
    per_length = per_length_axis = None
    if half_spreading_rate is not None:
        u = _positive(half_spreading_rate, "m/s", "velocity", "half spreading rate")
        per_length = (deficit * Q_(u, "m/s") * flanks).to("W/m")
        per_length_axis = (from_axis * Q_(u, "m/s") * flanks).to("W/m")
    return HeatDeficit(reference=reference, age_from=Q_(t[0], "Myr"), age_to=Q_(t[-1], "Myr"),
                       reference_heat=ref, conductive_heat=observed, deficit=deficit,
                       mean_advective_flux=(deficit / span).to("mW/m^2"),
                       fraction=(deficit / ref).to("dimensionless"), per_length=per_length,
                       before_first=before, deficit_from_axis=from_axis, per_length_from_axis=per_length_axis)


def seawater_heat_uptake(temperature_rise, ambient_temperature, pressure, salinity=DEFAULT_AMBIENT_SALINITY):
    """Heat taken up per unit volume of seawater warmed by ``temperature_rise`` [J/m³].

    ``ρ(T_a) [h(T_a + ΔT) − h(T_a)]`` at in-situ pressure, one seawater enthalpy at both ends: TEOS-10 [3]
    to 40 °C, continued beyond by ``ventflux.properties.seawater_heat``.
    """
    rise = _positive(_difference(temperature_rise, "fluid temperature rise"), "K", "temperature",
                     "fluid temperature rise")
    Ta = _si(ambient_temperature, "K", "temperature", "ambient temperature")
    cold = seawater_state(Q_(Ta, "K"), salinity, pressure)
    p = sea_pressure_dbar(pressure)
    SA = absolute_salinity(np.asarray(salinity.to("dimensionless").magnitude if hasattr(salinity, "to")
                                      else salinity, float), p)
    # warm end from the joined seawater model (TEOS-10 to 40 degC, beyond it IAPWS-95 with the saline part)
    warm = seawater_heat_content(Ta + rise - 273.15, Ta - 273.15, SA, p, field="fluid temperature (ambient + rise)")
    return (cold.density * Q_(warm.specific_heat_content, "J/kg")).to("J/m^3")


def equivalent_water_column(energy_per_area, temperature_rise, ambient_temperature, pressure,
                            salinity=DEFAULT_AMBIENT_SALINITY):
    """Height of the seawater column that carries ``energy_per_area`` when warmed by ``temperature_rise`` [m]."""
    E = _si(energy_per_area, "J/m^2", "energy per area", "heat deficit")
    return Q_(E / seawater_heat_uptake(temperature_rise, ambient_temperature, pressure, salinity).magnitude,
              "m").to("km")
