"""Pure-plume theory: buoyancy flux from the decay of centreline velocity, and heat power.

Far enough above a source whose momentum no longer matters, a turbulent
plume in unstratified surroundings has a centreline vertical velocity

    w_c(z) = k (F / (z - z0))^(1/3)                                   [1]

with ``F`` the buoyancy flux (m^4/s^3, ``F = ∫ g' w dA``), ``z0`` the height
of the virtual point source and ``k`` an empirical constant. Fitting ``F`` and
``z0`` to a measured ``w_c(z)`` gives the buoyancy flux from video alone. A
thermal plume's heat power then follows from seawater's expansion:
``H = rho c_p F / (g alpha)`` [4], with TEOS-10 properties of the ambient
water [5]. The conversion treats the plume as purely thermal (salinity
anomaly ignored) and the ambient as unstratified.

Why ``c_p F / (g alpha)`` is an enthalpy flux here and not a shortcut: far
above the source the plume is entrained seawater a few hundredths of a kelvin
warmer than its surroundings, and TEOS-10 defines conservative temperature so
that potential enthalpy is exactly ``cp0`` times it [5]; the buoyancy anomaly
is ``g alpha_Theta dTheta`` to first order in that small anomaly.

The constant ``k``: [2] gives 4.7 for Gaussian profiles (from memory), [3]
3.85 ± 0.15 (from memory). As ``F ∝ k^-3``, the choice moves ``F`` by a factor
(4.7/3.85)^3 = 1.8. ``PLUME_CONSTANT_RANGE`` is that published range: the
Monte Carlo draws ``k`` uniformly over it by default, and
``DEFAULT_PLUME_CONSTANT``, its middle, is the nominal value; it is a
parameter everywhere and reported with every result.

References
----------
.. [1] Morton, B. R., Taylor, G. I. and Turner, J. S. (1956). Turbulent
   gravitational convection from maintained and instantaneous sources.
   Proc. R. Soc. Lond. A 234, 1-23.
.. [2] Rouse, H., Yih, C. S. and Humphreys, H. W. (1952). Gravitational
   convection from a boundary source. Tellus 4, 201-210 (from memory).
.. [3] Papanicolaou, P. N. and List, E. J. (1988). Investigations of round
   vertical turbulent buoyant jets. J. Fluid Mech. 195, 341-391 (from memory).
.. [4] Turner, J. S. (1973). Buoyancy Effects in Fluids. Cambridge University
   Press, ch. 6 (heat flux and buoyancy flux; from memory).
.. [5] IOC, SCOR and IAPSO (2010). The international thermodynamic equation of
   seawater - 2010. Manuals and Guides No. 56.
.. [6] CGPM (1901). Standard acceleration of gravity 9.80665 m/s^2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import curve_fit

from ventflux.plugin_api import InputError
from ventflux.plugin_api import Q_, magnitude

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import pint

#: Published range of the centreline velocity constant of pure-plume theory, [3] to [2] (from memory).
PLUME_CONSTANT_RANGE = (3.85, 4.7)
#: Nominal k: the middle of the published range.
DEFAULT_PLUME_CONSTANT = 0.5 * (PLUME_CONSTANT_RANGE[0] + PLUME_CONSTANT_RANGE[1])
#: Standard gravity [6], used when no latitude is given (local g differs by < 0.3 %).
STANDARD_GRAVITY = 9.80665


def plume_centreline_speed(height, buoyancy_flux, virtual_origin, plume_constant=DEFAULT_PLUME_CONSTANT):
    """Centreline vertical velocity of a pure plume, ``k (F/(z - z0))^(1/3)`` [1].

    Parameters
    ----------
    height, virtual_origin : pint.Quantity
        Height above the orifice and the virtual source's height (length).
    buoyancy_flux : pint.Quantity
        m^4/s^3.
    plume_constant : float
        ``k`` (see module notes).

    Returns
    -------
    pint.Quantity
        Velocity; NaN at or below the virtual origin.
    """
    z = magnitude(height, "m", "length", "height")
    z0 = magnitude(virtual_origin, "m", "length", "virtual origin")
    f = buoyancy_flux.to("m^4/s^3").magnitude
    dz = np.asarray(z, float) - z0
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.where(dz > 0, plume_constant * np.cbrt(f / np.where(dz > 0, dz, 1.0)), np.nan)
    return Q_(w, "m/s")


@dataclass(frozen=True)
class PlumeFit:
    """Buoyancy flux and virtual origin fitted to a centreline profile."""

    buoyancy_flux: pint.Quantity  # m^4/s^3
    buoyancy_flux_sd: pint.Quantity
    virtual_origin: pint.Quantity  # m
    virtual_origin_sd: pint.Quantity
    plume_constant: float
    points: int
    rms_residual: pint.Quantity  # m/s

    def as_dict(self):
        return {
            "buoyancy_flux_m4_s3": self.buoyancy_flux.to("m^4/s^3").magnitude,
            "buoyancy_flux_sd_m4_s3": self.buoyancy_flux_sd.to("m^4/s^3").magnitude,
            "virtual_origin_m": self.virtual_origin.to("m").magnitude,
            "virtual_origin_sd_m": self.virtual_origin_sd.to("m").magnitude,
            "plume_constant": self.plume_constant,
            "fit_points": self.points,
            "fit_rms_residual_m_s": self.rms_residual.to("m/s").magnitude,
        }


def buoyancy_flux_from_centreline(height, centreline_velocity, velocity_sd=None,
                                  plume_constant=DEFAULT_PLUME_CONSTANT) -> PlumeFit:
    """Fit ``w_c = k (F/(z - z0))^(1/3)`` [1] for ``F`` and ``z0`` (weighted least squares).

    The start comes from the straight line ``w_c^-3 = (z - z0) / (k^3 F)``; the
    nonlinear fit is on ``w_c`` itself, weighted by ``velocity_sd`` when given,
    with standard errors scaled by the residual scatter.

    Parameters
    ----------
    height : pint.Quantity
        Heights above the orifice (at least 3 points).
    centreline_velocity : pint.Quantity
        Upward centreline velocity at those heights (> 0).
    velocity_sd : pint.Quantity, optional
        Standard error of each velocity.
    plume_constant : float
        ``k``.

    Returns
    -------
    PlumeFit
    """
    z = np.asarray(magnitude(height, "m", "length", "height"), float)
    w = np.asarray(magnitude(centreline_velocity, "m/s", "velocity", "centreline velocity"), float)
    sd = None if velocity_sd is None else np.asarray(magnitude(velocity_sd, "m/s", "velocity", "velocity sd"), float)
    ok = np.isfinite(z) & np.isfinite(w) & (w > 0)
    if sd is not None:
        ok &= np.isfinite(sd) & (sd > 0)
    if ok.sum() < 3:
        raise InputError("centreline profile", f"{int(ok.sum())} usable heights",
                         "at least 3 heights with upward velocity for the plume fit")
    if not plume_constant > 0:
        raise InputError("plume constant", plume_constant, "a number > 0")
    z, w = z[ok], w[ok]
    sd = None if sd is None else sd[ok]
    slope, intercept = np.polyfit(z, w**-3.0, 1)
    k = plume_constant
    if slope > 0 and -intercept / slope < z.min():
        c0, z00 = (1 / (k**3 * slope)) ** (1 / 3), -intercept / slope
    else:  # no decay visible: start from the mean speed and a source just below
        c0, z00 = np.mean(w) * np.cbrt(np.mean(z) + 1.0) / k, -1.0
    span = max(z.max() - z.min(), 1e-3)

    def model(zz, c, z0):
        return k * c * np.cbrt(1.0 / np.maximum(zz - z0, 1e-12))

    lo_z0 = z.min() - 1e3 * span
    hi_z0 = z.min() - 1e-6 * span
    try:
        (c, z0), cov = curve_fit(model, z, w, p0=(c0, float(np.clip(z00, lo_z0 + span, hi_z0 - 1e-3 * span))),
                                 sigma=sd, absolute_sigma=False, bounds=([0.0, lo_z0], [np.inf, hi_z0]))
        sd_c, sd_z0 = np.sqrt(np.clip(np.diag(cov), 0, np.inf))
    except RuntimeError:  # the fit did not converge (a level profile runs the origin away without end)
        c, z0, sd_c, sd_z0 = np.nan, lo_z0, np.inf, np.inf
    # A profile whose speed does not fall with height (a clip of noise, a corrupted video, a region beside the
    # plume) sends the virtual origin to the fit's far bound and the buoyancy flux's error to infinity: no result
    # rather than a number. "At the bound" is within 1 % of the bound's range (common practice, no source).
    if not (np.isfinite(sd_c) and np.isfinite(sd_z0)) or z0 - lo_z0 < 0.01 * (hi_z0 - lo_z0):
        raise InputError("centreline profile", f"no plume-like decay of the centreline speed over {z.size} heights "
                         f"({z.min():.3g}-{z.max():.3g} m; the fit's virtual origin runs to {z0:.3g} m or beyond)",
                         "a centreline speed that falls with height as w = k (F/(z - z0))^(1/3); check the clip, "
                         "its region and the orifice position")
    resid = w - model(z, c, z0)
    return PlumeFit(
        buoyancy_flux=Q_(c**3, "m^4/s^3"),
        buoyancy_flux_sd=Q_(3 * c**2 * sd_c, "m^4/s^3"),
        virtual_origin=Q_(z0, "m"),
        virtual_origin_sd=Q_(sd_z0, "m"),
        plume_constant=k,
        points=int(z.size),
        rms_residual=Q_(float(np.sqrt(np.mean(resid**2))), "m/s"),
    )


def gravity(latitude=None, pressure=None):
    """Acceleration of gravity [m/s^2]: TEOS-10's ``grav`` at a latitude, else standard gravity [6]."""
    if latitude is None:
        return STANDARD_GRAVITY
    import gsw

    from ventflux.plugin_api import sea_pressure_dbar

    lat = latitude.to("degree").magnitude if hasattr(latitude, "to") else float(latitude)
    p = 0.0 if pressure is None else sea_pressure_dbar(pressure)
    return float(gsw.grav(lat, p))


def heat_power_from_buoyancy_flux(buoyancy_flux, temperature, salinity, pressure, latitude=None):
    """Heat power of a thermal plume, ``H = rho c_p F / (g alpha)`` [4].

    ``alpha`` is TEOS-10's thermal expansion with respect to conservative
    temperature, so the matching heat capacity is TEOS-10's ``cp0`` (the heat
    content of seawater is ``cp0`` times conservative temperature) [5].

    Parameters
    ----------
    buoyancy_flux : pint.Quantity
        m^4/s^3 (may be an array).
    temperature, salinity, pressure : pint.Quantity
        Ambient in-situ temperature, practical salinity, absolute pressure.
    latitude : pint.Quantity or float, optional
        For local gravity; standard gravity if not given.

    Returns
    -------
    pint.Quantity
        Heat power in W.
    """
    from ventflux.plugin_api import seawater_state
    from ventflux.plugin_api import CP0

    f = magnitude(buoyancy_flux, "m^4/s^3", None, "buoyancy flux") if hasattr(buoyancy_flux, "to") else None
    if f is None:
        raise InputError("buoyancy flux", buoyancy_flux, "a quantity in m^4/s^3")
    sw = seawater_state(temperature, salinity, pressure, latitude=latitude)
    rho = sw.density.to("kg/m^3").magnitude
    alpha = sw.thermal_expansion.to("1/K").magnitude
    if np.any(np.asarray(alpha) <= 0):
        raise InputError("ambient temperature", f"{temperature:~P}",
                         "water warmer than its density maximum (thermal expansion > 0) "
                         "for a buoyancy-to-heat conversion")
    return Q_(rho * CP0 * np.asarray(f) / (gravity(latitude, pressure) * alpha), "W")
