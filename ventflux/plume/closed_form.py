"""Closed-form rise of a point-source plume in uniform stratification, both directions.

A pure plume of total buoyancy flux F (m⁴ s⁻³) from a point source in a
stratification of constant buoyancy frequency N rises to [1]_ [2]_

    z_max = 5.0 (F/π)^(1/4) N^(-3/4),

(the coefficient belongs to the entrainment coefficient of [1]_, 0.093 in the
Gaussian convention, 0.132 top-hat) and spreads laterally at its level of
neutral buoyancy, about 0.76 z_max (``SPREADING_FRACTION``). The heat power
that carries a buoyancy flux F is H = ρ c_p0 F / (g α_Θ) [3]_, with TEOS-10's
c_p0 and the thermal expansion coefficient with respect to conservative
temperature at the vent (``_heat_power_from_buoyancy_flux``).

A bent-over plume in a strong uniform current U rises to [4]_

    z_max ≈ 2.6 (F_b / (U N²))^(1/3),   F_b = F/π,

with F_b the buoyancy flux parameter g w b² Δρ/ρ of [2]_ [4]_ (a top-hat
plume's F divided by π); 2.6 = (6/β²)^(1/3) for a cross-flow entrainment
coefficient β ≈ 0.6.

The public functions take pint quantities (dimensions enforced by
``ventflux.units.check_units``) and return quantities; each wraps a private
kernel on plain SI floats (``_rise_height_point_source`` ...) that the
integral model and the emulator call on their hot paths. All broadcast.

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1–23.
.. [2] Briggs, G. A. (1969). Plume Rise. USAEC Critical Review Series,
   TID-25075.
.. [3] IOC, SCOR and IAPSO (2010). The international thermodynamic equation of
   seawater – 2010. IOC Manuals and Guides No. 56 (c_p0, eq. 3.3.3; α_Θ, eq. 2.18.2).
.. [4] Briggs, G. A. (1975). Plume rise predictions. In: Lectures on Air
   Pollution and Environmental Impact Analyses, American Meteorological
   Society, 59–111.
"""

from __future__ import annotations

import numpy as np

from ..units import Q_, check_units

#: Coefficient of the maximum rise height for a point-source plume, [1]_ [2]_ (value from memory).
MAXIMUM_RISE_COEFFICIENT = 5.0
#: Spreading (neutral-buoyancy) height as a fraction of the maximum rise [1]_ (about 0.76; from memory).
SPREADING_FRACTION = 0.76
#: Bent-over rise coefficient in a strong current [4]_ (with F_b = F/π; from memory).
BENT_OVER_COEFFICIENT = 2.6
#: Entrainment coefficient the closed form belongs to: 0.093 Gaussian [1]_ → √2·0.093 top-hat.
CLOSED_FORM_ENTRAINMENT = 0.093 * np.sqrt(2.0)

LEVELS = ("maximum", "spreading")


def _level_factor(level):
    return 1.0 if level == "maximum" else SPREADING_FRACTION


def _rise_height_point_source(buoyancy_flux, buoyancy_frequency, level="maximum"):
    """Closed-form rise height [m] from total buoyancy flux F [m⁴/s³] and N [1/s] (SI arrays)."""
    F = np.asarray(buoyancy_flux, float)
    N = np.asarray(buoyancy_frequency, float)
    return _level_factor(level) * MAXIMUM_RISE_COEFFICIENT * (F / np.pi) ** 0.25 * N ** -0.75


def _buoyancy_flux_point_source(rise_height, buoyancy_frequency, level="maximum"):
    """Inverse of ``_rise_height_point_source``: F [m⁴/s³] from a rise height [m] and N [1/s]."""
    z = np.asarray(rise_height, float) / _level_factor(level)
    N = np.asarray(buoyancy_frequency, float)
    return np.pi * (z / MAXIMUM_RISE_COEFFICIENT) ** 4 * N ** 3


def _rise_height_bent_over(buoyancy_flux, current, buoyancy_frequency):
    """Strong-current rise [m]: 2.6 (F/(π U N²))^(1/3) (SI arrays) [4]_."""
    F = np.asarray(buoyancy_flux, float)
    return BENT_OVER_COEFFICIENT * (F / np.pi / (np.asarray(current, float) * np.asarray(buoyancy_frequency,
                                                                                         float) ** 2)) ** (1 / 3)


def _buoyancy_flux_bent_over(rise_height, current, buoyancy_frequency):
    """Inverse of ``_rise_height_bent_over``: F [m⁴/s³]."""
    z = np.asarray(rise_height, float)
    return np.pi * (z / BENT_OVER_COEFFICIENT) ** 3 * np.asarray(current, float) * np.asarray(
        buoyancy_frequency, float) ** 2


def _heat_power_from_buoyancy_flux(buoyancy_flux, density, thermal_expansion, gravity, cp0):
    """H = ρ c_p0 F / (g α_Θ) [W], all SI arrays [3]_."""
    return np.asarray(density) * cp0 * np.asarray(buoyancy_flux) / (gravity * np.asarray(thermal_expansion))


def _buoyancy_flux_from_heat_power(heat_power, density, thermal_expansion, gravity, cp0):
    """F = g α_Θ H / (ρ c_p0) [m⁴/s³], all SI arrays [3]_."""
    return gravity * np.asarray(thermal_expansion) * np.asarray(heat_power) / (np.asarray(density) * cp0)


# --------------------------------------------------------------------------- public, with quantities
def _si(q, unit):
    return np.asarray(q.to(unit).magnitude, float)


def _check_level(level):
    if level not in LEVELS:
        from ..errors import InputError

        raise InputError("level", level, "one of " + ", ".join(LEVELS))


@check_units(buoyancy_flux="buoyancy flux", buoyancy_frequency="frequency")
def rise_height_point_source(buoyancy_flux, buoyancy_frequency, level="maximum"):
    """Rise height of a point-source plume in uniform stratification [1]_ [2]_.

    Parameters
    ----------
    buoyancy_flux : pint.Quantity
        Total buoyancy flux F [m⁴ s⁻³].
    buoyancy_frequency : pint.Quantity
        Buoyancy frequency N [s⁻¹] of the uniform stratification.
    level : {"maximum", "spreading"}
        The plume's top, or its spreading (neutral-buoyancy) level.

    Returns
    -------
    pint.Quantity
        Height above the source [m]: 5.0 (F/π)^(1/4) N^(-3/4) at the top.
    """
    _check_level(level)
    return Q_(_rise_height_point_source(_si(buoyancy_flux, "m^4/s^3"), _si(buoyancy_frequency, "1/s"), level), "m")


@check_units(rise_height="length", buoyancy_frequency="frequency")
def buoyancy_flux_point_source(rise_height, buoyancy_frequency, level="maximum"):
    """Buoyancy flux of a point-source plume from its rise height, the inverse of ``rise_height_point_source``.

    Parameters
    ----------
    rise_height : pint.Quantity
        Height above the source [m] of ``level``.
    buoyancy_frequency : pint.Quantity
        Buoyancy frequency N [s⁻¹].
    level : {"maximum", "spreading"}

    Returns
    -------
    pint.Quantity
        Total buoyancy flux F [m⁴ s⁻³].
    """
    _check_level(level)
    return Q_(_buoyancy_flux_point_source(_si(rise_height, "m"), _si(buoyancy_frequency, "1/s"), level), "m^4/s^3")


@check_units(buoyancy_flux="buoyancy flux", current="velocity", buoyancy_frequency="frequency")
def rise_height_bent_over(buoyancy_flux, current, buoyancy_frequency):
    """Rise height of a plume bent over by a strong uniform current [4]_.

    Parameters
    ----------
    buoyancy_flux : pint.Quantity
        Total buoyancy flux F [m⁴ s⁻³].
    current : pint.Quantity
        Current speed U [m s⁻¹], > 0.
    buoyancy_frequency : pint.Quantity
        Buoyancy frequency N [s⁻¹].

    Returns
    -------
    pint.Quantity
        Height above the source [m]: 2.6 (F/(π U N²))^(1/3).
    """
    return Q_(_rise_height_bent_over(_si(buoyancy_flux, "m^4/s^3"), _si(current, "m/s"),
                                     _si(buoyancy_frequency, "1/s")), "m")


@check_units(rise_height="length", current="velocity", buoyancy_frequency="frequency")
def buoyancy_flux_bent_over(rise_height, current, buoyancy_frequency):
    """Buoyancy flux [m⁴ s⁻³] of a bent-over plume from its rise height, the inverse of ``rise_height_bent_over``.

    Parameters
    ----------
    rise_height : pint.Quantity
        Maximum height above the source [m].
    current : pint.Quantity
        Current speed U [m s⁻¹].
    buoyancy_frequency : pint.Quantity
        Buoyancy frequency N [s⁻¹].

    Returns
    -------
    pint.Quantity
    """
    return Q_(_buoyancy_flux_bent_over(_si(rise_height, "m"), _si(current, "m/s"), _si(buoyancy_frequency, "1/s")),
              "m^4/s^3")


@check_units(buoyancy_flux="buoyancy flux", density="density", thermal_expansion="thermal expansion",
             gravity="acceleration", cp0="specific heat capacity")
def heat_power_from_buoyancy_flux(buoyancy_flux, density, thermal_expansion, gravity, cp0):
    """Heat power H = ρ c_p0 F / (g α_Θ) that carries a buoyancy flux [3]_.

    Parameters
    ----------
    buoyancy_flux : pint.Quantity
        F [m⁴ s⁻³].
    density : pint.Quantity
        Ambient density ρ [kg m⁻³] at the source.
    thermal_expansion : pint.Quantity
        Thermal expansion coefficient with respect to conservative temperature α_Θ [K⁻¹].
    gravity : pint.Quantity
        Gravitational acceleration g [m s⁻²].
    cp0 : pint.Quantity
        TEOS-10's c_p0 [J kg⁻¹ K⁻¹].

    Returns
    -------
    pint.Quantity
        Heat power [W].
    """
    return Q_(_heat_power_from_buoyancy_flux(_si(buoyancy_flux, "m^4/s^3"), _si(density, "kg/m^3"),
                                             _si(thermal_expansion, "1/K"), _si(gravity, "m/s^2"),
                                             _si(cp0, "J/(kg*K)")), "W")


@check_units(heat_power="power", density="density", thermal_expansion="thermal expansion", gravity="acceleration",
             cp0="specific heat capacity")
def buoyancy_flux_from_heat_power(heat_power, density, thermal_expansion, gravity, cp0):
    """Buoyancy flux F = g α_Θ H / (ρ c_p0) [m⁴ s⁻³] of a heat power [W] [3]_.

    Parameters as ``heat_power_from_buoyancy_flux``, with ``heat_power`` (pint power) for the flux.
    """
    return Q_(_buoyancy_flux_from_heat_power(_si(heat_power, "W"), _si(density, "kg/m^3"),
                                             _si(thermal_expansion, "1/K"), _si(gravity, "m/s^2"),
                                             _si(cp0, "J/(kg*K)")), "m^4/s^3")
