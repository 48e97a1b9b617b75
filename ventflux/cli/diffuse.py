"""``ventflux diffuse``: heat and water discharge of diffuse-flow patches, with scale-up.

Examples
--------
One patch, velocity measured::

    ventflux diffuse --area "12 m^2" --active-fraction 0.4 --anomaly "3.2 ± 0.5 K" \\
        --velocity "0.8 ± 0.2 cm/s" --ambient-temperature "2.1 degC" --depth "2200 m" --json

A table of sampled patches scaled up to mapped area classes::

    ventflux diffuse --patches patches.csv --classes classes.csv \\
        --velocity "lognormal(0.5, 1.6) cm/s" --ambient-temperature "2.1 degC" --absolute-pressure "22.3 MPa"

Velocity from a velocity source installed by a plugin::

    ventflux diffuse --patches patches.csv --velocity-source NAME --source-input profile.csv \\
        --source-option conductivity="1.0 W/(m K)" --ambient-temperature "2.1 degC" --depth "2200 m"
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..diffuse import (
    diffuse_propagation,
    polygon_area,
    read_area_classes,
    read_patch_table,
    scale_up_uncertain,
)
from ..errors import InputError
from ..properties.seawater import REFERENCE_SALINITY, pressure_from_depth
from ..registry import Method, velocity_from_source
from ..uncertainty import (
    DEFAULT_DRAWS,
    SharedDraws,
    Uncertain,
    UnphysicalPolicy,
    parse_uncertain,
    summarize,
)
from ..units import Q_, parse_quantity
from .budget import add_budget, add_budget_option, print_budget
from .montecarlo import add_monte_carlo_options, monte_carlo_settings
from .output import add_output_options, print_json, print_table

#: Practical salinity used when none is given: the package-wide default
#: (``properties.seawater.REFERENCE_SALINITY``, 35). It changes the enthalpy
#: difference of a few-kelvin anomaly by well under 0.1 %.
DEFAULT_SALINITY = f"{REFERENCE_SALINITY:g}"


def configure(p):
    g = p.add_argument_group("one patch (instead of --patches)")
    g.add_argument("--area", help="patch area, e.g. '12 m^2' or '12 ± 2 m^2'")
    g.add_argument("--polygon", help="patch outline as local x,y vertices in metres: '0,0 4,0 4,3 0,3'")
    g.add_argument("--active-fraction", help="fraction of the area actively venting, 0-1 (e.g. '0.4 ± 0.1')")
    g.add_argument("--anomaly", help="mean temperature anomaly over ambient, e.g. '3.2 ± 0.5 K'")
    t = p.add_argument_group("patch table")
    t.add_argument("--patches", help="CSV: patch, class, area [m^2], active_fraction, temperature_anomaly [K], "
                                     "optional velocity [cm/s] and <column>_sd standard deviations")
    t.add_argument("--polygons", help="CSV of vertices 'patch, x [m], y [m]' giving each patch's area")
    t.add_argument("--classes", help="CSV of mapped area classes 'class, area [m^2]' (optional area_sd) "
                                     "for the scale-up")
    v = p.add_argument_group("velocity (for patches without their own)")
    v.add_argument("--velocity", help="upward velocity, e.g. '0.8 ± 0.2 cm/s' or 'lognormal(0.5, 1.6) cm/s'")
    v.add_argument("--velocity-source", help="name of an installed velocity source (see 'ventflux methods')")
    v.add_argument("--source-input", help="input file passed to the velocity source")
    v.add_argument("--source-option", action="append", default=[], metavar="KEY=VALUE",
                   help="option passed to the velocity source (repeatable)")
    a = p.add_argument_group("ambient seawater")
    a.add_argument("--ambient-temperature", required=True, help="in-situ ambient temperature, e.g. '2.1 degC'")
    a.add_argument("--ambient-salinity", default=DEFAULT_SALINITY,
                   help=f"ambient practical salinity (default {DEFAULT_SALINITY}, TEOS-10 standard seawater)")
    a.add_argument("--absolute-pressure", help="absolute in-situ pressure (sea pressure plus one atmosphere), "
                                               "e.g. '22.3 MPa'")
    a.add_argument("--depth", help="depth below the sea surface, e.g. '2200 m' (instead of --absolute-pressure)")
    a.add_argument("--latitude", type=float, help="latitude in degrees north, for --depth")
    m = p.add_argument_group("Monte Carlo (draws are named as in a survey's [diffuse] section: the same seed "
                             "gives the same draws)")
    add_monte_carlo_options(m, DEFAULT_DRAWS)
    add_budget_option(m)
    add_output_options(p)


def _pressure(args):
    if (args.absolute_pressure is None) == (args.depth is None):
        raise InputError("--absolute-pressure/--depth", "both" if args.absolute_pressure else "neither",
                         "exactly one of --absolute-pressure or --depth")
    if args.absolute_pressure is not None:
        return parse_quantity(args.absolute_pressure, "pressure", "--absolute-pressure")
    if args.latitude is not None and not -90 <= args.latitude <= 90:
        raise InputError("--latitude", f"{args.latitude:g}", "degrees between -90 and 90")
    return pressure_from_depth(parse_quantity(args.depth, "length", "--depth", "m"), args.latitude)


def _polygon(text):
    try:
        pts = [tuple(float(c) for c in pair.split(",")) for pair in text.split()]
    except ValueError:
        raise InputError("--polygon", text, "vertices 'x,y x,y x,y ...' in metres") from None
    if any(len(pt) != 2 for pt in pts):
        raise InputError("--polygon", text, "vertices 'x,y x,y x,y ...' in metres")
    xy = np.array(pts)
    return polygon_area(Q_(xy[:, 0], "m"), Q_(xy[:, 1], "m"))


def _source_velocity(args):
    options = {}
    for item in args.source_option:
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            raise InputError("--source-option", item, "KEY=VALUE")
        options[key.strip().replace("-", "_")] = value.strip()
    positional = () if args.source_input is None else (args.source_input,)
    return velocity_from_source(args.velocity_source, *positional, **options)


def _shared_velocity(args, needed):
    if args.velocity_source is None and (args.source_input is not None or args.source_option):
        raise InputError("--source-input/--source-option", args.source_input or args.source_option[0],
                         "options only together with --velocity-source")
    if args.velocity is not None and args.velocity_source is not None:
        raise InputError("--velocity", args.velocity, "either --velocity or --velocity-source, not both")
    if args.velocity_source is not None:
        return _source_velocity(args)
    if args.velocity is not None:
        return parse_uncertain(args.velocity, "velocity", "--velocity")
    if needed:
        raise InputError("--velocity", "(missing)", "a velocity (--velocity or --velocity-source), or a "
                         "velocity column in the patch table")
    return None


def _single_patch(args):
    if (args.area is None) == (args.polygon is None):
        raise InputError("--area/--polygon", "both" if args.area else "neither", "exactly one of --area or --polygon")
    for name in ("active_fraction", "anomaly"):
        if getattr(args, name) is None:
            raise InputError(f"--{name.replace('_', '-')}", "(missing)", "a value for the single patch "
                             "(or give --patches)")
    area = parse_uncertain(args.area, "area", "--area") if args.area else _polygon(args.polygon)
    frac = parse_uncertain(args.active_fraction, "dimensionless", "--active-fraction")
    dT = parse_uncertain(args.anomaly, "temperature", "--anomaly")
    return {"names": ("patch",), "classes": ("",),
            "area": _per_patch(area), "active_fraction": _per_patch(frac),
            "temperature_anomaly": _per_patch(dT), "velocity": _per_patch(_shared_velocity(args, True))}


def _per_patch(x):
    """A single patch's input as a length-1 array (or a shared Uncertain, which broadcasts)."""
    if isinstance(x, Uncertain):
        return x
    return Q_(np.atleast_1d(x.magnitude), x.units)


def _table_patches(args):
    pt = read_patch_table(args.patches, polygons=args.polygons)

    def with_sd(mean, sd):
        return mean if sd is None else (mean, sd)

    if pt.velocity is not None:
        if args.velocity is not None or args.velocity_source is not None:
            raise InputError("--velocity", args.velocity or args.velocity_source,
                             "no shared velocity when the patch table has a velocity column")
        velocity = with_sd(pt.velocity, pt.velocity_sd)
    else:
        velocity = _shared_velocity(args, True)
    frac = Q_(pt.active_fraction, "dimensionless")
    frac_sd = None if pt.active_fraction_sd is None else Q_(pt.active_fraction_sd, "dimensionless")
    return {"names": pt.names, "classes": pt.classes, "area": with_sd(pt.area, pt.area_sd),
            "active_fraction": with_sd(frac, frac_sd),
            "temperature_anomaly": with_sd(pt.temperature_anomaly, pt.temperature_anomaly_sd),
            "velocity": velocity}


def _summary(q, unit, name, seed):
    return summarize(q.to(unit), seed).as_dict(name, unit)


#: Library input names and the options that give them, for one-line errors.
_FLAGS = {"area": "--area", "active_fraction": "--active-fraction", "temperature_anomaly": "--anomaly",
          "velocity": "--velocity", "ambient temperature": "--ambient-temperature",
          "ambient salinity": "--ambient-salinity", "ambient_temperature": "--ambient-temperature",
          "ambient_salinity": "--ambient-salinity"}


def run(args) -> int:
    try:
        return _run(args)
    except InputError as err:  # a drawn input is named by its stream (diffuse/velocity): name the option
        key = err.field.rsplit("/", 1)[-1]
        if err.field.startswith(("diffuse/", "site/")) and key in _FLAGS and not args.patches:
            raise InputError(_FLAGS[key], err.value, err.allowed, where=err.where) from None
        raise


def _run(args) -> int:
    mc = monte_carlo_settings(args)
    if args.patches is None and args.polygons is not None:
        raise InputError("--polygons", args.polygons, "a polygon file together with --patches")
    p = _pressure(args)
    ambient = parse_uncertain(args.ambient_temperature, "temperature", "--ambient-temperature")
    salinity = parse_uncertain(args.ambient_salinity, "dimensionless", "--ambient-salinity")
    if args.patches is not None:
        if any(getattr(args, k) is not None for k in ("area", "polygon", "active_fraction", "anomaly")):
            raise InputError("--patches", args.patches, "either --patches or the single-patch options, not both")
        inputs = _table_patches(args)
    else:
        inputs = _single_patch(args)
    names, classes = inputs["names"], inputs["classes"]
    assert mc.draws is not None  # --draws defaults to DEFAULT_DRAWS for this command
    shared = SharedDraws(mc.draws, mc.seed)
    policy = UnphysicalPolicy(mc.max_unphysical)
    prop = diffuse_propagation(
        inputs["area"], inputs["active_fraction"], inputs["temperature_anomaly"], inputs["velocity"],
        ambient, salinity, p, draws=shared, names=names if args.patches else None, max_unphysical=policy)
    nom, dr = prop.nominal, prop.draws
    patches = []
    for i, name in enumerate(names):
        row = {"patch": name, "class": classes[i] or None,
               "effective_area_m2": float(nom.effective_area.to("m^2").magnitude[i]),
               "heat_power_W": float(nom.heat_power.to("W").magnitude[i]),
               "heat_power_constant_cp_W": float(nom.heat_power_cp_shortcut.to("W").magnitude[i]),
               "volume_flux_m3_s": float(nom.volume_flux.to("m^3/s").magnitude[i]),
               "seawater_model": str(nom.heat_model[i])}
        row.update(_summary(dr.heat_power[i], "W", "heat_power", mc.seed))
        patches.append(row)
    out = {"method": "diffuse", "draws": mc.draws, "seed": mc.seed, "unphysical_draws": prop.unphysical,
           "max_unphysical_share": mc.max_unphysical,
           "absolute_pressure_Pa": float(p.to("Pa").magnitude),
           "velocity": str(inputs["velocity"]) if not isinstance(inputs["velocity"], tuple) else "per patch",
           "heat_power_W": float(nom.total_heat_power.to("W").magnitude),
           "heat_power_constant_cp_W": float(nom.total_heat_power_cp_shortcut.to("W").magnitude),
           "seawater_models": sorted({str(m) for m in np.ravel(nom.heat_model)}),
           "volume_flux_m3_s": float(nom.total_volume_flux.to("m^3/s").magnitude),
           **_summary(dr.total_heat_power, "W", "heat_power", mc.seed),
           **_summary(dr.total_volume_flux, "m^3/s", "volume_flux", mc.seed),
           "patches": patches}
    if args.classes is not None:
        out["scale_up"] = _scale_up(args, inputs, prop, shared, policy)
    budget = _budget(args, out, inputs, ambient, salinity, p)
    if args.json:
        print_json(out)
        return 0
    rows = [("sampled patches", len(names), ""),
            (f"heat power (enthalpy, {'; '.join(out['seawater_models'])})", out["heat_power_W"] / 1e6, "MW"),
            ("  5th-95th percentile", f"{out['heat_power_W_p05'] / 1e6:.4g} – {out['heat_power_W_p95'] / 1e6:.4g}",
             "MW"),
            ("heat power (c_p0·ΔT shortcut, TEOS-10 c_p0)", out["heat_power_constant_cp_W"] / 1e6, "MW"),
            ("volume flux", out["volume_flux_m3_s"], "m^3/s"),
            ("  5th-95th percentile", f"{out['volume_flux_m3_s_p05']:.4g} – {out['volume_flux_m3_s_p95']:.4g}",
             "m^3/s")]
    print_table(rows, title=f"diffuse discharge ({mc.draws} draws, seed {mc.seed}, {prop.unphysical} dropped as "
                            f"physically impossible, limit {mc.max_unphysical:.1%})")
    if "scale_up" in out:
        su = out["scale_up"]
        def mw(d):
            return (f"{d['heat_power_W_median'] / 1e6:.4g} [{d['heat_power_W_p05'] / 1e6:.3g}, "
                    f"{d['heat_power_W_p95'] / 1e6:.3g}]")

        rows = [(f"{c['class']} ({c['n_sampled']} sampled, {c['mapped_area_m2']:.4g} m^2)", mw(c), "MW")
                for c in su["classes"]]
        rows.append(("field total", mw(su), "MW"))
        print_table(rows, title="scaled up to mapped area classes (median [5th, 95th percentile])")
    print_budget(budget)
    return 0


def _budget(args, out, inputs, ambient, salinity, pressure):
    """``--budget`` of one patch's heat power: its uncertain options through ``diffuse_discharge``.

    A patch table's inputs are drawn per patch (many independent inputs); their budget is the survey's
    (``ventflux survey``, ``[diffuse]``), so here it is refused rather than given for the shared inputs only.
    """
    if not getattr(args, "budget", None):
        return []
    if args.patches is not None:
        raise InputError("--budget", args.budget, "a single patch (--area or --polygon); the budget of a patch "
                         "table is the survey's ([diffuse] in 'ventflux survey')")
    from ..diffuse import diffuse_discharge, diffuse_physical, temperature_difference

    given = {"area": inputs["area"], "active_fraction": inputs["active_fraction"],
             "temperature_anomaly": inputs["temperature_anomaly"], "velocity": inputs["velocity"],
             "ambient_temperature": ambient, "ambient_salinity": salinity}
    given = {k: (Q_(float(np.ravel(v.magnitude)[0]), v.units) if isinstance(v, Q_) and np.size(v.magnitude) == 1
                 else v) for k, v in given.items()}

    def estimator(**a):  # one patch: a patch axis of length one, the draws along the second
        one: dict[str, Any] = {k: (Q_(np.reshape(a[k].magnitude, (1, -1)), a[k].units)) for k in PATCH}
        one["temperature_anomaly"] = temperature_difference(one["temperature_anomaly"])
        one["active_fraction"] = one["active_fraction"].to("dimensionless").magnitude
        res = diffuse_discharge(**one, ambient_temperature=a["ambient_temperature"],
                                ambient_salinity=_salinity(a["ambient_salinity"]), pressure=pressure, check=False)
        return _Total(res.total_heat_power)

    def valid(sampled, exact, m):
        patch = {k: np.broadcast_to(np.asarray(_magnitude({**exact, **sampled}[k]), float), (m,)) for k in PATCH}
        patch["temperature_anomaly"] = np.broadcast_to(
            temperature_difference({**exact, **sampled}["temperature_anomaly"]).magnitude, (m,))
        return np.asarray(diffuse_physical(patch), bool)

    return add_budget(args, out, estimator, given, valid, labels=_FLAGS)


#: The inputs of a patch (``ventflux.diffuse.PATCH_INPUTS``).
PATCH = ("area", "active_fraction", "temperature_anomaly", "velocity")


class _Total:
    """The field's heat power as the attribute the budget reads."""

    def __init__(self, heat_power):
        self.heat_power = heat_power


def _magnitude(x):
    return x.magnitude if hasattr(x, "magnitude") else x


def _salinity(s):
    return s.to("dimensionless").magnitude if hasattr(s, "to") else s


def _scale_up(args, inputs, prop, shared, policy):
    names, area, area_sd = read_area_classes(args.classes)
    sp = scale_up_uncertain(prop, inputs["classes"], names, area, area_sd, draws=shared, max_unphysical=policy)
    su, seed = sp.scale_up, shared.seed
    classes = []
    for k, name in enumerate(su.classes):
        row = {"class": name, "n_sampled": int(su.n_sampled[k]), "mapped_area_m2": float(area.magnitude[k])}
        row.update(_summary(su.heat_flux_density[k], "W/m^2", "heat_flux", seed))
        row.update(_summary(su.heat_power[k], "W", "heat_power", seed))
        row.update(_summary(su.volume_flux[k], "m^3/s", "volume_flux", seed))
        classes.append(row)
    return {"classes": classes, **_summary(su.total_heat_power, "W", "heat_power", seed),
            **_summary(su.total_volume_flux, "m^3/s", "volume_flux", seed), "unphysical_draws": sp.unphysical,
            "note": "class heat flux per unit area = ΣH/ΣA of its sampled patches, bootstrapped over patches"}


METHODS = [
    Method(
        name="diffuse",
        summary="diffuse-flow heat balance: ρ·w·A_eff·Δh over patches, Monte Carlo, scale-up to mapped classes",
        estimates="heat power, volume flux",
        inputs=("patch area or polygon", "active fraction", "temperature anomaly", "upward velocity",
                "ambient temperature", "ambient salinity", "absolute pressure or depth"),
        command="diffuse",
    )
]
