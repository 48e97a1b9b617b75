"""Closed-form rise of a point-source plume in uniform stratification, both directions.

A pure plume of total buoyancy flux F (m⁴ s⁻³) from a point source in a
stratification of constant buoyancy frequency N rises to [1]_ [2]_

    z_max = 5.0 (F/π)^(1/4) N^(-3/4),

(the coefficient belongs to the entrainment coefficient of [1]_, 0.093 in the
Gaussian convention, 0.132 top-hat) and spreads laterally at its level of
neutral buoyancy, about 0.76 z_max (``SPREADING_FRACTION``). The heat power
that carries a buoyancy flux F is H = ρ c_p0 F / (g α_Θ) [3]_, with TEOS-10's
c_p0 and the thermal expansion coefficient with respect to conservative
temperature at the vent (``heat_power_from_buoyancy_flux``).

A bent-over plume in a strong uniform current U rises to [4]_

    z_max ≈ 2.6 (F_b / (U N²))^(1/3),   F_b = F/π,

with F_b the buoyancy flux parameter g w b² Δρ/ρ of [2]_ [4]_ (a top-hat
plume's F divided by π); 2.6 = (6/β²)^(1/3) for a cross-flow entrainment
coefficient β ≈ 0.6.

All functions take plain SI arrays (documented as such) and broadcast.

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


def rise_height_point_source(buoyancy_flux, buoyancy_frequency, level="maximum"):
    """Closed-form rise height [m] from total buoyancy flux F [m⁴/s³] and N [1/s] (SI arrays)."""
    F = np.asarray(buoyancy_flux, float)
    N = np.asarray(buoyancy_frequency, float)
    return _level_factor(level) * MAXIMUM_RISE_COEFFICIENT * (F / np.pi) ** 0.25 * N ** -0.75


def buoyancy_flux_point_source(rise_height, buoyancy_frequency, level="maximum"):
    """Inverse of ``rise_height_point_source``: F [m⁴/s³] from a rise height [m] and N [1/s]."""
    z = np.asarray(rise_height, float) / _level_factor(level)
    N = np.asarray(buoyancy_frequency, float)
    return np.pi * (z / MAXIMUM_RISE_COEFFICIENT) ** 4 * N ** 3


def rise_height_bent_over(buoyancy_flux, current, buoyancy_frequency):
    """Strong-current rise [m]: 2.6 (F/(π U N²))^(1/3) (SI arrays) [4]_."""
    F = np.asarray(buoyancy_flux, float)
    return BENT_OVER_COEFFICIENT * (F / np.pi / (np.asarray(current, float) * np.asarray(buoyancy_frequency,
                                                                                         float) ** 2)) ** (1 / 3)


def buoyancy_flux_bent_over(rise_height, current, buoyancy_frequency):
    """Inverse of ``rise_height_bent_over``: F [m⁴/s³]."""
    z = np.asarray(rise_height, float)
    return np.pi * (z / BENT_OVER_COEFFICIENT) ** 3 * np.asarray(current, float) * np.asarray(
        buoyancy_frequency, float) ** 2


def heat_power_from_buoyancy_flux(buoyancy_flux, density, thermal_expansion, gravity, cp0):
    """H = ρ c_p0 F / (g α_Θ) [W], all SI arrays [3]_."""
    return np.asarray(density) * cp0 * np.asarray(buoyancy_flux) / (gravity * np.asarray(thermal_expansion))


def buoyancy_flux_from_heat_power(heat_power, density, thermal_expansion, gravity, cp0):
    """F = g α_Θ H / (ρ c_p0) [m⁴/s³], all SI arrays [3]_."""
    return gravity * np.asarray(thermal_expansion) * np.asarray(heat_power) / (np.asarray(density) * cp0)
