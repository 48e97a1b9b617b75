"""Diffuse-flow heat balance: warm fluid seeping through patches of seafloor.

A patch of area ``A`` of which a fraction ``f`` actively vents discharges
fluid at a mean upward (Darcy) velocity ``w`` and a mean temperature anomaly
``ΔT`` over the ambient seawater. Its heat power is

    H = ρ · w · f·A · (h(T_amb + ΔT, S, p) − h(T_amb, S, p)),

an enthalpy difference at in-situ pressure with the same salinity at both
ends (diffuse fluid is mostly entrained seawater), ρ being the density of the
discharging fluid at ``T_amb + ΔT``. Both ends come from one seawater
enthalpy function that reaches from the freezing point to boiling
(``ventflux.properties.seawater_heat``): TEOS-10 [1] up to 40 °C, then
IAPWS-95 water with IAPWS-08's saline part up to 80 °C, then IAPWS-95 water
with the saline part held, joined so that heat content and density are
continuous; the model of each element is named in the result
(``heat_model``). Its volume flux is ``w · f·A``. The constant-c_p shortcut
``ṁ · c_p0 · ΔT`` (one definition for the package,
``ventflux.properties.heat.shortcut_heat_content``) is returned beside it
for comparison, never instead of it.

Every estimator here is a deterministic function over arrays: inputs of
shape ``(n_patches,)`` or ``(n_patches, n_draws)``. Monte Carlo uncertainty
goes through the package's one driver (``ventflux.uncertainty.propagate``):
every input is drawn once as arrays under its name, impossible draws are
dropped and counted (never clipped), the estimator is called once
(``diffuse_propagation``, ``scale_up_uncertain``).

Scale-up: the sampled patches of each mapped area class (e.g. "mat",
"cracked basalt", "sediment") give the class's heat flux per unit area as the
ratio ΣH/ΣA over its sampled patches; times the mapped area of the class
gives the class's heat power. The spread of the sampled patches is carried by
bootstrap resampling of the patches [2] within each draw, so a class sampled
by a few very different patches gets a wide interval.

References
----------
.. [1] IOC, SCOR and IAPSO (2010). The international thermodynamic equation
   of seawater – 2010. IOC Manuals and Guides No. 56 (specific enthalpy,
   ``gsw.enthalpy_t_exact``; isobaric heat capacity, ``gsw.cp_t_exact``).
.. [2] Efron, B. and Tibshirani, R. J. (1993). An Introduction to the
   Bootstrap. Monographs on Statistics and Applied Probability 57, ch. 6 (bootstrap standard errors) and ch. 10
   (ratio estimators).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, fields
from typing import Any

import numpy as np
import pint

from .errors import Collector, InputError
from .properties.heat import SHORTCUT_HEAT_CAPACITY
from .properties.seawater import _salinity_number, absolute_salinity, sea_pressure_dbar
from .properties.seawater_heat import MODEL_NAMES, TEOS10, seawater_heat_content
from .tables import read_quantity_table
from .uncertainty import (
    DEFAULT_DRAWS,
    DEFAULT_MAX_UNPHYSICAL,
    DEFAULT_SEED,
    SITE_INPUT_NAMES,
    SharedDraws,
    Uncertain,
    UnphysicalPolicy,
    driver_settings,
    from_mean_sd,
    propagate,
)
from .units import Q_, check_units, magnitude, require_dimension, ureg

__all__ = [
    "DiffuseDischarge",
    "DiffusePropagation",
    "PatchTable",
    "ScaleUp",
    "ScaleUpPropagation",
    "check_patch_inputs",
    "class_area_draws",
    "diffuse_discharge",
    "diffuse_discharge_uncertain",
    "diffuse_physical",
    "diffuse_propagation",
    "polygon_area",
    "read_area_classes",
    "read_patch_table",
    "scale_up_by_area_class",
    "scale_up_uncertain",
    "temperature_difference",
]


# --------------------------------------------------------------------------- geometry
def polygon_area(x, y):
    """Area of a simple polygon from its vertices (local x/y), by the shoelace formula.

    Parameters
    ----------
    x, y : pint.Quantity
        Vertex coordinates (lengths), in order around the polygon; the last
        vertex joins the first. At least three vertices.

    Returns
    -------
    pint.Quantity
        Area [m²] (always ≥ 0; the winding direction does not matter).

    Raises
    ------
    InputError
        Fewer than three vertices, or a polygon of zero area.
    """
    xm = np.asarray(magnitude(x, "m", "length", "polygon x"), float).ravel()
    ym = np.asarray(magnitude(y, "m", "length", "polygon y"), float).ravel()
    if xm.size != ym.size or xm.size < 3:
        raise InputError("polygon", f"{xm.size} x and {ym.size} y vertices", "at least three (x, y) vertices")
    area = 0.5 * abs(np.dot(xm, np.roll(ym, -1)) - np.dot(ym, np.roll(xm, -1)))
    if not area > 0:
        raise InputError("polygon", f"{xm.size} vertices enclosing 0 m^2", "vertices enclosing a non-zero area")
    return Q_(area, "m^2")


# --------------------------------------------------------------------------- units
_DELTA = {"degree_Celsius": "delta_degree_Celsius", "degree_Fahrenheit": "delta_degree_Fahrenheit"}


def _delta_unit(unit):
    """The difference unit for an offset temperature unit (degC → delta_degC), else the unit."""
    u = ureg.Unit(unit)
    for offset, delta in _DELTA.items():
        if u == ureg.Unit(offset):
            return delta
    return unit


def temperature_difference(q, field="temperature anomaly"):
    """A temperature anomaly in kelvin, reading ``degC``/``degF`` as differences, not offsets.

    ``Q_(2.5, "degC")`` given as an anomaly means 2.5 K above ambient, not
    275.65 K.
    """
    require_dimension(q, "temperature", field)
    unit = _delta_unit(q.units)
    if unit is not q.units:
        q = Q_(q.magnitude, unit)
    return q.to("K")


def _delta_uncertain(u: Uncertain) -> Uncertain:
    unit = _delta_unit(u.unit)
    return Uncertain(u.kind, u.a, u.b, unit if isinstance(unit, str) else u.unit)


# --------------------------------------------------------------------------- estimator
class _Totals:
    """Sums over patches or classes (axis 0), keeping any draw axis."""

    heat_power: pint.Quantity  # fields of the result classes that sum with this
    volume_flux: pint.Quantity

    @property
    def total_heat_power(self):
        return self.heat_power.sum(axis=0)

    @property
    def total_volume_flux(self):
        return self.volume_flux.sum(axis=0)


from .presentation import Presentable  # noqa: E402 - the one presentation of results (repr, pandas, xarray)


@dataclass(frozen=True, repr=False)
class DiffuseDischarge(_Totals, Presentable):
    """Heat and water discharge of each patch (arrays, patches along axis 0)."""

    heat_power: pint.Quantity
    heat_power_cp_shortcut: pint.Quantity
    volume_flux: pint.Quantity
    mass_flux: pint.Quantity
    area: pint.Quantity
    effective_area: pint.Quantity
    specific_heat_content: pint.Quantity
    density: pint.Quantity
    beyond_teos10: np.ndarray  # True where the warm fluid is above TEOS-10's range (see heat_model)
    heat_model: np.ndarray  # name of the seawater model of each element's warm end (MODEL_NAMES)

    @property
    def total_heat_power_cp_shortcut(self):
        return self.heat_power_cp_shortcut.sum(axis=0)


def _patch_arrays(values: dict):
    """Magnitudes as float arrays; 1-D patch arrays get a draw axis when any input has one."""
    two_d = any(np.ndim(v) == 2 for v in values.values())
    out = {}
    for k, v in values.items():
        a = np.asarray(v, float)
        if a.ndim > 2:
            raise InputError(k, f"an array of shape {a.shape}", "a scalar, (n_patches,) or (n_patches, n_draws)")
        out[k] = a[:, None] if (two_d and a.ndim == 1) else a
    try:
        np.broadcast_shapes(*(a.shape for a in out.values()))
    except ValueError:
        shapes = ", ".join(f"{k} {a.shape}" for k, a in out.items())
        raise InputError("input shapes", shapes,
                         "arrays that broadcast: (n_patches,) or (n_patches, n_draws)") from None
    return out


def _first_bad(mask, values, field, unit, allowed, names=None):
    mask = np.asarray(mask)
    if not mask.any():
        return
    idx = np.unravel_index(np.flatnonzero(mask.ravel())[0], mask.shape)
    v = np.broadcast_to(values, mask.shape)[idx]
    where = None
    if names is not None and mask.ndim >= 1 and len(names) == mask.shape[0]:
        where = f"patch {names[idx[0]]}"
    raise InputError(field, f"{v:g} {unit}".strip(), allowed, where=where)


def check_patch_inputs(area, active_fraction, temperature_anomaly, velocity, names=None):
    """Raise ``InputError`` (all problems at once) for physically impossible patch inputs.

    Negative area, an active fraction outside 0–1, an anomaly ≤ 0 K and an
    upward velocity ≤ 0 (the estimator assumes upflow) are refused.
    """
    c = Collector()
    with c.check():
        _first_bad(area < 0, area, "area", "m^2", "an area ≥ 0 m^2", names)
    with c.check():
        _first_bad((active_fraction < 0) | (active_fraction > 1), active_fraction, "active fraction", "",
                   "a fraction from 0 to 1", names)
    with c.check():
        _first_bad(temperature_anomaly <= 0, temperature_anomaly, "temperature anomaly", "K",
                   "an anomaly > 0 K above ambient", names)
    with c.check():
        _first_bad(velocity <= 0, velocity, "velocity", "m/s",
                   "an upward velocity > 0 m/s (diffuse flow is assumed to rise; downflow discharges nothing)", names)
    c.raise_if_any()


@check_units(area="area", active_fraction="dimensionless", temperature_anomaly="temperature", velocity="velocity",
             ambient_temperature="temperature", ambient_salinity="dimensionless", pressure="pressure")
def diffuse_discharge(area, active_fraction, temperature_anomaly, velocity, ambient_temperature,
                      ambient_salinity, pressure, *, check=True, names=None) -> DiffuseDischarge:
    """Heat power and volume flux of diffuse-flow patches.

    Parameters
    ----------
    area : pint.Quantity
        Patch area, shape ``(n_patches,)`` or ``(n_patches, n_draws)``.
    active_fraction : float, array or dimensionless quantity
        Fraction of the area actively venting, 0–1.
    temperature_anomaly : pint.Quantity
        Mean temperature of the discharging fluid above ambient (``degC`` read
        as a difference).
    velocity : pint.Quantity
        Mean upward (Darcy) velocity through the active area, > 0.
    ambient_temperature : pint.Quantity
        In-situ temperature of the ambient seawater (scalar or broadcastable).
    ambient_salinity : float or pint.Quantity
        Practical salinity of the ambient seawater, also used for the
        discharging fluid.
    pressure : pint.Quantity
        Absolute in-situ pressure.
    check : bool
        Refuse impossible inputs (see ``check_patch_inputs``). Monte Carlo
        callers that have dropped impossible draws (``diffuse_physical``) may pass False.
    names : sequence of str, optional
        Patch names for error messages.

    Returns
    -------
    DiffuseDischarge
        ``heat_power`` [W], ``heat_power_cp_shortcut`` [W] (ρ·w·A_eff·c_p0·ΔT),
        ``volume_flux`` [m³/s], ``mass_flux`` [kg/s], ``area`` and ``effective_area`` [m²],
        ``specific_heat_content`` [J/kg], ``density`` [kg/m³], each shaped
        like the broadcast inputs.

    Raises
    ------
    InputError
        Impossible patch inputs, ambient seawater outside TEOS-10's range
        (below its freezing point, above 40 °C, salinity or pressure out of
        range), or warm fluid at or above the boiling point.

    Notes
    -----
    Above 40 °C the warm end comes from IAPWS-95 water with IAPWS-08's
    saline part (to 80 °C) or a held saline correction (beyond), joined
    continuously to TEOS-10 (``ventflux.properties.seawater_heat``, with
    the expected error of each); ``heat_model`` names the model of each
    element and ``beyond_teos10`` marks those above TEOS-10. The shortcut
    uses TEOS-10's constant c_p0.

    References
    ----------
    .. [1] IOC, SCOR and IAPSO (2010). TEOS-10, IOC Manuals and Guides No. 56.
    """
    frac = active_fraction.to("dimensionless").magnitude if isinstance(active_fraction, pint.Quantity) \
        else active_fraction
    v = _patch_arrays({
        "area": magnitude(area, "m^2", "area", "area"),
        "active fraction": frac,
        "temperature anomaly": temperature_difference(temperature_anomaly).magnitude,
        "velocity": magnitude(velocity, "m/s", "velocity", "velocity"),
        "ambient temperature": magnitude(ambient_temperature, "degC", "temperature", "ambient temperature"),
        "ambient salinity": _salinity_number(ambient_salinity),
        "pressure": sea_pressure_dbar(pressure),
    })
    A, f, dT, w = v["area"], v["active fraction"], v["temperature anomaly"], v["velocity"]
    t0, sp, p = v["ambient temperature"], v["ambient salinity"], v["pressure"]
    if check:
        check_patch_inputs(A, f, dT, w, names)
    if np.any(sp < 0) or np.any(sp > 42):
        raise InputError("ambient salinity", f"{np.ravel(sp)[0]:g}", "a practical salinity from 0 to 42")
    SA = absolute_salinity(sp, p)
    t1 = t0 + dT
    shape = np.broadcast_shapes(np.shape(SA), np.shape(t1), np.shape(p))
    heat = seawater_heat_content(t1, t0, SA, p, field="ambient temperature + temperature anomaly")
    dh = np.broadcast_to(heat.specific_heat_content, shape)
    rho = np.broadcast_to(heat.density, shape)
    model = np.broadcast_to(heat.model, shape)
    a_eff = A * f
    q = w * a_eff
    m = rho * q
    return DiffuseDischarge(
        heat_power=Q_(m * dh, "W"),
        heat_power_cp_shortcut=Q_(m * SHORTCUT_HEAT_CAPACITY.to("J/(kg*K)").magnitude * dT, "W"),
        volume_flux=Q_(q, "m^3/s"),
        mass_flux=Q_(m, "kg/s"),
        area=Q_(np.broadcast_to(A, np.shape(a_eff)), "m^2"),
        effective_area=Q_(a_eff, "m^2"),
        specific_heat_content=Q_(dh, "J/kg"),
        density=Q_(rho, "kg/m^3"),
        beyond_teos10=model != TEOS10,
        heat_model=np.asarray(MODEL_NAMES, dtype=object)[model],
    )


# --------------------------------------------------------------------------- Monte Carlo
def diffuse_physical(args) -> np.ndarray:
    """Which draw columns the diffuse estimator can evaluate, for every patch at once.

    A draw (column) is impossible when any patch has an area < 0, an active
    fraction outside 0–1, an anomaly ≤ 0 K or a velocity ≤ 0 in it (the
    limits of ``check_patch_inputs``); the column is then dropped for the
    whole field so the remaining columns stay consistent realizations.
    """
    def m(k):
        v = args[k]
        return np.asarray(v.magnitude if isinstance(v, pint.Quantity) else v, float)

    f = m("active_fraction")
    ok = (m("area") >= 0) & (f >= 0) & (f <= 1) & (m("temperature_anomaly") > 0) & (m("velocity") > 0)
    ok = np.asarray(ok, bool)
    return ok if ok.ndim < 2 else np.asarray(ok.all(axis=tuple(range(ok.ndim - 1))), bool)


#: Inputs of a patch (per patch) and of the site (shared by every patch).
PATCH_INPUTS = ("area", "active_fraction", "temperature_anomaly", "velocity")
#: The physical range of each per-patch input: a table's ``<column>_sd`` is
#: drawn with that mean and standard deviation within it (lognormal for a
#: positive quantity, beta for the active fraction; ``uncertainty.from_mean_sd``),
#: since a normal tail would cross the bound (a sediment patch's anomaly of
#: 0.52 ± 0.38 K is ≤ 0 in 8 % of normal draws).
PATCH_BOUNDS = {"area": "positive", "active_fraction": "fraction", "temperature_anomaly": "positive",
                "velocity": "positive"}


def diffuse_input_names(prefix: str = "diffuse") -> dict[str, str]:
    """Names the inputs shared by all patches are drawn under (per-patch ones: ``prefix/<patch>/<input>``)."""
    return {**{k: f"{prefix}/{k}" for k in PATCH_INPUTS}, **SITE_INPUT_NAMES}


@dataclass(frozen=True, repr=False)
class DiffusePropagation(Presentable):
    """Nominal and drawn discharge of patches, with the driver's bookkeeping.

    ``draws`` has shape ``(n_patches, n_draws)``; dropped (impossible) draw
    columns hold NaN. ``area`` draws are kept for the scale-up.
    """

    nominal: DiffuseDischarge
    draws: DiffuseDischarge
    keep: np.ndarray
    unphysical: int
    n_draws: int
    seed: int
    max_unphysical: float
    inputs: dict[str, str]


def diffuse_propagation(area, active_fraction, temperature_anomaly, velocity, ambient_temperature,
                        ambient_salinity, pressure, *, draws: int | SharedDraws = DEFAULT_DRAWS,
                        seed: int | None = DEFAULT_SEED, names=None, prefix: str = "diffuse",
                        input_names: dict[str, str] | None = None,
                        max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL,
                        drawn: dict | None = None) -> DiffusePropagation:
    """Monte Carlo discharge of patches through the package's one propagation driver.

    Each input may be a quantity (exact; per patch or shared), an
    ``Uncertain`` (shared by all patches: drawn under ``prefix/<input>``, or
    the site's name for the ambient temperature and salinity), or a tuple
    ``(mean, sd)`` of per-patch quantity arrays (independent between
    patches, drawn under ``prefix/<patch>/<input>`` with that mean and
    standard deviation inside the input's physical range, ``PATCH_BOUNDS``). These are the names a
    survey's ``[diffuse]`` section uses, so ``ventflux diffuse`` and a survey
    draw the same values. Impossible draws (see ``diffuse_physical``) are
    dropped and counted, never clipped; above ``max_unphysical`` of the
    draws the inputs are refused.

    Parameters
    ----------
    names : sequence of str, optional
        Patch names (default ``patch``, ``patch 2``, ...).
    input_names : dict, optional
        Override of the names of shared inputs (e.g. a survey's
        ``"shared/<name>"`` for a value taken from ``[shared]``).
    drawn : dict, optional
        Inputs given as draws already (shape ``(n_draws,)``), e.g. the
        survey's site ambient temperature.
    """
    raw = {"area": area, "active_fraction": active_fraction, "temperature_anomaly": temperature_anomaly,
           "velocity": velocity, "ambient_temperature": ambient_temperature,
           "ambient_salinity": ambient_salinity, "pressure": pressure}

    def nom(k):
        v = raw[k]
        if isinstance(v, tuple):
            v = v[0]
        if isinstance(v, Uncertain):
            v = _delta_uncertain(v).nominal if k == "temperature_anomaly" else v.nominal
        return v

    nominal_inputs = {k: nom(k) for k in raw}
    if all(np.size(getattr(nominal_inputs[k], "magnitude", nominal_inputs[k])) == 1 for k in PATCH_INPUTS):
        # one patch given by scalars (or shared distributions): a patch axis of length one
        nominal_inputs.update({k: _one_patch(nominal_inputs[k]) for k in PATCH_INPUTS})
    nominal = diffuse_discharge(**nominal_inputs, names=names)
    n_patches = np.shape(nominal.heat_power.magnitude)[0] if nominal.heat_power.ndim else 1
    patch_names = list(names) if names is not None else ["patch"] + [f"patch {i}" for i in range(2, n_patches + 1)]
    shared, policy = driver_settings(draws, seed, max_unphysical)
    stream = {**diffuse_input_names(prefix), **(input_names or {})}
    n = shared.n_draws
    args: dict = {}
    described: dict[str, str] = {}
    for k, v in raw.items():
        if k == "temperature_anomaly":
            if isinstance(v, Uncertain):
                v = _delta_uncertain(v)
            elif isinstance(v, tuple):
                v = (temperature_difference(v[0]), temperature_difference(v[1], "temperature anomaly sd"))
            else:
                v = temperature_difference(v)
        if k == "active_fraction" and not isinstance(v, (Uncertain, tuple, pint.Quantity)):
            v = Q_(np.asarray(v, float), "dimensionless")
        if isinstance(v, tuple):  # per patch, one stream per patch, within the physical range
            mean, sd = v
            unit = str(mean.units)
            values = [from_mean_sd(a, b, unit, PATCH_BOUNDS[k], f"{prefix}/{p}/{k}_sd") for a, b, p in
                      zip(np.atleast_1d(mean.magnitude), np.atleast_1d(sd.to(mean.units).magnitude), patch_names)]
            keys = [f"{prefix}/{p}/{k}" for p in patch_names]
            args[k] = shared.draw_each(keys, values, unit)
            described.update({key: str(val) for key, val in zip(keys, values)})
        elif isinstance(v, Uncertain):
            args[k] = shared.draw(stream[k], v).reshape(1, n)
            described[stream[k]] = str(v)
        elif isinstance(v, pint.Quantity) and v.ndim == 1 and v.shape[0] == n_patches:
            args[k] = v.reshape(n_patches, 1)
        else:
            args[k] = v
    for k, v in (drawn or {}).items():
        args[k] = v.reshape(1, n) if isinstance(v, pint.Quantity) else np.reshape(v, (1, n))
    per_draw = {k: v for k, v in args.items() if np.shape(getattr(v, "magnitude", v))[-1:] == (n,)}
    fixed = {k: v for k, v in args.items() if k not in per_draw}

    def estimator(**a):
        a["active_fraction"] = a["active_fraction"].to("dimensionless").magnitude
        return diffuse_discharge(**a, check=False, names=patch_names)

    labels = {k: str(raw[k]) if isinstance(raw[k], (Uncertain, pint.Quantity)) or k in fixed
              else "a distribution per patch" for k in args}
    prop = propagate(estimator, fixed, names={k: stream.get(k, f"{prefix}/{k}") for k in args}, draws=shared,
                     physical=diffuse_physical, max_unphysical=policy, drawn=per_draw, labels=labels)
    out = prop.result
    shape = (max(n_patches, 1), prop.kept)
    full: dict[str, Any] = {}
    for f in fields(out):
        x = getattr(out, f.name)
        if isinstance(x, pint.Quantity):
            full[f.name] = prop.expand(Q_(np.broadcast_to(x.magnitude, shape), x.units))
        else:
            b = np.zeros(shape[:1] + (n,), bool)
            b[:, prop.keep] = np.broadcast_to(x, shape)
            full[f.name] = b
    return DiffusePropagation(nominal=nominal, draws=DiffuseDischarge(**full), keep=prop.keep,
                              unphysical=prop.unphysical, n_draws=n, seed=shared.seed,
                              max_unphysical=policy.max_share, inputs=described)


def _one_patch(x):
    if isinstance(x, pint.Quantity):
        return Q_(np.reshape(x.magnitude, (1,)), x.units)
    return np.reshape(x, (1,))


def diffuse_discharge_uncertain(area, active_fraction, temperature_anomaly, velocity, ambient_temperature,
                                ambient_salinity, pressure, *, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, names=None,
                                max_unphysical=DEFAULT_MAX_UNPHYSICAL):
    """``(nominal, draws)`` of ``diffuse_propagation`` (kept for existing callers).

    Draw columns dropped as impossible hold NaN; see ``diffuse_propagation``.
    """
    p = diffuse_propagation(area, active_fraction, temperature_anomaly, velocity, ambient_temperature,
                            ambient_salinity, pressure, draws=draws, seed=seed, names=names,
                            max_unphysical=max_unphysical)
    return p.nominal, p.draws


def class_area_draws(shared: SharedDraws, class_names, area, area_sd=None, prefix: str = "diffuse"):
    """Draws ``(n_classes, n_draws)`` of mapped class areas: lognormal with the given mean and sd, else exact.

    Each class's area has its own stream, ``prefix/<class>/mapped_area``.
    """
    if area_sd is None:
        return Q_(np.repeat(np.asarray(area.magnitude, float)[:, None], shared.n_draws, axis=1), area.units)
    unit = str(area.units)
    values = [from_mean_sd(m, s, unit, "positive", f"{prefix}/{c}/mapped_area_sd")
              for m, s, c in zip(area.magnitude, area_sd.to(area.units).magnitude, class_names)]
    return shared.draw_each([f"{prefix}/{c}/mapped_area" for c in class_names], values, unit)


@dataclass(frozen=True)
class ScaleUpPropagation:
    """Scale-up of drawn patches with the draws' bookkeeping (dropped columns hold NaN)."""

    scale_up: ScaleUp
    keep: np.ndarray
    unphysical: int  # columns dropped for the scale-up (patch draws and class areas together)


def scale_up_uncertain(patches: DiffusePropagation, patch_classes, class_names, class_area, class_area_sd=None, *,
                       draws: SharedDraws, prefix: str = "diffuse",
                       max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL) -> ScaleUpPropagation:
    """Scale drawn patches up to mapped area classes: one route for ``ventflux diffuse`` and the survey.

    Class areas are drawn through ``class_area_draws``; a draw with a
    negative mapped area is impossible and dropped with the patches'
    impossible draws, counted under the same limit (never clipped). The
    bootstrap over patches has its own named stream
    (``prefix/scale-up bootstrap``) so both routes resample alike.
    """
    policy = max_unphysical if isinstance(max_unphysical, UnphysicalPolicy) else UnphysicalPolicy(max_unphysical)
    ca = class_area_draws(draws, class_names, class_area, class_area_sd, prefix)
    keep = patches.keep & np.all(ca.magnitude >= 0, axis=0)
    if not keep.all():
        worst = int(np.argmax(np.count_nonzero(ca.magnitude < 0, axis=1)))
        field = (f"{prefix}/{class_names[worst]}/mapped_area" if np.any(ca.magnitude < 0)
                 else f"{prefix} patches")
        policy.enforce(keep, field, f"{int((~keep).sum())} of {keep.size} draws impossible")
    ca = Q_(np.where(keep[None, :], ca.magnitude, 0.0), ca.units)
    d = patches.draws
    su = scale_up_by_area_class(patch_classes, d.area, d.heat_power, d.volume_flux, class_names, ca,
                                seed=draws.rng(f"{prefix}/scale-up bootstrap"))
    nan = np.where(keep, 1.0, np.nan)[None, :]
    su = ScaleUp(classes=su.classes, n_sampled=su.n_sampled,
                 heat_flux_density=su.heat_flux_density * nan, volume_flux_density=su.volume_flux_density * nan,
                 heat_power=su.heat_power * nan, volume_flux=su.volume_flux * nan)
    return ScaleUpPropagation(scale_up=su, keep=keep, unphysical=int((~keep).sum()))


def _broadcast(x, shape):
    if isinstance(x, pint.Quantity):
        return Q_(np.broadcast_to(x.magnitude, shape).copy(), x.units)
    return np.broadcast_to(x, shape).copy()


# --------------------------------------------------------------------------- scale-up
@dataclass(frozen=True)
class ScaleUp(_Totals):
    """Scaled-up discharge by mapped area class (classes along axis 0; draws along axis 1)."""

    classes: tuple
    n_sampled: np.ndarray
    heat_flux_density: pint.Quantity  # W/m² of mapped area
    volume_flux_density: pint.Quantity  # m/s (m³/s per m²)
    heat_power: pint.Quantity
    volume_flux: pint.Quantity


def scale_up_by_area_class(patch_class, patch_area, patch_heat_power, patch_volume_flux, class_names,
                           class_area, *, seed=DEFAULT_SEED):
    """Scale sampled patches up to mapped area classes, carrying the patches' spread.

    For each class ``c``, the heat flux per unit area is the ratio
    ``ΣH_i / ΣA_i`` over the patches ``i`` sampled in that class (``A_i`` is the
    patch's whole area, active or not, since the mapped areas are whole areas
    too), and the class's heat power is that ratio times the mapped area.
    With draws (``patch_heat_power`` of shape ``(n_patches, n_draws)``) the
    sampled patches of each class are resampled with replacement in every
    draw (a bootstrap [2]), so the spread between patches enters the
    uncertainty alongside the measurement uncertainty of each patch.

    Parameters
    ----------
    patch_class : sequence of str
        Class of each sampled patch, length ``n_patches``.
    patch_area : pint.Quantity
        Whole area of each sampled patch, shape ``(n_patches,)`` or, with
        drawn areas, ``(n_patches, n_draws)`` like ``patch_heat_power``.
    patch_heat_power, patch_volume_flux : pint.Quantity
        Per-patch results, shape ``(n_patches,)`` (no bootstrap) or
        ``(n_patches, n_draws)``.
    class_names : sequence of str
        Mapped classes; each must have at least one sampled patch.
    class_area : pint.Quantity
        Mapped area of each class, shape ``(n_classes,)`` or
        ``(n_classes, n_draws)``.
    seed : int or numpy.random.Generator
        Seed of the bootstrap's generator.

    Returns
    -------
    ScaleUp

    References
    ----------
    .. [2] Efron, B. and Tibshirani, R. J. (1993). An Introduction to the
       Bootstrap. Monographs on Statistics and Applied Probability 57.
    """
    patch_class = [str(c) for c in patch_class]
    class_names = [str(c) for c in class_names]
    A = np.asarray(magnitude(patch_area, "m^2", "area", "patch area"), float)
    H = np.asarray(magnitude(patch_heat_power, "W", "power", "patch heat power"), float)
    V = np.asarray(patch_volume_flux.to("m^3/s").magnitude, float)
    Ac = np.asarray(magnitude(class_area, "m^2", "area", "class area"), float)
    if len(patch_class) != A.shape[0] or H.shape[0] != A.shape[0] or V.shape != H.shape:
        raise InputError("patches", f"{len(patch_class)} classes, {A.shape[0]} areas, {H.shape[0]} heat powers",
                         "one class, area, heat power and volume flux per sampled patch")
    if Ac.shape[0] != len(class_names):
        raise InputError("class area", f"{Ac.shape[0]} areas for {len(class_names)} classes", "one area per class")
    c = Collector()
    seen = set()
    for name in class_names:  # a class listed twice would be added twice
        if name in seen:
            c.add(InputError("area class", name, "each mapped class listed once"))
        seen.add(name)
    for name in sorted(set(patch_class) - set(class_names)):  # its patches would silently drop out of the total
        c.add(InputError("patch class", name or "(empty)", "the class of a sampled patch among the mapped classes: "
                         + ", ".join(class_names)))
    for name in class_names:
        if name not in patch_class:
            c.add(InputError("area class", name, "a mapped class with at least one sampled patch; sampled classes: "
                             + ", ".join(sorted(set(patch_class)))))
    for k, a in enumerate(Ac.reshape(Ac.shape[0], -1)):
        if np.any(a < 0):
            c.add(InputError("class area", f"{a.min():g} m^2", "a mapped area ≥ 0 m^2",
                             where=f"class {class_names[k]}"))
    c.raise_if_any()
    pc = np.asarray(patch_class)
    n_draws = H.shape[1] if H.ndim == 2 else None
    rng = np.random.default_rng(seed)
    qh: list = []
    qv: list = []
    n_sampled: list[int] = []
    for name in class_names:  # loop over a handful of classes; draws stay vectorized
        idx = np.flatnonzero(pc == name)
        n_sampled.append(idx.size)
        if n_draws is None:
            qh.append(H[idx].sum() / A[idx].sum())
            qv.append(V[idx].sum() / A[idx].sum())
            continue
        pick = idx[rng.integers(0, idx.size, size=(idx.size, n_draws))]  # bootstrap resample per draw
        cols = np.arange(n_draws)[None, :]
        area_sum = (A[pick, cols] if A.ndim == 2 else A[pick]).sum(axis=0)
        qh.append(H[pick, cols].sum(axis=0) / area_sum)
        qv.append(V[pick, cols].sum(axis=0) / area_sum)
    qh_all, qv_all = np.array(qh), np.array(qv)  # (classes[, draws])
    Ac_b = Ac if (Ac.ndim == qh_all.ndim) else (Ac[:, None] if qh_all.ndim == 2 else Ac)
    return ScaleUp(
        classes=tuple(class_names),
        n_sampled=np.array(n_sampled),
        heat_flux_density=Q_(qh_all, "W/m^2"),
        volume_flux_density=Q_(qv_all, "m/s"),
        heat_power=Q_(qh_all * Ac_b, "W"),
        volume_flux=Q_(qv_all * Ac_b, "m^3/s"),
    )


# --------------------------------------------------------------------------- velocity sources
def __getattr__(name):
    # ``velocity_from_source`` looks a plugin up, so it lives in ``ventflux.registry``
    # (this module sits below the plugin registry); the old import path still works.
    if name == "velocity_from_source":
        import importlib

        return importlib.import_module("ventflux.registry").velocity_from_source
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


# --------------------------------------------------------------------------- tables
@dataclass(frozen=True)
class PatchTable:
    """Patches read from a CSV: names, classes and quantity columns (sd columns may be None)."""

    names: tuple
    classes: tuple
    area: pint.Quantity
    active_fraction: np.ndarray
    temperature_anomaly: pint.Quantity
    velocity: pint.Quantity | None
    area_sd: pint.Quantity | None
    active_fraction_sd: np.ndarray | None
    temperature_anomaly_sd: pint.Quantity | None
    velocity_sd: pint.Quantity | None
    lines: np.ndarray


def _text_columns(path, names, lines):
    """Text columns (patch names, classes) of the rows at file ``lines``; None where absent."""
    want = {int(n) for n in lines}
    header: list[str] | None = None
    rows: dict[int, list[str]] = {}
    with open(path, newline="", encoding="utf-8-sig") as fh:
        for n, line in enumerate(fh, 1):
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            cells = next(csv.reader([line]))
            if header is None:
                header = [c.split("[")[0].strip() for c in cells]
                continue
            if n in want:
                rows[n] = cells
    out: dict[str, tuple[str, ...] | None] = {}
    for name in names:
        if header is None or name not in header:  # no header: a file the table reader refused already
            out[name] = None
            continue
        i = header.index(name)
        out[name] = tuple((rows[int(n)][i].strip() if i < len(rows[int(n)]) else "") for n in lines)
    return out


def read_patch_table(path, polygons=None) -> PatchTable:
    """Read a patch table: one row a patch, units in the headers.

    Columns: ``patch`` and ``class`` (text, optional), ``area [m^2]`` (or, with
    ``polygons``, from the polygon of each patch), ``active_fraction``
    (dimensionless, 0–1), ``temperature_anomaly [K]`` (``degC`` read as a
    difference), optional ``velocity [cm/s]`` and, for any of these, an
    optional ``<name>_sd`` column of standard deviations (drawn with that
    mean and standard deviation inside the physical range: lognormal for a
    positive quantity, beta for the active fraction; ``PATCH_BOUNDS``).

    Parameters
    ----------
    path : path-like
    polygons : path-like, optional
        A CSV of vertices, ``patch, x [m], y [m]``, in order around each patch
        (local coordinates); areas come from the shoelace formula.

    Raises
    ------
    InputError or InputErrors
        Every problem in the file, naming the line.
    """
    optional = {"area": "area", "area_sd": "area", "active_fraction_sd": "dimensionless",
                "temperature_anomaly_sd": "temperature", "velocity": "velocity", "velocity_sd": "velocity"}
    tbl = read_quantity_table(path, {"active_fraction": "dimensionless", "temperature_anomaly": "temperature"},
                              optional=optional, alternatives=[] if polygons else [("area",)])
    text = _text_columns(path, ("patch", "class"), tbl.lines)
    names = text["patch"] or tuple(f"line {n}" for n in tbl.lines)
    classes = text["class"] or tuple("" for _ in tbl.lines)
    c = Collector()
    _check_duplicate_rows(path, tbl, text["patch"], classes, c)
    if polygons is not None:
        if "area" in tbl:
            raise InputError("area", str(path), "either an area column or a polygon file, not both")
        if text["patch"] is None:
            raise InputError("column", "patch", "a 'patch' column naming each patch to match its polygon",
                             where=f"{path}")
        area = _areas_from_polygons(polygons, names, tbl.lines, path)
    else:
        area = tbl["area"].to("m^2")
    frac = tbl["active_fraction"].to("dimensionless").magnitude
    dT = temperature_difference(tbl["temperature_anomaly"])
    w = tbl["velocity"].to("m/s") if "velocity" in tbl else None
    checks = [("area", area.magnitude < 0, area.magnitude, "m^2", "an area ≥ 0 m^2"),
              ("active_fraction", (frac < 0) | (frac > 1), frac, "", "a fraction from 0 to 1"),
              ("temperature_anomaly", dT.magnitude <= 0, dT.magnitude, "K", "an anomaly > 0 K above ambient")]
    if w is not None:
        checks.append(("velocity", w.magnitude <= 0, w.magnitude, "m/s",
                       "an upward velocity > 0 (diffuse flow is assumed to rise)"))
    for field, bad, vals, unit, allowed in checks:
        for i in np.flatnonzero(bad):
            c.add(InputError(field, f"{vals[i]:g} {unit}".strip(), allowed, where=f"{path}:{tbl.lines[i]}"))
    sds: dict[str, pint.Quantity | None] = {}
    for k in ("area_sd", "active_fraction_sd", "temperature_anomaly_sd", "velocity_sd"):
        if k not in tbl:
            sds[k] = None
            continue
        q = tbl[k]
        q = temperature_difference(q, k) if k == "temperature_anomaly_sd" else q
        for i in np.flatnonzero(q.magnitude < 0):
            c.add(InputError(k, f"{q.magnitude[i]:g}", "a standard deviation ≥ 0", where=f"{path}:{tbl.lines[i]}"))
        sds[k] = Q_(q.magnitude + 0.0, q.units)  # -0 is 0 (a normal's scale must not carry a sign)
    # A standard deviation is drawn inside the column's physical range (``PATCH_BOUNDS``): such a
    # distribution exists only for a positive mean, and for a fraction only when sd² < f(1 − f).
    spreads = [("area_sd", area), ("temperature_anomaly_sd", dT)] + ([] if w is None else [("velocity_sd", w)])
    for k, value in spreads:
        sd_q = sds.get(k)
        if sd_q is None:
            continue
        mean = value.magnitude
        sd = sd_q.to(value.units).magnitude
        for i in np.flatnonzero((sd > 0) & ~(mean > 0)):
            c.add(InputError(k, f"{sd[i]:g}", f"a standard deviation of 0 for a {k[:-3].replace('_', ' ')} of "
                             f"{mean[i]:g} (a spread needs a positive value)", where=f"{path}:{tbl.lines[i]}"))
    frac_sd = sds.get("active_fraction_sd")
    if frac_sd is not None:
        sd = frac_sd.to("dimensionless").magnitude
        for i in np.flatnonzero((sd > 0) & ~(sd**2 < frac * (1 - frac))):
            c.add(InputError("active_fraction_sd", f"{sd[i]:g}", f"a standard deviation below "
                             f"√(f(1 − f)) = {np.sqrt(max(frac[i] * (1 - frac[i]), 0)):.3g} for an active fraction "
                             f"f = {frac[i]:g} (the widest spread a fraction between 0 and 1 can have)",
                             where=f"{path}:{tbl.lines[i]}"))
    values = {"area": area, "active_fraction": Q_(frac, "dimensionless"), "temperature_anomaly": dT, "velocity": w}
    for k, v in values.items():
        if v is not None and sds.get(k + "_sd") is not None:
            _check_spread(path, tbl.lines, k, v, sds[k + "_sd"], c)
            _check_distribution(path, tbl.lines, k, v, sds[k + "_sd"], c)
    c.raise_if_any()
    return PatchTable(names=tuple(names), classes=tuple(classes), area=area, active_fraction=frac,
                      temperature_anomaly=dT, velocity=w, area_sd=sds["area_sd"],
                      active_fraction_sd=None if sds["active_fraction_sd"] is None
                      else sds["active_fraction_sd"].to("dimensionless").magnitude,
                      temperature_anomaly_sd=sds["temperature_anomaly_sd"], velocity_sd=sds["velocity_sd"],
                      lines=tbl.lines)


def _check_distribution(path, lines, name, value, sd, c):
    """Each row's distribution made as the propagation makes it (``from_mean_sd`` within ``PATCH_BOUNDS``): a row
    it refuses is refused here, so that what a check accepts the run accepts. Rows already refused above keep
    their first line."""
    unit = str(value.units)
    means = np.atleast_1d(value.magnitude)
    sds = np.atleast_1d(sd.to(value.units).magnitude)
    field = f"{name}_sd"
    named = {e.where for e in c.errors if e.field == field}
    for i, (m, s) in enumerate(zip(means, sds, strict=True)):
        where = f"{path}:{lines[i]}"
        if where in named:
            continue
        try:
            from_mean_sd(m, s, unit, PATCH_BOUNDS[name], field)
        except InputError as e:
            c.add(InputError(field, f"{s:g}", f"{e.allowed} (the row's {name.replace('_', ' ')} is {m:g} {unit})",
                             where=where))


def _check_spread(path, lines, name, value, sd, c):
    """A row's normal (value ± sd) must keep its 95 % point within the plausibility limit (a fraction ≤ 1).

    Draws below zero are the propagation driver's policy (drop and count, refuse above its threshold)."""
    from .limits import Z95, implausible_allowed, limit_for

    unit = "K" if name == "temperature_anomaly" else str(value.units)
    v = value.to(unit).magnitude if name != "temperature_anomaly" else value.magnitude
    s = sd.to(unit).magnitude if name != "temperature_anomaly" else sd.magnitude
    hi = v + Z95 * s
    lim = limit_for(name)
    top = 1.0 if name == "active_fraction" else None
    if lim is not None and lim.high is not None and top is None and not implausible_allowed():
        top = Q_(lim.high, lim.unit or "dimensionless").to(unit).magnitude if name != "temperature_anomaly" \
            else lim.high
    for i in range(v.size):
        shown = f"{v[i]:g} ± {s[i]:g} {unit}".replace(" dimensionless", "")
        if top is not None and hi[i] > top:
            c.add(InputError(f"{name} ± {name}_sd", shown, f"a spread whose 95 % point ({hi[i]:.3g}) is at most "
                             f"{top:g}" + ("" if name == "active_fraction" else " (plausibility limit)"),
                             where=f"{path}:{lines[i]}"))


def _check_duplicate_rows(path, tbl, names, classes, c):
    """A patch named twice, or a row repeated value for value, would be counted twice: refuse it at its line."""
    first: dict = {}
    if names is not None:
        for i, name in enumerate(names):
            if name in first:
                c.add(InputError("patch", name, f"each patch on one line only (also on line {first[name]})",
                                 where=f"{path}:{tbl.lines[i]}"))
            else:
                first[name] = int(tbl.lines[i])
        return
    cols = sorted(tbl.columns)
    for i in range(len(tbl)):
        row = (classes[i], *(float(tbl[k].magnitude[i]) for k in cols))
        if row in first:
            c.add(InputError("patch", f"line {tbl.lines[i]}", f"each patch once; the same values as line {first[row]} "
                             "(name the patches in a 'patch' column if they truly are distinct)",
                             where=f"{path}:{tbl.lines[i]}"))
        else:
            first[row] = int(tbl.lines[i])


def _areas_from_polygons(polygons, names, lines, patch_path):
    tbl = read_quantity_table(polygons, {"x": "length", "y": "length"})
    vert_patch = _text_columns(polygons, ("patch",), tbl.lines)["patch"]
    if vert_patch is None:
        raise InputError("column", "patch", "a 'patch' column naming the patch of each vertex", where=str(polygons))
    vp = np.asarray(vert_patch)
    c = Collector()
    areas = np.empty(len(names))
    for i, name in enumerate(names):
        sel = vp == name
        with c.check():
            if not sel.any():
                raise InputError("patch", name, f"a patch with vertices in {polygons}",
                                 where=f"{patch_path}:{lines[i]}")
            try:
                areas[i] = polygon_area(tbl["x"][sel], tbl["y"][sel]).magnitude
            except InputError as e:
                raise InputError(e.field, e.value, e.allowed, where=f"{polygons}:{tbl.lines[sel][0]}") from None
    c.raise_if_any()
    return Q_(areas, "m^2")


def read_area_classes(path):
    """Mapped area classes: ``class`` (text) and ``area [m^2]`` (optional ``area_sd``)."""
    tbl = read_quantity_table(path, {"area": "area"}, optional={"area_sd": "area"})
    names = _text_columns(path, ("class",), tbl.lines)["class"]
    if names is None:
        raise InputError("column", "class", "a 'class' column naming each mapped area class", where=str(path))
    c = Collector()
    first: dict[str, int] = {}
    for i, name in enumerate(names):  # a class listed twice would be scaled up twice
        if name in first:
            c.add(InputError("class", name, f"each mapped class on one line only (also on line {first[name]})",
                             where=f"{path}:{tbl.lines[i]}"))
        else:
            first[name] = int(tbl.lines[i])
    for i in np.flatnonzero(tbl["area"].magnitude < 0).tolist():
        c.add(InputError("area", f"{tbl['area'].magnitude[i]:g}", "a mapped area ≥ 0", where=f"{path}:{tbl.lines[i]}"))
    sd = None
    if "area_sd" in tbl:
        sd = tbl["area_sd"].to("m^2")
        for i in np.flatnonzero(sd.magnitude < 0).tolist():
            c.add(InputError("area_sd", f"{sd.magnitude[i]:g}", "a standard deviation ≥ 0",
                             where=f"{path}:{tbl.lines[i]}"))
        sd = Q_(sd.magnitude + 0.0, "m^2")  # -0 is 0 (a normal's scale must not carry a sign)
        for i in np.flatnonzero((sd.magnitude > 0) & ~(tbl["area"].magnitude > 0)).tolist():
            c.add(InputError("area_sd", f"{sd.magnitude[i]:g}", "a standard deviation of 0 for a mapped area of 0",
                             where=f"{path}:{tbl.lines[i]}"))
        _check_distribution(path, tbl.lines, "area", tbl["area"].to("m^2"), sd, c)  # drawn as a positive area
    c.raise_if_any()
    return names, tbl["area"].to("m^2"), sd

