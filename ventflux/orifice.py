"""Discharge of a vent orifice from its exit temperature, velocity and size.

The heat power of a focused vent is the mass flux through the orifice times
the specific enthalpy the fluid carries above ambient:

    H = ρ(T, p) · ū · A · [h(T, p) − h(T_a, p)]

with ρ and h from one vent-fluid equation of state (IAPWS-95, pure water, by
default) at the in-situ pressure p, ū the area-mean exit velocity and A the
orifice area. The common shortcut H ≈ ρ ū A c_p (T − T_a) with a constant c_p
is reported beside it, since people compare: at 350 °C and 25 MPa the mean
heat capacity of water between ambient and exit temperature is about 14 %
above TEOS-10's c_p0, so the shortcut falls short by about that much.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for
   the Thermodynamic Properties of Ordinary Water Substance.
.. [2] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010 (TEOS-10), Manuals and Guides No. 56, eq. (3.3.3) for c_p0.
.. [3] Schlichting, H. and Gersten, K. (2017). Boundary-Layer Theory, 9th ed.,
   Springer, ch. 17 (power-law velocity profile of turbulent pipe flow; from memory).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, fields

import numpy as np
import pint

from .errors import InputError
from .properties.heat import SHORTCUT_HEAT_CAPACITY, ambient_enthalpy, shortcut_heat_content
from .properties.seawater import (
    REFERENCE_SALINITY,
    pressure_from_depth,
    seawater_state,
)
from .properties.ventfluid import DEFAULT_MODEL as DEFAULT_FLUID
from .uncertainty import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    SITE_INPUT_NAMES,
    SharedDraws,
    Summary,
    Uncertain,
    nominal,
    propagate,
    summarize,
)
from .units import Q_, check_units, magnitude, require_dimension

# SHORTCUT_HEAT_CAPACITY (TEOS-10's c_p0 [2]) and the shortcut itself are defined once, in
# ventflux.properties.heat, for every estimator.
#: Area-mean over centreline velocity of fully developed turbulent pipe flow,
#: from the 1/7-power-law profile: 2 n² / ((n + 1)(2n + 1)) with n = 7 gives
#: 49/60 ≈ 0.817 [3] (from memory). Jets leaving chimney orifices are rarely
#: fully developed; measure the profile when it matters.
CENTERLINE_PROFILE_FACTOR = 49.0 / 60.0
#: Practical salinity assumed for ambient seawater when none is given
#: (``properties.seawater.REFERENCE_SALINITY``: 35, TEOS-10's standard seawater [2]).
DEFAULT_AMBIENT_SALINITY = REFERENCE_SALINITY
VELOCITY_KINDS = ("area-mean", "centerline")


from .presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(frozen=True, repr=False)
class OrificeDischarge(Presentable):
    """Discharge of one orifice (or arrays of orifices or of Monte Carlo draws)."""

    area: pint.Quantity
    mean_velocity: pint.Quantity
    pressure: pint.Quantity
    exit_density: pint.Quantity
    ambient_density: pint.Quantity
    mass_flux: pint.Quantity
    volume_flux_exit: pint.Quantity
    volume_flux_ambient: pint.Quantity
    specific_heat_content: pint.Quantity
    heat_power: pint.Quantity
    heat_power_constant_cp: pint.Quantity
    shortcut_difference: pint.Quantity  # (shortcut − enthalpy) / enthalpy, percent

    #: (attribute, unit, JSON/column name) of every output, in report order.
    OUTPUTS = (
        ("heat_power", "W", "heat_power"),
        ("heat_power_constant_cp", "W", "heat_power_constant_cp"),
        ("shortcut_difference", "dimensionless", "constant_cp_difference"),  # a ratio: bare JSON key
        ("mass_flux", "kg/s", "mass_flux"),
        ("volume_flux_exit", "m^3/s", "volume_flux_exit"),
        ("volume_flux_ambient", "m^3/s", "volume_flux_ambient"),
        ("specific_heat_content", "J/kg", "specific_heat_content"),
        ("exit_density", "kg/m^3", "exit_density"),
        ("ambient_density", "kg/m^3", "ambient_density"),
        ("mean_velocity", "m/s", "mean_velocity"),
        ("area", "m^2", "area"),
        ("pressure", "Pa", "absolute_pressure"),
    )

    def total(self) -> OrificeDischarge:
        """Sum over the orifices of one structure (the first axis).

        Fluxes and powers add; the intensive outputs of the sum are
        flux-weighted (density, heat content) or recomputed from the sums.
        """
        def s(q):
            return q.sum(axis=0)

        m = s(self.mass_flux)
        H = s(self.heat_power)
        Hc = s(self.heat_power_constant_cp)
        A = s(self.area)
        return OrificeDischarge(
            area=A,
            mean_velocity=(s(self.volume_flux_exit) / A).to("m/s"),
            pressure=(self.pressure * self.mass_flux).sum(axis=0) / m,
            exit_density=(m / s(self.volume_flux_exit)).to("kg/m^3"),
            ambient_density=(m / s(self.volume_flux_ambient)).to("kg/m^3"),
            mass_flux=m,
            volume_flux_exit=s(self.volume_flux_exit),
            volume_flux_ambient=s(self.volume_flux_ambient),
            specific_heat_content=(H / m).to("J/kg"),
            heat_power=H,
            heat_power_constant_cp=Hc,
            shortcut_difference=((Hc - H) / H).to("percent"),
        )

    def as_dict(self) -> dict:
        """Outputs as floats (or lists) with units in the keys: ``heat_power_W``."""
        from .vocabulary import json_key

        out = {}
        for attr, unit, name in self.OUTPUTS:
            v = getattr(self, attr).to(unit).magnitude
            out[json_key(name, "" if unit == "dimensionless" else unit)] = v.tolist() if np.ndim(v) else float(v)
        return out


def orifice_area(diameter=None, area=None, minor_diameter=None):
    """Cross-sectional area of a circular or elliptical orifice.

    Parameters
    ----------
    diameter : pint.Quantity, optional
        Diameter of a circular orifice, or the major axis of an ellipse when
        ``minor_diameter`` is given.
    area : pint.Quantity, optional
        The area itself (from image analysis, say); exclusive with diameter.
    minor_diameter : pint.Quantity, optional
        Minor axis of an elliptical orifice.

    Returns
    -------
    pint.Quantity
        Area in m².
    """
    if (diameter is None) == (area is None):
        raise InputError("diameter", "both or neither of diameter and area",
                         "exactly one of a diameter (circular or with a minor diameter, elliptical) or an area")
    if area is not None:
        a = require_dimension(area, "area", "area").to("m^2")
        _positive(a, "area", "an area > 0")
        return a
    d = require_dimension(diameter, "length", "diameter").to("m")
    _positive(d, "diameter", "a diameter > 0")
    if minor_diameter is None:
        return (np.pi / 4 * d**2).to("m^2")
    d2 = require_dimension(minor_diameter, "length", "minor diameter").to("m")
    _positive(d2, "minor diameter", "a minor diameter > 0")
    return (np.pi / 4 * d * d2).to("m^2")


def _positive(q, field, allowed):
    mag = np.asarray(q.magnitude)
    if np.any(~(mag > 0)):
        bad = mag[~(mag > 0)].flat[0]
        raise InputError(field, f"{bad:g} {q.units:~P}", allowed)


def mean_exit_velocity(velocity, kind: str = "area-mean", profile_factor: float = CENTERLINE_PROFILE_FACTOR):
    """Area-mean exit velocity from a measured area-mean or centreline velocity.

    Parameters
    ----------
    velocity : pint.Quantity
    kind : {"area-mean", "centerline"}
    profile_factor : float
        Ratio of area-mean to centreline velocity, used for ``"centerline"``;
        default 49/60 (1/7-power-law turbulent profile, see module references).
    """
    v = require_dimension(velocity, "velocity", "velocity").to("m/s")
    _positive(v, "velocity", "an exit velocity > 0 (upward)")
    if kind not in VELOCITY_KINDS:
        raise InputError("velocity kind", kind, "one of " + ", ".join(VELOCITY_KINDS))
    if kind == "area-mean":
        return v
    if not np.all((np.asarray(profile_factor) > 0) & (np.asarray(profile_factor) <= 1)):  # a value or its draws
        raise InputError("profile factor", profile_factor, "a ratio of mean to centreline velocity in (0, 1]")
    return v * profile_factor


def in_situ_pressure(pressure=None, depth=None, latitude=None):
    """Absolute pressure from a given pressure or from depth (TEOS-10 ``p_from_z``)."""
    if (pressure is None) == (depth is None):
        raise InputError("pressure", "both or neither of pressure and depth", "exactly one of pressure or depth")
    if pressure is not None:
        p = require_dimension(pressure, "pressure", "pressure").to("Pa")
        _positive(p, "pressure", "an absolute pressure > 0")
        return p
    return pressure_from_depth(depth, latitude)


@check_units(temperature="temperature", velocity="velocity", diameter="length", area="area",
             minor_diameter="length", pressure="pressure", depth="length", ambient_temperature="temperature",
             ambient_salinity="dimensionless")
def orifice_discharge(temperature, velocity, diameter=None, *, area=None, minor_diameter=None,
                      pressure=None, depth=None, latitude=None, longitude=None,
                      ambient_temperature, ambient_salinity=DEFAULT_AMBIENT_SALINITY,
                      velocity_kind: str = "area-mean", profile_factor: float = CENTERLINE_PROFILE_FACTOR,
                      fluid=None, shortcut_heat_capacity=SHORTCUT_HEAT_CAPACITY) -> OrificeDischarge:
    """Mass, volume and heat discharge of a vent orifice.

    All quantity arguments may be arrays (several orifices, or Monte Carlo
    draws); they broadcast against each other.

    Parameters
    ----------
    temperature : pint.Quantity
        Exit temperature of the vent fluid.
    velocity : pint.Quantity
        Exit velocity: area-mean by default, see ``velocity_kind``.
    diameter, area, minor_diameter : pint.Quantity
        Orifice size: a diameter (circular), a diameter and a minor diameter
        (elliptical), or an area.
    pressure, depth, latitude : pint.Quantity
        Absolute in-situ pressure, or depth (and latitude) to compute it.
    ambient_temperature : pint.Quantity
        In-situ temperature of ambient seawater.
    ambient_salinity : float
        Practical salinity of ambient seawater (default 35).
    velocity_kind : {"area-mean", "centerline"}
    profile_factor : float
        Mean/centreline velocity ratio for ``"centerline"``.
    fluid : FluidModel, optional
        Vent-fluid equation of state (an object, e.g. from
        ``ventflux.registry.fluid_model(name)``); default pure water,
        IAPWS-95 [1]. The name of one of the core's models is accepted too.
    shortcut_heat_capacity : pint.Quantity
        Heat capacity of the constant-c_p shortcut reported beside the result.

    Returns
    -------
    OrificeDischarge

    Raises
    ------
    InputError
        For a non-positive size or velocity, an exit temperature not above
        ambient, a point outside an equation of state's validity, or boiling.
    """
    model = _model(fluid)
    A = orifice_area(diameter, area, minor_diameter)
    v = mean_exit_velocity(velocity, velocity_kind, profile_factor)
    p = in_situ_pressure(pressure, depth, latitude)
    T = np.asarray(magnitude(temperature, "K", "temperature", "temperature"), float)
    Ta = np.asarray(magnitude(ambient_temperature, "K", "temperature", "ambient temperature"), float)
    pa = np.asarray(p.to("Pa").magnitude, float)
    hot = T > Ta
    if not np.all(hot):
        bad = np.broadcast_to(T, np.broadcast(T, Ta).shape)[~np.broadcast_to(hot, np.broadcast(T, Ta).shape)]
        raise InputError("temperature", f"{bad.flat[0] - 273.15:.4g} degC",
                         "an exit temperature above the ambient temperature")
    model.check(T, pa, "temperature")
    ambient = seawater_state(Q_(Ta, "K"), ambient_salinity, p, longitude=longitude, latitude=latitude)
    h_exit, rho_exit = model.enthalpy_density(T, pa)
    h_amb = ambient_enthalpy(model, Ta, pa)  # down to seawater's freezing point (properties.heat)
    rho = Q_(rho_exit, "kg/m^3")
    mass = (rho * v * A).to("kg/s")
    dh = Q_(h_exit - h_amb, "J/kg")
    H = (mass * dh).to("W")
    Hc = (mass * shortcut_heat_content(Q_(T, "K"), Q_(Ta, "K"), shortcut_heat_capacity)).to("W")
    return OrificeDischarge(
        area=A,
        mean_velocity=v,
        pressure=p,
        exit_density=rho,
        ambient_density=ambient.density,
        mass_flux=mass,
        volume_flux_exit=(v * A).to("m^3/s"),
        volume_flux_ambient=(mass / ambient.density).to("m^3/s"),
        specific_heat_content=dh,
        heat_power=H,
        heat_power_constant_cp=Hc,
        shortcut_difference=((Hc - H) / H).to("percent"),
    )


@dataclass(frozen=True, repr=False)
class UncertainDischarge(Presentable):
    """Nominal discharge plus Monte Carlo draws and summaries of every output."""

    nominal: OrificeDischarge
    draws: OrificeDischarge
    summaries: Mapping[str, Summary]  # LazySummaries: computed when read
    n_draws: int  # draws kept
    rejected: int  # draws dropped as physically impossible
    seed: int
    max_unphysical: float = DEFAULT_MAX_UNPHYSICAL
    inputs: dict[str, str] = field(default_factory=dict)  # drawn name -> distribution

    @property
    def unphysical(self) -> int:
        return self.rejected

    def as_dict(self) -> dict:
        out = self.nominal.as_dict()
        for attr, unit, name in OrificeDischarge.OUTPUTS:
            if attr in self.summaries:
                out.update(self.summaries[attr].as_dict(name, unit))
        out["draws"] = self.n_draws + self.rejected
        out["kept_draws"] = self.n_draws
        out["unphysical_draws"] = self.rejected
        out["max_unphysical_share"] = self.max_unphysical
        out["seed"] = self.seed
        return out


#: Inputs that may carry an uncertainty.
UNCERTAIN_INPUTS = ("temperature", "velocity", "diameter", "area", "minor_diameter", "pressure", "depth",
                    "ambient_temperature", "ambient_salinity", "profile_factor")
#: Former name of the package-wide limit on dropped draws (``uncertainty.DEFAULT_MAX_UNPHYSICAL``).
MAX_REJECTED_SHARE = DEFAULT_MAX_UNPHYSICAL


def orifice_discharge_uncertain(draws: int | SharedDraws = DEFAULT_DRAWS, seed: int = DEFAULT_SEED, *,
                                names: str | dict[str, str] | None = None,
                                max_unphysical: float = DEFAULT_MAX_UNPHYSICAL, **inputs) -> UncertainDischarge:
    """Monte Carlo propagation of input uncertainty through ``orifice_discharge``.

    Goes through the package's one driver, ``ventflux.uncertainty.propagate``:
    every ``Uncertain`` input is drawn ``draws`` times from its own named
    stream, physically impossible draws (a non-positive size or velocity, an
    exit temperature at or below ambient, a fluid outside its model's range)
    are dropped and counted, the inputs are refused if more than
    ``max_unphysical`` of the draws are, and the estimator runs once on the
    arrays.

    Parameters
    ----------
    draws : int or SharedDraws
        Number of draws, or the run's shared draws (a survey).
    seed : int
        Seed of the random generator, reported with the result.
    names : str or dict, optional
        Names the inputs are drawn under; a string is a prefix. The command
        ``ventflux orifice --name V`` and a survey's first orifice of vent
        ``V`` both use ``"V/orifice[0]"``, and so draw the same values.
    max_unphysical : float
        Largest share of draws dropped before the inputs are refused (0.05).
    **inputs
        As for ``orifice_discharge``; any of ``UNCERTAIN_INPUTS`` may be an
        ``Uncertain``.

    Returns
    -------
    UncertainDischarge
    """
    uncertain = {k: v for k, v in inputs.items() if isinstance(v, Uncertain)}
    for k in uncertain:
        if k not in UNCERTAIN_INPUTS:
            raise InputError(k, str(uncertain[k]), "an exact value (this input cannot carry an uncertainty)")
    exact = {k: nominal(v) for k, v in inputs.items()}
    nominal_result = orifice_discharge(**exact)
    prop = propagate(orifice_discharge, inputs, names=names, draws=draws, seed=seed, physical=orifice_physical,
                     max_unphysical=max_unphysical)
    result = prop.result
    summaries = LazySummaries({attr: getattr(result, attr) for attr, _, _ in OrificeDischarge.OUTPUTS
                               if np.ndim(getattr(result, attr).magnitude)}, prop.seed)
    return UncertainDischarge(nominal_result, result, summaries, prop.kept, prop.unphysical, prop.seed,
                              prop.policy.max_share, prop.inputs)


class LazySummaries(Mapping):
    """Summaries by output name, each computed (percentiles of its draws) when first read, then kept.

    A caller that reads the heat power's summary pays for one set of
    percentiles, not for all ten outputs'; one that reads them all (the
    command's table, ``as_dict``) gets the same numbers as before.
    """

    def __init__(self, draws: dict, seed: int | None):
        self._draws = draws
        self._seed = seed
        self._done: dict[str, Summary] = {}

    def __getitem__(self, name: str) -> Summary:
        s = self._done.get(name)
        if s is None:
            s = self._done[name] = summarize(self._draws[name], self._seed)
        return s

    def __iter__(self):
        return iter(self._draws)

    def __len__(self) -> int:
        return len(self._draws)

    def __repr__(self) -> str:
        return f"LazySummaries({list(self._draws)})"


def orifice_input_names(vent: str, index: int = 0) -> dict[str, str]:
    """Names the inputs of orifice ``index`` of ``vent`` are drawn under (the survey's key paths).

    Site-wide inputs (ambient temperature and salinity, pressure, depth) use
    the run's shared names (``uncertainty.SITE_INPUT_NAMES``).
    """
    names = {k: f"{vent}/orifice[{index}]/{k}" for k in UNCERTAIN_INPUTS}
    names.update(SITE_INPUT_NAMES)
    return names


def orifice_physical(args) -> np.ndarray:
    """Which draws ``orifice_discharge`` can evaluate: positive sizes and velocity, hot, one phase, in range.

    ``args`` are the estimator's keyword arguments (draw arrays or scalars);
    the mask broadcasts over the draws.
    """
    keep = np.ones((), bool)
    for k in ("velocity", "diameter", "area", "minor_diameter", "pressure", "depth"):
        v = args.get(k)
        if v is not None:
            keep = keep & (np.asarray(v.magnitude if hasattr(v, "magnitude") else v) > 0)
    pf = args.get("profile_factor")
    if pf is not None:
        pf = np.asarray(pf.to("dimensionless").magnitude if hasattr(pf, "to") else pf)
        keep = keep & (pf > 0) & (pf <= 1)
    S = args.get("ambient_salinity")
    if S is not None:
        keep = keep & (np.asarray(S.to("dimensionless").magnitude if hasattr(S, "to") else S) >= 0)
    T = np.asarray(magnitude(args["temperature"], "K"))
    Ta = np.asarray(magnitude(args["ambient_temperature"], "K"))
    keep = keep & (T > Ta)
    if args.get("pressure") is not None:
        p = np.abs(np.asarray(magnitude(args["pressure"], "Pa")))
    elif args.get("depth") is not None:
        p = pressure_from_depth(np.abs(args["depth"]), args.get("latitude")).m
    else:
        return keep
    model = _model(args.get("fluid"))
    return keep & model.valid(T, np.asarray(p))


def physical_draws(sampled, exact, n):
    """Mask of ``n`` draws that are physically possible (``orifice_physical`` on the draws and exact values)."""
    return np.broadcast_to(orifice_physical({**exact, **sampled}), (n,)).copy()


def _model(fluid):
    """The vent-fluid model object: the one given, or the property layer's default (IAPWS-95)."""
    from .properties import fluid_model

    if fluid is None or isinstance(fluid, str):
        return fluid_model(fluid or DEFAULT_FLUID)
    return fluid


def structure_discharge(discharges) -> OrificeDischarge:
    """Total of several orifices on one structure (``OrificeDischarge`` objects or one array result)."""
    if isinstance(discharges, OrificeDischarge):
        return discharges.total()
    items = list(discharges)
    if not items:
        raise InputError("orifices", "none", "at least one orifice")
    stacked = {f.name: _stack([getattr(d, f.name) for d in items]) for f in fields(OrificeDischarge)}
    return OrificeDischarge(**stacked).total()


def _stack(qs):
    unit = qs[0].units
    return Q_(np.stack([np.broadcast_to(q.to(unit).magnitude, np.shape(qs[0].magnitude)) for q in qs]), unit)
