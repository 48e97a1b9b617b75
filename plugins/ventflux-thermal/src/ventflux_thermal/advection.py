"""Vertical fluid flow through sediment from the curvature of a temperature–depth profile.

Steady one-dimensional advection and conduction through a layer of thickness
``L`` with fixed temperatures ``T0`` at its top (the seafloor, ``z = 0``) and
``TL`` at its base (``z = L``, depth positive down) has the solution of
Bredehoeft & Papadopulos [1]:

    (T(z) − T0) / (TL − T0) = (exp(−Pe·z/L) − 1) / (exp(−Pe) − 1),
    Pe = ρ_f c_f · w · L / k,

written here with ``w`` the Darcy velocity (specific discharge) *positive
upward*, so ``Pe > 0`` is upflow (the profile bows above the straight line)
and ``Pe < 0`` downflow; ``Pe = 0`` gives the linear conductive profile. The
fit finds ``Pe`` by a bounded one-dimensional search with ``T0`` and ``TL``
solved linearly at each trial (the profile's least squares), then refines
all three by nonlinear least squares for their covariance.

Outputs: ``w = Pe·k/(ρ_f c_f L)`` with its standard uncertainty (from ``Pe``
and, if given, ``k``), the discharge per unit area in m/yr, the conductive
heat flux at the seafloor ``k·dT/dz|₀ = k (TL − T0)/L · Pe/(1 − e^{−Pe})``,
and the advective heat flux ``ρ_f c_f w (TL − T0)``: the heat the moving
fluid carries across the layer, relative to the seafloor temperature.

Flow is *detected* (``direction`` up or down) only when the no-flow model,
the straight line, is rejected by the F test of nested models at the 5 %
level [3]; otherwise the direction is "not resolved" with its p-value.

``ρ_f c_f`` is the pore fluid's volumetric heat capacity: TEOS-10 seawater
[2] at the profile's mean temperature and the in-situ pressure, unless given.

References
----------
.. [1] Bredehoeft, J. D. and Papadopulos, I. S. (1965). Rates of vertical
   groundwater movement estimated from the Earth's thermal profile. Water
   Resour. Res. 1, 325–328.
.. [2] IOC, SCOR and IAPSO (2010). TEOS-10, IOC Manuals and Guides No. 56.
.. [3] Seber, G. A. F. and Wild, C. J. (1989). Nonlinear Regression. Wiley, §5.3 (the F test of nested
   models).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize
from ventflux.plugin_api import InputError
from ventflux.plugin_api import read_quantity_table
from ventflux.plugin_api import Uncertain, nominal, parse_uncertain
from ventflux.plugin_api import Q_, parse_quantity

from .constants import DEFAULT_SALINITY  # noqa: F401  (re-exported: defined with the CLI's defaults)
from .fitting import first_parameter_se, require_increasing

SECONDS_PER_YEAR = 365.25 * 86400.0  # Julian year (IAU)
#: Significance level of flow detection: the chance of calling a no-flow profile up- or downflow
#: (the usual 5 %; common practice, no source).
DETECTION_LEVEL = 0.05
#: Largest |Pe| searched (a choice made here): beyond it the profile is a thin boundary layer the fit cannot resolve.
PE_BOUND = 60.0


def profile_shape(peclet, zeta):
    """(T − T0)/(TL − T0) of the advection–diffusion solution [1] at ``zeta = z/L``; Pe > 0 upflow."""
    pe = np.asarray(peclet, float)
    zeta = np.asarray(zeta, float)
    small = np.abs(pe) < 1e-9
    safe = np.where(small, 1.0, pe)
    val = np.expm1(-safe * zeta) / np.expm1(-safe)
    return np.where(small, zeta, val)


@dataclass(frozen=True)
class AdvectionFit:
    """Fit of the advection–diffusion profile (SI floats)."""

    peclet: float
    peclet_se: float
    top_temperature: float  # K
    base_temperature: float  # K
    layer_thickness: float  # m
    conductivity: float  # W/(m K)
    fluid_heat_capacity: float  # J/(m^3 K)
    darcy_velocity: float  # m/s, positive upward
    darcy_velocity_se: float
    conductive_heat_flux: float  # W/m^2 at the seafloor (positive upward, i.e. out of the sediment)
    advective_heat_flux: float  # W/m^2
    misfit_rms: float  # K
    residual: np.ndarray
    flow_p_value: float = float("nan")  # of the no-flow model against the fit (F test, 1 and n − 3 dof)
    detection_level: float = 0.05

    @property
    def direction(self) -> str:
        """``upflow``/``downflow`` when the no-flow model is rejected at ``detection_level``."""
        if not self.flow_p_value < self.detection_level or self.peclet == 0:
            return (f"not resolved (p = {self.flow_p_value:.2g} against no flow; detection needs p < "
                    f"{self.detection_level:g})")
        return "upflow" if self.peclet > 0 else "downflow"

    @property
    def discharge_m_per_yr(self) -> float:
        return self.darcy_velocity * SECONDS_PER_YEAR

    def as_dict(self) -> dict:
        return {"peclet": self.peclet, "peclet_se": self.peclet_se, "direction": self.direction,
                "flow_p_value": self.flow_p_value, "detection_level": self.detection_level,
                "darcy_velocity_m_s": self.darcy_velocity, "darcy_velocity_se_m_s": self.darcy_velocity_se,
                "discharge_m_yr": self.discharge_m_per_yr,
                "discharge_se_m_yr": self.darcy_velocity_se * SECONDS_PER_YEAR,
                "top_temperature_degC": self.top_temperature - 273.15,
                "base_temperature_degC": self.base_temperature - 273.15,
                "layer_thickness_m": self.layer_thickness, "conductivity_W_m_K": self.conductivity,
                "fluid_heat_capacity_J_m3_K": self.fluid_heat_capacity,
                "conductive_heat_flux_W_m2": self.conductive_heat_flux,
                "advective_heat_flux_W_m2": self.advective_heat_flux, "misfit_rms_mK": 1e3 * self.misfit_rms,
                "residual_mK": (1e3 * self.residual).tolist()}


def no_flow_p_value(depth, temperature, residual) -> float:
    """p-value of the no-flow (linear) profile against the advection fit: the F test of nested models.

    ``F = (SSE₀ − SSE₁) / (SSE₁ / (n − 3))`` on 1 and ``n − 3`` degrees of
    freedom, SSE₀ the misfit of the straight line and SSE₁ that of the
    three-parameter fit [3]. For a model nonlinear in ``Pe`` the F
    distribution is an approximation; its false-detection rate is checked by
    simulation in the tests.
    """
    from scipy import stats

    z = np.asarray(depth, float)
    T = np.asarray(temperature, float)
    n = z.size
    X = np.column_stack([np.ones(n), z])
    coef, *_ = np.linalg.lstsq(X, T, rcond=None)
    sse0 = float(((T - X @ coef) ** 2).sum())
    sse1 = float(np.asarray(residual) @ np.asarray(residual))
    if n <= 3 or sse1 <= 0:
        return 0.0 if sse0 > sse1 else 1.0
    F = max(sse0 - sse1, 0.0) / (sse1 / (n - 3))
    return float(stats.f.sf(F, 1, n - 3))


def fit_peclet(depth, temperature, layer_thickness=None):
    """Péclet number, T0 and TL of the profile (plain SI arrays: m, K).

    Returns ``(pe, pe_se, T0, TL, L, residual)``.
    """
    z = np.asarray(depth, float)
    T = np.asarray(temperature, float)
    L = float(z.max()) if layer_thickness is None else float(layer_thickness)
    zeta = z / L

    def linear(pe):
        f = profile_shape(pe, zeta)
        X = np.column_stack([1.0 - f, f])  # T = T0 (1 − f) + TL f
        coef, *_ = np.linalg.lstsq(X, T, rcond=None)
        r = T - X @ coef
        return coef, float(r @ r)

    grid = np.linspace(-PE_BOUND, PE_BOUND, 241)
    j = int(np.argmin(_grid_sse(grid, zeta, T)))  # coarse bracket, all trials at once
    lo, hi = grid[max(j - 1, 0)], grid[min(j + 1, grid.size - 1)]
    best = optimize.minimize_scalar(lambda pe: linear(pe)[1], bounds=(lo, hi), method="bounded",
                                    options={"xatol": 1e-7})
    pe = float(best.x)
    (T0, TL), _ = linear(pe)

    def resid(p):
        return p[1] + (p[2] - p[1]) * profile_shape(p[0], zeta) - T

    sol = optimize.least_squares(resid, [pe, T0, TL], x_scale=[1.0, 0.1, 0.1])
    return float(sol.x[0]), first_parameter_se(sol), float(sol.x[1]), float(sol.x[2]), L, sol.fun


def _grid_sse(grid, zeta, T):
    """Least-squares misfit of T = T0 (1 − f) + TL f for every trial Pe of ``grid`` (vectorized)."""
    f = profile_shape(grid[:, None], zeta[None, :])
    g = 1.0 - f
    a, b, c = (g * g).sum(1), (g * f).sum(1), (f * f).sum(1)
    y1, y2 = (g * T).sum(1), (f * T).sum(1)
    det = a * c - b * b
    T0 = (c * y1 - b * y2) / det
    TL = (a * y2 - b * y1) / det
    return ((T[None, :] - T0[:, None] * g - TL[:, None] * f) ** 2).sum(1)


def pore_fluid_heat_capacity(temperature, pressure, salinity=DEFAULT_SALINITY):
    """ρ·c_p of seawater pore fluid [J/(m³ K)] at in-situ temperature and absolute pressure.

    From the core's seawater model from freezing to boiling (TEOS-10 to 40 °C, IAPWS-08's saline part beyond,
    continuous across the joins): c_p as the centred difference of enthalpy over ±0.05 K, ρ at the temperature.
    Warm pore water at a shallow site is taken as seawater, not refused.
    """
    from ventflux.plugin_api import absolute_salinity, sea_pressure_dbar, seawater_enthalpy_density

    t = float(temperature.to("degC").magnitude)
    p = float(sea_pressure_dbar(pressure))
    SA = float(absolute_salinity(float(salinity), p))
    dt = 0.05
    h, rho, _ = seawater_enthalpy_density([t - dt, t, t + dt], SA, p, field="temperature")
    return float(rho[1] * (h[2] - h[0]) / (2 * dt))


def fit_advection(depth, temperature, conductivity, *, pressure=None, layer_thickness=None,
                  fluid_heat_capacity=None, salinity=DEFAULT_SALINITY) -> AdvectionFit:
    """Fit the advection–diffusion solution [1] to a T(z) profile: Péclet number, Darcy velocity, heat fluxes.

    Parameters
    ----------
    depth : pint.Quantity
        Depths below the seafloor (positive down), at least 4 distinct.
    temperature : pint.Quantity
        Temperatures at those depths.
    conductivity : pint.Quantity or Uncertain
        Bulk thermal conductivity of the sediment (uniform); its uncertainty
        enters the velocity's.
    pressure : pint.Quantity, optional
        Absolute pressure for the pore fluid's heat capacity (required unless
        ``fluid_heat_capacity`` is given).
    layer_thickness : pint.Quantity, optional
        ``L``; default the deepest measurement.
    fluid_heat_capacity : pint.Quantity, optional
        ρ_f c_f; default TEOS-10 seawater at the mean profile temperature.

    Returns
    -------
    AdvectionFit
    """
    z = np.asarray(depth.to("m").magnitude, float)
    T = np.asarray(temperature.to("K").magnitude, float)
    if z.size < 4 or np.unique(z).size < 4:
        raise InputError("profile", f"{np.unique(z).size} distinct depths", "at least 4 distinct depths")
    if np.any(z < 0):
        raise InputError("depth", f"{z.min():g} m", "depths ≥ 0 m below the seafloor")
    if not np.ptp(T) > 0:
        raise InputError("profile", f"{T[0] - 273.15:g} degC at every depth",
                         "a profile whose temperature changes with depth")
    k_nom = float(nominal(conductivity).to("W/(m*K)").magnitude)
    if not k_nom > 0:
        raise InputError("conductivity", f"{k_nom:g} W/(m K)", "a conductivity > 0")
    k_rel = 0.0
    if isinstance(conductivity, Uncertain):
        if conductivity.kind != "normal":
            raise InputError("conductivity", str(conductivity), "a value or 'value ± sd' (normal)")
        k_rel = conductivity.b / conductivity.a
    Lq = None if layer_thickness is None else float(layer_thickness.to("m").magnitude)
    if Lq is not None and not Lq >= z.max():
        raise InputError("layer thickness", f"{Lq:g} m", f"a thickness ≥ the deepest measurement ({z.max():g} m)")
    pe, pe_se, T0, TL, L, r = fit_peclet(z, T, Lq)
    if fluid_heat_capacity is not None:
        rc = float(fluid_heat_capacity.to("J/(m^3*K)").magnitude)
        if not rc > 0:
            raise InputError("fluid heat capacity", f"{rc:g} J/(m^3 K)", "a volumetric heat capacity > 0")
    else:
        if pressure is None:
            raise InputError("pressure", "(missing)", "the in-situ pressure (or a fluid heat capacity)")
        rc = pore_fluid_heat_capacity(Q_(float(T.mean()), "K"), pressure, salinity)
    w = pe * k_nom / (rc * L)
    w_se = abs(w) * np.hypot(pe_se / pe, k_rel) if pe != 0 else pe_se * k_nom / (rc * L)
    dT = TL - T0
    grad_factor = 1.0 if abs(pe) < 1e-9 else pe / -np.expm1(-pe)
    q_cond = k_nom * dT / L * grad_factor
    return AdvectionFit(peclet=pe, peclet_se=pe_se, top_temperature=T0, base_temperature=TL, layer_thickness=L,
                        conductivity=k_nom, fluid_heat_capacity=rc, darcy_velocity=w, darcy_velocity_se=float(w_se),
                        conductive_heat_flux=float(q_cond), advective_heat_flux=float(rc * w * dT),
                        misfit_rms=float(np.sqrt(np.mean(r * r))), residual=r,
                        flow_p_value=no_flow_p_value(z, T, r), detection_level=DETECTION_LEVEL)


def read_profile(path):
    """A T(z) profile CSV: ``depth [m]`` (below the seafloor) and ``temperature [degC]``; depth must increase."""
    tbl = read_quantity_table(path, {"depth": "length", "temperature": "temperature"})
    require_increasing(tbl["depth"].to("m").magnitude, tbl.lines, path, "depth", "m")
    return tbl["depth"], tbl["temperature"]


def profile_velocity(profile, conductivity="1.0 W/(m*K)", pressure=None, depth=None, layer_thickness=None,
                     fluid_heat_capacity=None, salinity=DEFAULT_SALINITY):
    """Velocity source for the diffuse estimator: Darcy velocity (upward positive) and its standard uncertainty.

    Options arrive as quantity strings from the command line (``conductivity="1.1 ± 0.1 W/(m K)"``,
    ``pressure="22 MPa"`` or ``depth="2200 m"`` of the seafloor below the sea surface).

    Returns
    -------
    tuple of pint.Quantity
        ``(w, sd)``; a downflow gives ``w < 0``, which the diffuse estimator refuses.
    """
    from ventflux.plugin_api import pressure_from_depth

    if profile is None:
        raise InputError("velocity source input", "(missing)", "a temperature-depth profile CSV (--source-input)")
    z, T = read_profile(profile)
    k = parse_uncertain(conductivity, "thermal conductivity", "conductivity") if isinstance(conductivity, str) \
        else conductivity
    p = None
    if pressure is not None:
        p = parse_quantity(pressure, "pressure", "pressure") if isinstance(pressure, str) else pressure
    elif depth is not None:
        p = pressure_from_depth(parse_quantity(depth, "length", "depth", "m") if isinstance(depth, str) else depth)
    L = parse_quantity(layer_thickness, "length", "layer thickness") if isinstance(layer_thickness, str) \
        else layer_thickness
    rc = parse_quantity(fluid_heat_capacity, "volumetric heat capacity", "fluid heat capacity") \
        if isinstance(fluid_heat_capacity, str) else fluid_heat_capacity
    sp = float(parse_quantity(salinity, "dimensionless", "salinity").magnitude) if isinstance(salinity, str) \
        else float(salinity)
    fit = fit_advection(z, T, k, pressure=p, layer_thickness=L, fluid_heat_capacity=rc, salinity=sp)
    return Q_(fit.darcy_velocity, "m/s"), Q_(fit.darcy_velocity_se, "m/s")
