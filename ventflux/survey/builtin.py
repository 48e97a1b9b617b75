"""The core's survey methods (orifice measurements) and sections (diffuse patches).

Each method goes through the package's one propagation driver
(``ventflux.uncertainty.propagate``) with the run's ``SharedDraws``: every
input is drawn under its key path (``Gildhorn/orifice[0]/velocity``), or
under its shared name when the survey file refers to ``[shared]`` with
``"@name"``; the site's ambient temperature is one shared input for every
vent and patch. These are the names ``ventflux orifice --name`` and
``ventflux diffuse`` use, so a command and a survey draw the same values.
Draws a method cannot evaluate (a boiling exit temperature, a negative
velocity) are dropped and counted under the run's one limit
(``[run] max_unphysical``) and become NaN; the run drops those draw columns
for the whole field, so every remaining column stays one consistent
realization.
"""

from __future__ import annotations

import numpy as np

from ..orifice import (
    CENTERLINE_PROFILE_FACTOR,
    VELOCITY_KINDS,
    orifice_discharge,
    orifice_input_names,
    orifice_physical,
)
from ..errors import InputError
from ..uncertainty import Uncertain, propagate, screen
from ..units import Q_
from .api import MethodEstimate, ReportPart, SectionEstimate, SurveyMethod, SurveySection
from .fields import SharedRef, as_float, key_drawn_as, nominal_of
from .schema import DataColumn, SurveyKey

#: The mean/centreline velocity ratio of a fully turbulent jet exit, a range rather than a constant: power-law
#: profiles u ∝ (1 − r/R)^(1/m) with m from 6 to 10 (Schlichting, Boundary-Layer Theory; from memory) give
#: 2m²/((m + 1)(2m + 1)) = 0.79–0.87. Centred on the 1/7-law value 49/60 with a standard deviation of 0.025
#: (±2 sd spans the range; a choice). Drawn once per draw for every orifice that gives no profile factor.
PROFILE_FACTOR_UNCERTAIN = Uncertain("normal", CENTERLINE_PROFILE_FACTOR, 0.025, "dimensionless")
PROFILE_FACTOR_NAME = "constants/velocity profile factor"

#: Survey key → (parsed name, dimension) of an orifice's measurements (the parsed names are the inputs of
#: ``orifice_discharge`` and the draw names of ``ventflux orifice --name``).
_ORIFICE_KEYS = (("exit_temperature", "temperature", "temperature"), ("velocity", "velocity", "velocity"),
                 ("diameter", "diameter", "length"), ("minor_diameter", "minor_diameter", "length"),
                 ("area", "area", "area"))

ORIFICE_KEYS = (
    SurveyKey("name", "string", "the orifice's label in the report", default="orifice 1, 2, ...",
              example='"E-1 main spire"'),
    SurveyKey("exit_temperature", "temperature", "exit temperature of the fluid at the orifice", required=True,
              uncertain=True, example='"338 ± 2 degC"'),
    SurveyKey("velocity", "velocity", "exit velocity (area mean, or centreline: see velocity_kind)", required=True,
              uncertain=True, example='"1.2 ± 0.2 m/s"'),
    SurveyKey("velocity_kind", "string", "what the velocity is: the area mean or the centreline speed",
              choices=("area-mean", "centerline"), default='"area-mean"'),
    SurveyKey("diameter", "length", "orifice diameter (the major axis of an elliptical one)",
              required="unless area is given (exactly one of the two)", uncertain=True, example='"7.5 ± 0.6 cm"'),
    SurveyKey("minor_diameter", "length", "minor axis of an elliptical orifice (with diameter)", uncertain=True),
    SurveyKey("area", "area", "orifice area (instead of diameter)", uncertain=True),
    SurveyKey("temperature_offset", "temperature", "calibration offset added to the exit temperature "
              "(typically \"@name\" of [shared]: one probe for every orifice)", uncertain=True),
    SurveyKey("size_factor", "dimensionless", "calibration factor on the diameters (area: squared), e.g. one "
              "photo scale shared by every orifice", uncertain=True),
    SurveyKey("velocity_factor", "dimensionless", "calibration factor on the velocity", uncertain=True),
    SurveyKey("profile_factor", "dimensionless", "mean/centreline velocity ratio, for velocity_kind = "
              "\"centerline\"", uncertain=True,
              default=f"{CENTERLINE_PROFILE_FACTOR:.3f} ± 0.025 (turbulent power-law profiles)"),
)


# ---- orifice measurements ----------------------------------------------------
def _parse_orifice(f, ctx):
    spec = {"name": f.string("name", default=None)}
    for key, name, dim in _ORIFICE_KEYS:
        spec[name] = f.quantity(key, dim, required=key in ("exit_temperature", "velocity"),
                                positive=key != "exit_temperature")
    if (spec["diameter"] is None) == (spec["area"] is None) and ("diameter" in f.table) == ("area" in f.table):
        f.error("diameter", "both or neither of diameter and area", "exactly one of diameter or area")
    # Calibration terms, typically "@name" references to [shared] so that every
    # orifice measured with the same probe or scaler shares the same error.
    spec["temperature_offset"] = f.quantity("temperature_offset", "temperature")
    spec["size_factor"] = f.quantity("size_factor", "dimensionless", positive=True)
    spec["velocity_factor"] = f.quantity("velocity_factor", "dimensionless", positive=True)
    spec["velocity_kind"] = f.string("velocity_kind", default="area-mean", choices=VELOCITY_KINDS)
    _check_exit_temperature(f, spec["temperature"], ctx.site)
    spec["profile_factor"] = f.quantity("profile_factor", "dimensionless", positive=True)
    if spec["velocity_kind"] == "centerline" and spec["profile_factor"] is None:
        f.defaults[f.key("profile_factor")] = (f"{PROFILE_FACTOR_UNCERTAIN} (1/7-power-law turbulent profile "
                                               f"{CENTERLINE_PROFILE_FACTOR:.4f}; 1/6 to 1/10 laws span 0.79–0.87)")
    f.check_unknown()
    return spec


def _check_exit_temperature(f, temperature, site):
    """Refuse, before any computation, an exit temperature not above ambient or boiling at the site."""
    if temperature is None or site is None or site.ambient_temperature is None:
        return
    from ..errors import InputError
    from ..orifice import in_situ_pressure
    from ..properties import fluid_model

    try:
        p = in_situ_pressure(site.pressure, site.depth, site.latitude).to("Pa").magnitude
    except InputError:
        return  # the site's own error is reported already
    T = nominal_of(temperature).to("K").magnitude
    Ta = nominal_of(site.ambient_temperature).to("K").magnitude
    raw = f.raw("exit_temperature")
    if not T > Ta:
        f.error("exit_temperature", raw, "an exit temperature above the site's ambient temperature")
        return
    try:
        fluid_model().check(T, p, "exit_temperature")
    except InputError as e:
        f.error("exit_temperature", raw, e.allowed)


def _estimate_orifices(specs, vent, ctx):
    n = ctx.draws.n_draws
    total = np.zeros(n)
    nominal_total = 0.0
    mass = np.zeros(n)
    rows = []
    site = ctx.site
    for i, spec in enumerate(specs):
        label = spec["name"] or f"orifice {i + 1}"
        inputs, exact, names, drawn, common = _orifice_arguments(spec, i, vent, ctx)
        prop = propagate(calibrated_orifice_discharge, {**inputs, **common}, names=names, draws=ctx.draws,
                         physical=calibrated_orifice_physical, max_unphysical=ctx.policy, drawn=drawn)
        res = prop.result
        H = prop.expand(_per_draw(res.heat_power, prop.kept), "W").magnitude
        m = prop.expand(_per_draw(res.mass_flux, prop.kept), "kg/s").magnitude
        ambient_nominal = (nominal_of(site.ambient_temperature) if site.ambient_temperature is not None
                           else Q_(np.mean(ctx.ambient_temperature.to("K").magnitude), "K"))
        nom = calibrated_orifice_discharge(**{**exact, **common, "ambient_temperature": ambient_nominal,
                                              "ambient_salinity": float(np.mean(ctx.ambient_salinity))})
        total += H
        mass += m
        nominal_total += nom.heat_power.to("W").magnitude
        rows.append({"vent": vent, "orifice": label,
                     "exit_temperature [degC]": nom_value(exact["temperature"], "degC"),
                     "mean_velocity [m/s]": nom.mean_velocity.to("m/s").magnitude,
                     "area [cm^2]": nom.area.to("cm^2").magnitude,
                     "exit_density [kg/m^3]": nom.exit_density.to("kg/m^3").magnitude,
                     "mass_flux [kg/s]": nom.mass_flux.to("kg/s").magnitude,
                     "heat_power [MW]": nom.heat_power.to("MW").magnitude,
                     "heat_power_constant_cp [MW]": nom.heat_power_constant_cp.to("MW").magnitude,
                     "constant_cp_difference [%]": nom.shortcut_difference.to("percent").magnitude,
                     "heat_power_p05 [MW]": np.nanpercentile(H, 5) / 1e6,
                     "heat_power_p95 [MW]": np.nanpercentile(H, 95) / 1e6,
                     "unphysical_draws": prop.unphysical})
    temps = [nominal_of(s["temperature"]).to("K").magnitude for s in specs]
    return MethodEstimate(heat_power=Q_(total, "W"), nominal_heat_power=Q_(nominal_total, "W"),
                          exit_temperature=Q_(max(temps), "K"), mass_flux=Q_(mass, "kg/s"), rows=rows)


def _orifice_arguments(spec, i, vent, ctx):
    """Orifice ``i``'s drawn inputs, their nominal values, stream names, the run's given draws and its exact
    arguments, as the run propagates it: one definition for the estimate and for ``screen_orifices``."""
    names = {**orifice_input_names(vent, i), **{k: f"{vent}/orifice[{i}]/{k}" for k in _DRAWN_KEYS}}
    inputs, exact = {}, {}
    for key in _DRAWN_KEYS:
        v = spec.get(key)
        if v is None:
            continue
        if isinstance(v, SharedRef):  # a [shared] input: one stream for all its users
            names[key], v = "shared/" + v.name, v.value
        inputs[key] = v
        exact[key] = nominal_of(v)
    if spec["velocity_kind"] == "centerline" and spec.get("profile_factor") is None:  # a constant known as a range
        names["profile_factor"], inputs["profile_factor"] = PROFILE_FACTOR_NAME, PROFILE_FACTOR_UNCERTAIN
        exact["profile_factor"] = PROFILE_FACTOR_UNCERTAIN.nominal
    drawn = {"ambient_temperature": ctx.ambient_temperature}
    if np.ndim(ctx.ambient_salinity) == 1:
        drawn["ambient_salinity"] = ctx.ambient_salinity
    else:
        inputs["ambient_salinity"] = ctx.ambient_salinity
    common = {"pressure": ctx.pressure, "velocity_kind": spec["velocity_kind"], "latitude": ctx.site.latitude,
              "longitude": ctx.site.longitude}
    return inputs, exact, names, drawn, common


def screen_orifices(specs, vent, ctx) -> list:
    """The refusals the run's propagation raises for a vent's orifices, on the run's draws: ``[(i, InputError)]``.

    Each orifice's inputs are drawn and screened exactly as the run draws and screens them (the driver's
    first half, ``uncertainty.screen``): impossible draws of several inputs together (a velocity and a diameter
    each ≤ 0 in 4 % of their draws drop 8 % of the orifice's) are counted as the run counts them, at no cost of
    estimation.
    """
    out = []
    for i, spec in enumerate(specs):
        inputs, _, names, drawn, common = _orifice_arguments(spec, i, vent, ctx)
        try:
            screen({**inputs, **common}, names=names, draws=ctx.draws, physical=calibrated_orifice_physical,
                   max_unphysical=ctx.policy, drawn=drawn)
        except InputError as e:
            out.append((i, e))
    return out


def orifice_key(stream: str, spec: dict) -> str:
    """The survey key of an orifice's input drawn under ``stream`` (``<vent>/orifice[i]/<input>`` or the
    ``shared/<name>`` one of its keys refers to); ``""`` (the orifice's table) for a site input or a constant."""
    keys = {name: key for key, name, _ in _ORIFICE_KEYS}
    name = key_drawn_as(stream, spec) or (stream.rsplit("/", 1)[-1] if "/orifice[" in stream else None)
    return keys.get(name, name) if name in _DRAWN_KEYS else ""


def _per_draw(q, n):
    """An output as ``n`` draws (an output no drawn input reached is one value)."""
    return Q_(np.broadcast_to(q.magnitude, (n,)), q.units)


#: Inputs of one orifice that may be drawn, calibration terms included.
_DRAWN_KEYS = ("temperature", "velocity", "diameter", "minor_diameter", "area", "profile_factor",
               "temperature_offset", "size_factor", "velocity_factor")


def _calibrated(args):
    """The orifice's arguments with a temperature offset and size/velocity factors applied (draw by draw)."""
    args = dict(args)
    off = args.pop("temperature_offset", None)
    size = args.pop("size_factor", None)
    vel = args.pop("velocity_factor", None)
    if off is not None:
        args["temperature"] = Q_(args["temperature"].to("K").magnitude + off.to("K").magnitude, "K")
    for fac, targets in ((size, ("diameter", "minor_diameter", "area")), (vel, ("velocity",))):
        if fac is None:
            continue
        k = as_float(fac)
        for t in targets:
            if args.get(t) is not None:
                args[t] = args[t] * k ** (2 if t == "area" else 1)
    if args.get("profile_factor") is not None:
        args["profile_factor"] = as_float(args["profile_factor"])
    return args


def calibrated_orifice_discharge(**args):
    """``orifice_discharge`` of an orifice whose measurements carry calibration terms (see ``_calibrated``)."""
    return orifice_discharge(**_calibrated(args))


def calibrated_orifice_physical(args):
    """``orifice_physical`` after calibration; factors must be positive."""
    keep = np.ones((), bool)
    for k in ("size_factor", "velocity_factor"):
        if args.get(k) is not None:
            keep = keep & (np.asarray(as_float(args[k])) > 0)
    return keep & orifice_physical(_calibrated(args))


def nom_value(q, unit):
    return float(q.to(unit).magnitude)


ORIFICE = SurveyMethod(key="orifice", many=True,
                       summary="exit temperature, velocity and size of each orifice (IAPWS-95 enthalpy difference)",
                       parse=_parse_orifice, estimate=_estimate_orifices,
                       report=ReportPart(table="orifices", titles={"orifices": "Orifices"}, rank=20),
                       keys=ORIFICE_KEYS)


# ---- diffuse patches -------------------------------------------------------------
#: Optional position columns of a patch table (either pair, every row): where each patch is, for the site map.
PATCH_POSITION_COLUMNS = (
    DataColumn("east", "m", "east of a local origin (with north)", required=False),
    DataColumn("north", "m", "north of a local origin (with east)", required=False),
    DataColumn("latitude", "", "latitude in decimal degrees (with longitude; instead of east/north)",
               required=False),
    DataColumn("longitude", "", "longitude in decimal degrees (with latitude)", required=False),
)

PATCH_COLUMNS = (
    DataColumn("patch", "", "the patch's name (text)", required=False),
    DataColumn("class", "", "its mapped area class (text), for scaling up with classes", required=False),
    DataColumn("area", "m^2", "sampled area", required="unless polygons are given"),
    DataColumn("active_fraction", "", "share of the area that discharges (0 to 1)"),
    DataColumn("temperature_anomaly", "K", "temperature above ambient of the discharging fluid"),
    DataColumn("velocity", "cm/s", "upward velocity of the discharging fluid", required="unless velocity is given "
               "in [diffuse]"),
    DataColumn("area_sd", "m^2", "standard deviation of the area", required=False),
    DataColumn("active_fraction_sd", "", "standard deviation of the active fraction", required=False),
    DataColumn("temperature_anomaly_sd", "K", "standard deviation of the anomaly", required=False),
    DataColumn("velocity_sd", "cm/s", "standard deviation of the velocity", required=False),
    *PATCH_POSITION_COLUMNS,
)

DIFFUSE_KEYS = (
    SurveyKey("patches", "path", "the sampled diffuse-flow patches (CSV, one row a patch)", required=True,
              columns=PATCH_COLUMNS, example='"data/patches.csv"'),
    SurveyKey("polygons", "path", "patch outlines (CSV) whose areas replace the area column",
              columns=(DataColumn("patch", "", "the patch's name, as in the patch table"),
                       DataColumn("x", "m", "vertex east of a local origin, in order around the patch"),
                       DataColumn("y", "m", "vertex north of a local origin"))),
    SurveyKey("classes", "path", "mapped area classes (CSV): the patches of a class scale up to its area",
              columns=(DataColumn("class", "", "the class's name (text)"), DataColumn("area", "m^2", "mapped area"),
                       DataColumn("area_sd", "m^2", "standard deviation of the mapped area", required=False)),
              example='"data/area_classes.csv"'),
    SurveyKey("velocity", "velocity", "one upward velocity for every patch (when the patch table has none)",
              uncertain=True),
    SurveyKey("category", "string", "how the section counts in the totals", choices=("diffuse", "focused"),
              default='"diffuse"'),
)


def _patch_positions(path, t):
    """Each patch's ``Position`` from the optional position columns (None when the table has none)."""
    from ..errors import InputError
    from ..limits import check_position
    from ..tables import read_quantity_table
    from .fields import Position

    tbl = read_quantity_table(path, {}, optional={"east": "length", "north": "length",
                                                  "latitude": "dimensionless", "longitude": "dimensionless"})
    pairs = [("east", "north"), ("latitude", "longitude")]
    given = [pair for pair in pairs if any(c in tbl for c in pair)]
    if not given:
        return None
    if len(given) > 1 or not all(c in tbl for c in given[0]):
        raise InputError("column", ", ".join(c for pair in given for c in pair if c in tbl),
                         "either 'east [m]' and 'north [m]', or 'latitude' and 'longitude' (both of a pair)",
                         where=str(path))
    a, b = given[0]
    out = {}
    for i, name in enumerate(t.names):
        if a == "east":
            out[name] = Position(east=float(tbl["east"][i].to("m").magnitude),
                                 north=float(tbl["north"][i].to("m").magnitude))
        else:
            where = f"{path}:{tbl.lines[i]}"
            lat = tbl["latitude"][i].to("dimensionless").magnitude
            lon = tbl["longitude"][i].to("dimensionless").magnitude
            try:
                out[name] = Position(latitude=check_position("latitude", lat, "latitude"),
                                     longitude=check_position("longitude", lon, "longitude"))
            except InputError as e:
                raise InputError(e.field, e.value, e.allowed, where=where) from None
    return out


def _parse_diffuse(f, ctx):
    from ..diffuse import read_area_classes, read_patch_table
    from ..errors import InputError, InputErrors

    spec = {}
    patches = f.path_value("patches", required=True)
    polygons = f.path_value("polygons")
    classes = f.path_value("classes")
    spec["velocity"] = f.quantity("velocity", "velocity", positive=True)
    spec["category"] = f.string("category", default="diffuse", choices=("diffuse", "focused"))
    f.check_unknown()
    for p, role in ((patches, "diffuse patches"), (polygons, "patch polygons"), (classes, "mapped area classes")):
        if p is not None:
            ctx.input_files[str(p)] = role
    spec["table"] = None
    spec["classes"] = None
    #: Patch name → ``Position`` (from the table's optional position columns), or None.
    spec["positions"] = None
    try:
        if patches is not None:
            spec["table"] = read_patch_table(patches, polygons)
            spec["positions"] = _patch_positions(patches, spec["table"])
        if classes is not None:
            spec["classes"] = read_area_classes(classes)
    except InputErrors as e:
        f.errors.errors.extend(e.errors)
    except InputError as e:
        f.errors.add(e)
    t = spec["table"]
    if t is not None and t.velocity is None and spec["velocity"] is None:
        f.error("velocity", "(missing)", "a velocity column in the patch table or a velocity for all patches here")
    if t is not None and spec["classes"] is not None:
        missing = sorted(set(spec["classes"][0]) - set(t.classes))
        for m in missing:
            f.error("classes", m, "a mapped class with at least one sampled patch in " + str(patches))
        for u in sorted(set(t.classes) - set(spec["classes"][0])):  # never leave sampled patches out silently
            f.error("patches", u or "(empty class)", "a patch class listed in " + str(classes))
    return spec


def _estimate_diffuse(spec, ctx):
    from ..diffuse import diffuse_propagation, scale_up_uncertain

    t = spec["table"]
    d = ctx.draws
    names = list(t.names)

    def per_patch(mean, sd):
        return mean if sd is None else (mean, sd)

    overrides = {}
    if t.velocity is not None:
        w = per_patch(t.velocity, t.velocity_sd)
    else:
        w = spec["velocity"]
        if isinstance(w, SharedRef):  # a [shared] velocity: one stream for all its users
            overrides["velocity"], w = "shared/" + w.name, w.value
    frac_sd = None if t.active_fraction_sd is None else Q_(t.active_fraction_sd, "dimensionless")
    drawn = {"ambient_temperature": ctx.ambient_temperature}
    salinity = ctx.ambient_salinity
    if np.ndim(salinity) == 1:
        drawn["ambient_salinity"], salinity = salinity, None
    prop = diffuse_propagation(per_patch(t.area, t.area_sd), per_patch(Q_(t.active_fraction, "dimensionless"),
                                                                        frac_sd),
                               per_patch(t.temperature_anomaly, t.temperature_anomaly_sd), w,
                               nominal_of(ctx.site.ambient_temperature) if ctx.site.ambient_temperature is not None
                               else Q_(float(np.mean(ctx.ambient_temperature.to("K").magnitude)), "K"),
                               salinity if salinity is not None else float(np.mean(ctx.ambient_salinity)),
                               ctx.pressure, draws=d, names=names, input_names=overrides,
                               max_unphysical=ctx.policy, drawn=drawn)
    res = prop.draws
    H = res.heat_power.to("W")
    V = res.volume_flux.to("m^3/s")
    rows = []
    for i, n in enumerate(names):
        h = H[i].magnitude
        rows.append({"patch": n, "class": t.classes[i], "area [m^2]": float(t.area[i].to("m^2").magnitude),
                     "active_fraction": float(t.active_fraction[i]),
                     "temperature_anomaly [K]": float(t.temperature_anomaly[i].to("K").magnitude),
                     "heat_power_median [kW]": float(np.nanmedian(h)) / 1e3,
                     "heat_power_p05 [kW]": float(np.nanpercentile(h, 5)) / 1e3,
                     "heat_power_p95 [kW]": float(np.nanpercentile(h, 95)) / 1e3,
                     "heat_flux [W/m^2]": float(np.nanmedian(h) / t.area[i].to("m^2").magnitude)})
    tables = {"diffuse_patches": rows}
    notes = [f"Diffuse patches: {prop.unphysical} of {prop.n_draws} draws dropped as physically impossible "
             f"(limit {prop.max_unphysical:.1%})."] if prop.unphysical else []
    if spec["classes"] is None:
        return SectionEstimate(category=spec["category"], names=names, heat_power=H, volume_flux=V, rows=rows,
                               tables=tables, notes=notes)
    cnames, carea, carea_sd = spec["classes"]
    sp = scale_up_uncertain(prop, t.classes, list(cnames), carea, carea_sd, draws=d, max_unphysical=ctx.policy)
    up = sp.scale_up
    crow = []
    for k, c in enumerate(up.classes):
        h = up.heat_power[k].to("MW").magnitude
        crow.append({"class": c, "mapped_area [m^2]": float(carea[k].to("m^2").magnitude),
                     "sampled_patches": int(up.n_sampled[k]),
                     "heat_flux_median [W/m^2]": float(np.nanmedian(up.heat_flux_density[k].to("W/m^2").magnitude)),
                     "heat_power_median [MW]": float(np.nanmedian(h)),
                     "heat_power_p05 [MW]": float(np.nanpercentile(h, 5)),
                     "heat_power_p95 [MW]": float(np.nanpercentile(h, 95))})
    tables["diffuse_classes"] = crow
    return SectionEstimate(category=spec["category"], names=[f"class {c}" for c in up.classes],
                           heat_power=up.heat_power.to("W"), volume_flux=up.volume_flux.to("m^3/s"), rows=crow,
                           tables=tables,
                           notes=notes + ["Diffuse output is scaled up from the sampled patches to the mapped area "
                                          "classes; the sampled patches themselves are not added again."])


DIFFUSE = SurveySection(key="diffuse", summary="diffuse-flow patches (TEOS-10 enthalpy), scaled up to mapped areas",
                        parse=_parse_diffuse, estimate=_estimate_diffuse, keys=DIFFUSE_KEYS,
                        report=ReportPart(titles={"diffuse_classes": "Diffuse discharge by mapped area class",
                                                  "diffuse_patches": "Sampled diffuse patches"}, rank=40))

def _plume_rise():
    from .plume_method import PLUME_RISE

    return PLUME_RISE


def _field_sections():
    from .field_sections import FIELD_PLUME, RIDGE_FLANK

    return [FIELD_PLUME, RIDGE_FLANK]


METHODS = [ORIFICE, _plume_rise()]
SECTIONS = [DIFFUSE, *_field_sections()]
