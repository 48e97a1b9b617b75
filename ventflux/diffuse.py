"""Diffuse-flow heat balance: warm fluid seeping through patches of seafloor.

A patch of area ``A`` of which a fraction ``f`` actively vents discharges
fluid at a mean upward (Darcy) velocity ``w`` and a mean temperature anomaly
``ΔT`` over the ambient seawater. Its heat power is

    H = ρ · w · f·A · (h(T_amb + ΔT, S, p) − h(T_amb, S, p)),

an enthalpy difference at in-situ pressure from TEOS-10 [1] with the same
salinity at both ends (diffuse fluid is mostly entrained seawater), ρ being
the density of the discharging fluid at ``T_amb + ΔT``. Where the warm fluid
lies outside TEOS-10's oceanographic funnel (which ends near 25 °C at 2000
dbar), both ends come instead from the vent-fluid model, pure water from
IAPWS-95 (``ventflux.properties.ventfluid``), never one end from each. Its volume flux is
``w · f·A``. The common shortcut ``ρ · w · f·A · c_p(T_amb) · ΔT`` is returned
beside it for comparison, never instead of it.

Every estimator here is a deterministic function over arrays: inputs of
shape ``(n_patches,)`` or ``(n_patches, n_draws)``. Monte Carlo uncertainty
draws every input once as arrays, calls the estimator once, and summarizes
(``ventflux.uncertainty``).

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

import gsw
import numpy as np
import pint

from .errors import Collector, InputError
from .properties.seawater import (
    STANDARD_ATMOSPHERE,
    _salinity_number,
    absolute_salinity,
    check_funnel,
    sea_pressure_dbar,
)
from .tables import read_quantity_table
from .uncertainty import DEFAULT_DRAWS, DEFAULT_SEED, Uncertain, draw_inputs
from .units import Q_, magnitude, require_dimension, ureg

__all__ = [
    "DiffuseDischarge",
    "ScaleUp",
    "PatchTable",
    "polygon_area",
    "temperature_difference",
    "diffuse_discharge",
    "diffuse_discharge_uncertain",
    "scale_up_by_area_class",
    "clip_to_physical_range",
    "check_patch_inputs",
    "read_patch_table",
    "read_area_classes",
    "velocity_from_source",
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

    @property
    def total_heat_power(self):
        return self.heat_power.sum(axis=0)

    @property
    def total_volume_flux(self):
        return self.volume_flux.sum(axis=0)


@dataclass(frozen=True)
class DiffuseDischarge(_Totals):
    """Heat and water discharge of each patch (arrays, patches along axis 0)."""

    heat_power: pint.Quantity
    heat_power_cp_shortcut: pint.Quantity
    volume_flux: pint.Quantity
    mass_flux: pint.Quantity
    area: pint.Quantity
    effective_area: pint.Quantity
    specific_heat_content: pint.Quantity
    density: pint.Quantity
    beyond_teos10: np.ndarray  # True where the warm fluid is outside TEOS-10's funnel: IAPWS-95 water used

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
        raise InputError("input shapes", shapes, "arrays that broadcast: (n_patches,) or (n_patches, n_draws)") from None
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
        callers that clip their draws to the physical range may pass False.
    names : sequence of str, optional
        Patch names for error messages.

    Returns
    -------
    DiffuseDischarge
        ``heat_power`` [W], ``heat_power_cp_shortcut`` [W] (ρ·w·A_eff·c_p·ΔT),
        ``volume_flux`` [m³/s], ``mass_flux`` [kg/s], ``area`` and ``effective_area`` [m²],
        ``specific_heat_content`` [J/kg], ``density`` [kg/m³], each shaped
        like the broadcast inputs.

    Raises
    ------
    InputError
        Impossible patch inputs, ambient seawater outside TEOS-10's
        oceanographic funnel, or warm fluid outside IAPWS-95's validity or
        boiling.

    Notes
    -----
    Where the warm fluid lies outside TEOS-10's funnel, Δh and ρ of that
    element come from the pure-water IAPWS-95 model at both ends
    (``beyond_teos10`` marks them); the c_p shortcut keeps TEOS-10's c_p at
    ambient.

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
    shape = np.broadcast_shapes(SA.shape, t1.shape, np.shape(p))
    CT0 = gsw.CT_from_t(SA, t0, p)
    check_funnel(SA, CT0, p, np.broadcast_to(t0, np.broadcast(SA, CT0, p).shape), "ambient temperature")
    dh = np.broadcast_to(gsw.enthalpy_t_exact(SA, t1, p) - gsw.enthalpy_t_exact(SA, t0, p), shape).copy()
    rho = np.broadcast_to(gsw.rho_t_exact(SA, t1, p), shape).copy()
    cp = gsw.cp_t_exact(SA, t0, p)
    outside = ~np.broadcast_to(np.asarray(gsw.infunnel(SA, gsw.CT_from_t(SA, t1, p), p), bool), shape)
    if outside.any():
        dh[outside], rho[outside] = _warm_beyond_teos10(np.broadcast_to(t0, shape)[outside],
                                                         np.broadcast_to(t1, shape)[outside],
                                                         np.broadcast_to(p, shape)[outside])
    a_eff = A * f
    q = w * a_eff
    m = rho * q
    return DiffuseDischarge(
        heat_power=Q_(m * dh, "W"),
        heat_power_cp_shortcut=Q_(m * cp * dT, "W"),
        volume_flux=Q_(q, "m^3/s"),
        mass_flux=Q_(m, "kg/s"),
        area=Q_(np.broadcast_to(A, np.shape(a_eff)), "m^2"),
        effective_area=Q_(a_eff, "m^2"),
        specific_heat_content=Q_(dh, "J/kg"),
        density=Q_(rho, "kg/m^3"),
        beyond_teos10=outside,
    )


def _warm_beyond_teos10(t0_c, t1_c, p_sea_dbar):
    """Δh and density from the vent-fluid model (pure water, IAPWS-95) at both ends.

    Used where the warm fluid lies outside TEOS-10's funnel (at depth the
    funnel ends well below 40 °C), so one equation of state serves both ends.
    """
    from .properties import fluid_model

    model = fluid_model()
    T0, T1 = t0_c + 273.15, t1_c + 273.15
    P = p_sea_dbar * 1e4 + STANDARD_ATMOSPHERE
    model.check(T0, P, "ambient temperature")
    model.check(T1, P, "ambient temperature + temperature anomaly")
    h1, d1 = model.enthalpy_density(T1, P)
    h0, _ = model.enthalpy_density(T0, P)
    return h1 - h0, d1


# --------------------------------------------------------------------------- Monte Carlo
def clip_to_physical_range(d: dict) -> dict:
    """Clip drawn patch inputs to the physical range: a normal tail past a bound is held at the bound.

    ``d`` holds ``area``, ``temperature_anomaly``, ``velocity`` (quantities)
    and ``active_fraction`` (plain array); a new dict is returned.

    A normal distribution for a fraction or a positive quantity has tails
    outside the physical range; rather than refuse a draw we hold it at the
    bound (a lognormal input avoids this for strictly positive quantities).
    """
    out = dict(d)
    out["active_fraction"] = np.clip(np.asarray(d["active_fraction"], float), 0.0, 1.0)
    for k in ("area", "temperature_anomaly", "velocity"):
        q = d[k]
        out[k] = Q_(np.clip(q.magnitude, 0.0, None), q.units)
    return out



def _draw_patch_inputs(inputs: dict, n: int, seed):
    """Draw patch inputs; per-patch arrays with a standard deviation get (n_patches, n) draws."""
    scalars = {}
    drawn = {}
    rng = np.random.default_rng(DEFAULT_SEED if seed is None else seed)
    for k in sorted(inputs):
        v = inputs[k]
        if isinstance(v, tuple):  # (mean array, sd array) per patch, normal
            mean, sd = v
            z = rng.standard_normal((np.shape(mean.magnitude)[0], n))
            drawn[k] = Q_(mean.magnitude[:, None] + sd.to(mean.units).magnitude[:, None] * z, mean.units)
        else:
            scalars[k] = v
    drawn.update(draw_inputs(scalars, n, None if seed is None else seed + 1))  # apart from the per-patch stream
    return drawn


def diffuse_discharge_uncertain(area, active_fraction, temperature_anomaly, velocity, ambient_temperature,
                                ambient_salinity, pressure, *, draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, names=None):
    """Monte Carlo draws of the patches' discharge, every input drawn once as an array.

    Each input may be a quantity (exact; per patch or shared), an
    ``Uncertain`` (shared by all patches, e.g. the ambient temperature or one
    velocity for the field), or a tuple ``(mean, sd)`` of per-patch quantity
    arrays (normal, independent between patches). Nominal values are checked
    as in ``diffuse_discharge``; draws are clipped to the physical range
    (``clip_to_physical_range``).

    Returns
    -------
    tuple of DiffuseDischarge
        ``(nominal, draws)``: the nominal result (shape ``(n_patches,)``) and
        the drawn result (shape ``(n_patches, draws)``).
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
    nominal = diffuse_discharge(**nominal_inputs, names=names)
    prepared = {}
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
        prepared[k] = v
    d = _draw_patch_inputs(prepared, draws, seed)
    n_patches = np.shape(nominal.heat_power.magnitude)[0] if nominal.heat_power.ndim else 1
    for k, v in d.items():  # shared draws (n,) must become (1, n) to broadcast over patches
        if isinstance(prepared[k], Uncertain):
            d[k] = v.reshape(1, draws)
        elif isinstance(v, pint.Quantity) and v.ndim == 1 and v.shape[0] == n_patches and n_patches > 0:
            d[k] = v.reshape(n_patches, 1)
    d["active_fraction"] = d["active_fraction"].to("dimensionless").magnitude
    d = clip_to_physical_range(d)
    drawn = diffuse_discharge(**d, check=False, names=names)
    # every output gets the full (n_patches, draws) shape, even one no uncertain input reached
    shape = (max(n_patches, 1), draws)
    full = {f.name: _broadcast(getattr(drawn, f.name), shape) for f in fields(drawn)}
    return nominal, DiffuseDischarge(**full)


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
    seed : int
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
            c.add(InputError("class area", f"{a.min():g} m^2", "a mapped area ≥ 0 m^2", where=f"class {class_names[k]}"))
    c.raise_if_any()
    pc = np.asarray(patch_class)
    n_draws = H.shape[1] if H.ndim == 2 else None
    rng = np.random.default_rng(seed)
    qh, qv, n_sampled = [], [], []
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
    qh = np.array(qh)
    qv = np.array(qv)
    Ac_b = Ac if (Ac.ndim == qh.ndim) else (Ac[:, None] if qh.ndim == 2 else Ac)
    return ScaleUp(
        classes=tuple(class_names),
        n_sampled=np.array(n_sampled),
        heat_flux_density=Q_(qh, "W/m^2"),
        volume_flux_density=Q_(qv, "m/s"),
        heat_power=Q_(qh * Ac_b, "W"),
        volume_flux=Q_(qv * Ac_b, "m^3/s"),
    )


# --------------------------------------------------------------------------- velocity sources
def velocity_from_source(name: str, *args, **options):
    """Velocity from a registered velocity source (a plugin's measurement).

    Parameters
    ----------
    name : str
        Name of a source from ``ventflux.registry.velocity_sources()`` that
        feeds ``"diffuse"``.
    *args, **options
        Passed to the source's ``estimate`` callable (e.g. the path of a
        temperature-depth profile and its options).

    Returns
    -------
    pint.Quantity or Uncertain
        The velocity; an ``Uncertain`` (normal) when the source reports a
        standard uncertainty.
    """
    from .registry import velocity_source

    import inspect

    src = velocity_source(name)
    if "diffuse" not in src.feeds:
        raise InputError("velocity source", name, "a source that feeds the diffuse estimator")
    try:
        sig = inspect.signature(src.estimate)
    except (TypeError, ValueError):  # a builtin without a signature: call it as it is
        sig = None
    if sig is not None:
        try:
            sig.bind(*args, **options)
        except TypeError as exc:
            accepted = ", ".join(p for p in sig.parameters if p not in ("args", "kwargs"))
            raise InputError(f"velocity source {name}", ", ".join([*map(str, args), *options]) or "(nothing)",
                             f"its input and options ({accepted}): {exc}") from None
    out = src.estimate(*args, **options)
    if isinstance(out, Uncertain):
        return out
    if isinstance(out, tuple):
        v, sd = out[0], out[1]
        v = require_dimension(v, "velocity", f"velocity from {name}")
        if sd is None:
            return v
        return Uncertain("normal", float(v.to("m/s").magnitude), float(sd.to("m/s").magnitude), "m/s")
    return require_dimension(out, "velocity", f"velocity from {name}")


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
    header = None
    rows = {}
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
    out = {}
    for name in names:
        if name not in header:
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
    optional ``<name>_sd`` column of standard deviations (normal).

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
    sds = {}
    for k in ("area_sd", "active_fraction_sd", "temperature_anomaly_sd", "velocity_sd"):
        if k not in tbl:
            sds[k] = None
            continue
        q = tbl[k]
        q = temperature_difference(q, k) if k == "temperature_anomaly_sd" else q
        for i in np.flatnonzero(q.magnitude < 0):
            c.add(InputError(k, f"{q.magnitude[i]:g}", "a standard deviation ≥ 0", where=f"{path}:{tbl.lines[i]}"))
        sds[k] = Q_(q.magnitude + 0.0, q.units)  # -0 is 0 (a normal's scale must not carry a sign)
    values = {"area": area, "active_fraction": Q_(frac, "dimensionless"), "temperature_anomaly": dT, "velocity": w}
    for k, v in values.items():
        if v is not None and sds.get(k + "_sd") is not None:
            _check_spread(path, tbl.lines, k, v, sds[k + "_sd"], c)
    c.raise_if_any()
    return PatchTable(names=tuple(names), classes=tuple(classes), area=area, active_fraction=frac,
                      temperature_anomaly=dT, velocity=w, area_sd=sds["area_sd"],
                      active_fraction_sd=None if sds["active_fraction_sd"] is None
                      else sds["active_fraction_sd"].to("dimensionless").magnitude,
                      temperature_anomaly_sd=sds["temperature_anomaly_sd"], velocity_sd=sds["velocity_sd"],
                      lines=tbl.lines)


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
    if lim is not None and top is None and not implausible_allowed():
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
    first = {}
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
    first = {}
    for i, name in enumerate(names):  # a class listed twice would be scaled up twice
        if name in first:
            c.add(InputError("class", name, f"each mapped class on one line only (also on line {first[name]})",
                             where=f"{path}:{tbl.lines[i]}"))
        else:
            first[name] = int(tbl.lines[i])
    for i in np.flatnonzero(tbl["area"].magnitude < 0):
        c.add(InputError("area", f"{tbl['area'].magnitude[i]:g}", "a mapped area ≥ 0", where=f"{path}:{tbl.lines[i]}"))
    sd = None
    if "area_sd" in tbl:
        sd = tbl["area_sd"].to("m^2")
        for i in np.flatnonzero(sd.magnitude < 0):
            c.add(InputError("area_sd", f"{sd.magnitude[i]:g}", "a standard deviation ≥ 0",
                             where=f"{path}:{tbl.lines[i]}"))
        sd = Q_(sd.magnitude + 0.0, "m^2")  # -0 is 0 (a normal's scale must not carry a sign)
    c.raise_if_any()
    return names, tbl["area"].to("m^2"), sd

