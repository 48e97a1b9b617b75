"""The core's survey methods (orifice measurements) and sections (diffuse patches).

Each method draws its inputs through the run's ``SharedDraws`` under the
input's key path (``Gildhorn/orifice[0]/velocity``), or under its shared
name when the survey file refers to ``[shared]`` with ``"@name"``; the site's
ambient temperature is one shared input for every vent and patch. Draws a
method cannot evaluate (a boiling exit temperature, a negative velocity)
become NaN; the run drops those draw columns for the whole field, so every
remaining column stays one consistent realization.
"""

from __future__ import annotations

import numpy as np

from ..orifice import (CENTERLINE_PROFILE_FACTOR, VELOCITY_KINDS, orifice_discharge, physical_draws)
from ..units import Q_
from .api import MethodEstimate, SectionEstimate, SurveyMethod, SurveySection
from .fields import as_float, nominal_of, resolve

_ORIFICE_KEYS = (("temperature", "temperature"), ("velocity", "velocity"), ("diameter", "length"),
                 ("minor_diameter", "length"), ("area", "area"))


# ---- orifice measurements ----------------------------------------------------
def _parse_orifice(f, ctx):
    spec = {"name": f.string("name", default=None)}
    for key, dim in _ORIFICE_KEYS:
        spec[key] = f.quantity(key, dim, required=key in ("temperature", "velocity"), positive=key != "temperature")
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
        f.defaults[f.key("profile_factor")] = f"{CENTERLINE_PROFILE_FACTOR:.4f} (1/7-power-law turbulent profile)"
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
    raw = f.table.get("temperature")
    if not T > Ta:
        f.error("temperature", raw, "an exit temperature above the site's ambient temperature")
        return
    try:
        fluid_model().check(T, p, "temperature")
    except InputError as e:
        f.error("temperature", raw, e.allowed)


def _estimate_orifices(specs, vent, ctx):
    n = ctx.draws.n_draws
    total = np.zeros(n)
    nominal_total = 0.0
    mass = np.zeros(n)
    rows = []
    for i, spec in enumerate(specs):
        label = spec["name"] or f"orifice {i + 1}"
        drawn = {}
        exact = {"ambient_temperature": ctx.ambient_temperature}
        for key, _ in _ORIFICE_KEYS + (("profile_factor", None),):
            v = spec.get(key)
            if v is None:
                continue
            q = resolve(v, f"{vent}/orifice[{i}]/{key}", ctx.draws)
            if np.ndim(q.magnitude) == 1:
                drawn[key] = q
            exact[key] = nominal_of(v)
        _apply_calibration(spec, drawn, exact, vent, i, ctx.draws)
        if np.ndim(ctx.ambient_temperature.magnitude) == 1:
            drawn["ambient_temperature"] = ctx.ambient_temperature
        exact["ambient_temperature"] = Q_(np.mean(ctx.ambient_temperature.to("K").magnitude), "K")
        exact["pressure"] = ctx.pressure
        keep = physical_draws(drawn, exact, n) if drawn else np.ones(n, bool)
        args = {**exact, **{k: v[keep] for k, v in drawn.items()}}
        args["velocity_kind"] = spec["velocity_kind"]
        if "profile_factor" in args:
            args["profile_factor"] = as_float(args["profile_factor"])
        salinity = ctx.ambient_salinity
        args["ambient_salinity"] = salinity[keep] if np.ndim(salinity) == 1 else salinity
        args.setdefault("latitude", ctx.site.latitude)
        args.setdefault("longitude", ctx.site.longitude)
        res = orifice_discharge(**args)
        H = np.full(n, np.nan)
        H[keep] = np.broadcast_to(res.heat_power.to("W").magnitude, (int(keep.sum()),))
        m = np.full(n, np.nan)
        m[keep] = np.broadcast_to(res.mass_flux.to("kg/s").magnitude, (int(keep.sum()),))
        nom = orifice_discharge(**{**exact, "velocity_kind": spec["velocity_kind"],
                                   "ambient_salinity": float(np.mean(salinity)),
                                   **({"profile_factor": as_float(exact["profile_factor"])}
                                      if "profile_factor" in exact else {})})
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
                     "unphysical_draws": int(n - keep.sum())})
    temps = [nominal_of(s["temperature"]).to("K").magnitude for s in specs]
    return MethodEstimate(heat_power=Q_(total, "W"), nominal_heat_power=Q_(nominal_total, "W"),
                          exit_temperature=Q_(max(temps), "K"), mass_flux=Q_(mass, "kg/s"), rows=rows)


def _apply_calibration(spec, drawn, exact, vent, i, draws):
    """Apply a temperature offset and size/velocity factors (drawn like any input) to the draws."""
    off = spec.get("temperature_offset")
    if off is not None:
        d = resolve(off, f"{vent}/orifice[{i}]/temperature_offset", draws).to("K").magnitude
        T = drawn.get("temperature", exact["temperature"]).to("K").magnitude
        drawn["temperature"] = Q_(T + d, "K") if np.ndim(T + d) == 1 else Q_(np.full(draws.n_draws, T + d), "K")
    for key, targets in (("size_factor", ("diameter", "minor_diameter", "area")), ("velocity_factor", ("velocity",))):
        fac = spec.get(key)
        if fac is None:
            continue
        k = as_float(resolve(fac, f"{vent}/orifice[{i}]/{key}", draws))
        for t in targets:
            if t not in exact:
                continue
            power = 2 if t == "area" else 1
            base = drawn.get(t, exact[t])
            drawn[t] = base * np.broadcast_to(k, (draws.n_draws,)) ** power


def nom_value(q, unit):
    return float(q.to(unit).magnitude)


ORIFICE = SurveyMethod(key="orifice", many=True,
                       summary="exit temperature, velocity and size of each orifice (IAPWS-95 enthalpy difference)",
                       parse=_parse_orifice, estimate=_estimate_orifices)


# ---- diffuse patches -------------------------------------------------------------
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
    try:
        if patches is not None:
            spec["table"] = read_patch_table(patches, polygons)
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


def _per_patch(draws, names, mean, sd, key):
    """Per-patch draws (n_patches, n): normal where an sd column is given, else exact."""
    if sd is None:
        return Q_(np.repeat(mean.magnitude[:, None], draws.n_draws, axis=1), mean.units)
    from ..uncertainty import Uncertain

    values = [Uncertain("normal", float(m), float(s), str(mean.units)) for m, s in
              zip(mean.magnitude, sd.to(mean.units).magnitude)]
    return draws.draw_each([f"diffuse/{n}/{key}" for n in names], values, str(mean.units))


def _estimate_diffuse(spec, ctx):
    from ..diffuse import clip_to_physical_range, diffuse_discharge, scale_up_by_area_class

    t = spec["table"]
    d = ctx.draws
    names = list(t.names)
    area = _per_patch(d, names, t.area, t.area_sd, "area")
    frac = _per_patch(d, names, Q_(t.active_fraction, "dimensionless"),
                      None if t.active_fraction_sd is None else Q_(t.active_fraction_sd, "dimensionless"),
                      "active_fraction")
    dT = _per_patch(d, names, t.temperature_anomaly, t.temperature_anomaly_sd, "temperature_anomaly")
    if t.velocity is not None:
        w = _per_patch(d, names, t.velocity, t.velocity_sd, "velocity")
    else:
        w = resolve(spec["velocity"], "diffuse/velocity", d)
        w = w.reshape(1, -1) if np.ndim(w.magnitude) == 1 else w
    clipped = clip_to_physical_range({"area": area, "active_fraction": frac.magnitude, "temperature_anomaly": dT,
                           "velocity": w})
    Ta = ctx.ambient_temperature
    Ta = Ta.reshape(1, -1) if np.ndim(Ta.magnitude) == 1 else Ta
    S = ctx.ambient_salinity
    S = np.reshape(S, (1, -1)) if np.ndim(S) == 1 else S
    res = diffuse_discharge(clipped["area"], clipped["active_fraction"], clipped["temperature_anomaly"],
                            clipped["velocity"], Ta, S, ctx.pressure, check=False, names=names)
    H = res.heat_power.to("W")
    V = res.volume_flux.to("m^3/s")
    rows = []
    for i, n in enumerate(names):
        rows.append({"patch": n, "class": t.classes[i], "area [m^2]": float(t.area[i].to("m^2").magnitude),
                     "active_fraction": float(t.active_fraction[i]),
                     "temperature_anomaly [K]": float(t.temperature_anomaly[i].to("K").magnitude),
                     "heat_power_median [kW]": float(np.median(H[i].magnitude)) / 1e3,
                     "heat_power_p05 [kW]": float(np.percentile(H[i].magnitude, 5)) / 1e3,
                     "heat_power_p95 [kW]": float(np.percentile(H[i].magnitude, 95)) / 1e3,
                     "heat_flux [W/m^2]": float(np.median(H[i].magnitude) / t.area[i].to("m^2").magnitude)})
    tables = {"diffuse_patches": rows}
    if spec["classes"] is None:
        return SectionEstimate(category=spec["category"], names=names, heat_power=H, volume_flux=V, rows=rows,
                               tables=tables)
    cnames, carea, carea_sd = spec["classes"]
    ca = _per_patch(d, list(cnames), carea, carea_sd, "mapped_area")
    ca = Q_(np.clip(ca.magnitude, 0, None), ca.units)
    up = scale_up_by_area_class(t.classes, t.area, H, V, cnames, ca, seed=d.seed)
    crow = []
    for k, c in enumerate(up.classes):
        h = up.heat_power[k].to("MW").magnitude
        crow.append({"class": c, "mapped_area [m^2]": float(carea[k].to("m^2").magnitude),
                     "sampled_patches": int(up.n_sampled[k]),
                     "heat_flux_median [W/m^2]": float(np.median(up.heat_flux_density[k].to("W/m^2").magnitude)),
                     "heat_power_median [MW]": float(np.median(h)),
                     "heat_power_p05 [MW]": float(np.percentile(h, 5)),
                     "heat_power_p95 [MW]": float(np.percentile(h, 95))})
    tables["diffuse_classes"] = crow
    return SectionEstimate(category=spec["category"], names=[f"class {c}" for c in up.classes],
                           heat_power=up.heat_power.to("W"), volume_flux=up.volume_flux.to("m^3/s"), rows=crow,
                           tables=tables,
                           notes=["Diffuse output is scaled up from the sampled patches to the mapped area "
                                  "classes; the sampled patches themselves are not added again."])


DIFFUSE = SurveySection(key="diffuse", summary="diffuse-flow patches (TEOS-10 enthalpy), scaled up to mapped areas",
                        parse=_parse_diffuse, estimate=_estimate_diffuse)

def _plume_rise():
    from .plume_method import PLUME_RISE

    return PLUME_RISE


def _field_sections():
    from .field_sections import FIELD_PLUME, RIDGE_FLANK

    return [FIELD_PLUME, RIDGE_FLANK]


METHODS = [ORIFICE, _plume_rise()]
SECTIONS = [DIFFUSE, *_field_sections()]
