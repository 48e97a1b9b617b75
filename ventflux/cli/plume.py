"""``ventflux plume-rise``: heat power from a plume's rise height in a stratification, or the reverse."""

from __future__ import annotations

import sys

import numpy as np

from ..errors import Collector, InputError
from ..registry import Method
from ..uncertainty import DEFAULT_DRAWS, Uncertain, nominal, parse_uncertain
from ..units import Q_, column_name, parse_quantity
from .budget import add_budget, add_budget_option, print_budget
from .montecarlo import add_monte_carlo_options, monte_carlo_settings
from .output import add_output_options, print_json, write_output

_UNC = "; accepts '± sd', 'uniform(lo, hi) unit' or 'lognormal(median, factor) unit'"

# Library field names → command-line options, so messages name what the user typed.
_FLAGS = {"rise height": "--rise-height", "heat power": "--heat-power", "buoyancy frequency": "--buoyancy-frequency",
          "ambient temperature": "--ambient-temperature", "ambient salinity": "--ambient-salinity",
          "pressure": "--absolute-pressure", "depth": "--depth", "vent depth": "--depth",
          "entrainment": "--entrainment",
          "current": "--current", "current speed": "--current-profile", "current depth": "--current-profile",
          "method": "--method", "level": "--level", "window": "--window",
          "latitude": "--latitude", "longitude": "--longitude", "draws": "--draws",
          "stratification scale": "--stratification-scale", "height": "--rise-height"}


def configure(p):
    d = p.add_argument_group("what is known (give one)")
    which = d.add_mutually_exclusive_group(required=True)
    which.add_argument("--rise-height", metavar="Q", help="observed rise above the vent, e.g. '250 m'" + _UNC)
    which.add_argument("--heat-power", metavar="Q", help="heat power of the source, e.g. '100 MW' (forward)" + _UNC)
    which.add_argument("--exit-temperature", metavar="Q",
                       help="forward, forced plume from one orifice: exit temperature, e.g. '350 degC' (with "
                            "--exit-velocity and --diameter; the vent fluid's density and heat from IAPWS-95)")
    d.add_argument("--exit-velocity", metavar="Q", help="area-mean exit velocity of the orifice, e.g. '1.2 m/s'")
    d.add_argument("--diameter", metavar="Q", help="orifice diameter, e.g. '8 cm'")
    d.add_argument("--level", default="maximum", metavar="LEVEL",
                   help="which height --rise-height is: 'maximum' (top of the plume, default) or 'spreading' "
                        "(neutral-buoyancy level)")
    s = p.add_argument_group("stratification (give one)")
    strat = s.add_mutually_exclusive_group(required=True)
    strat.add_argument("--buoyancy-frequency", metavar="Q", help="constant N, e.g. '1.0e-3/s'" + _UNC)
    strat.add_argument("--ctd", metavar="CSV", help="CTD cast: 'depth [m]' or 'pressure [dbar]' (sea pressure), "
                                                   "'temperature [degC]', 'salinity' (practical)")
    s.add_argument("--window", default="5 m", metavar="Q", help="CTD bin width (default '5 m'; 'none' keeps every row)")
    s.add_argument("--ctd-profile", metavar="CAST", default=None,
                   help="with a netCDF --ctd of several casts (CF profiles): the cast to read, by position (0 first) "
                        "or by its profile_id")
    s.add_argument("--stratification-scale", default=None, metavar="X",
                   help="factor on N² (e.g. '1 ± 0.1' for a 10 %% uncertainty of the profile's N²)")
    a = p.add_argument_group("vent site and ambient seawater")
    where = a.add_mutually_exclusive_group()
    where.add_argument("--absolute-pressure", metavar="Q",
                       help="absolute pressure at the vent (sea pressure plus one atmosphere), e.g. '25MPa'")
    where.add_argument("--depth", metavar="Q", help="vent depth, e.g. '2500 m' (default with --ctd: the cast's "
                                                     "deepest point)")
    a.add_argument("--ambient-temperature", metavar="Q", help="in-situ temperature at the vent (with "
                                                              "--buoyancy-frequency), e.g. '2.0degC'")
    a.add_argument("--ambient-salinity", metavar="S", help="practical salinity at the vent (with "
                                                           "--buoyancy-frequency), e.g. '34.6'")
    a.add_argument("--latitude", type=float, default=None, metavar="DEG", help="latitude in degrees north")
    a.add_argument("--longitude", type=float, default=None, metavar="DEG", help="longitude in degrees east")
    m = p.add_argument_group("model and uncertainty")
    m.add_argument("--method", default="integral", metavar="METHOD",
                   help="'integral' (TEOS-10 integral plume model, default) or 'closed-form' (point-source formula)")
    m.add_argument("--entrainment", default=None, metavar="X",
                   help="top-hat entrainment coefficient (default √2 × 0.093 ≈ 0.1315, the library's and the "
                        "survey's: ventflux.plume.DEFAULT_ENTRAINMENT)" + _UNC)
    cur = m.add_mutually_exclusive_group()
    cur.add_argument("--current", default=None, metavar="Q", help="horizontal current speed, e.g. '0.05 m/s'" + _UNC)
    cur.add_argument("--current-profile", default=None, metavar="CSV",
                     help="current varying with depth: CSV with 'depth [m]' and 'speed [m/s]' columns")
    m.add_argument("--name", default="vent", metavar="NAME",
                   help="the vent's name: keys its random streams, so the draws equal those of a survey's "
                        "[vent.plume_rise] of a vent of that name with the same seed (default 'vent')")
    add_monte_carlo_options(m, draws_default=None)
    add_budget_option(m)
    o = p.add_argument_group("extra outputs")
    o.add_argument("--figure", metavar="PNG", help="write a figure of the plume's profiles beside the stratification")
    o.add_argument("--profile-table", metavar="CSV", help="write radius, speed and volume flux along the plume")
    add_output_options(p)


def run(args) -> int:
    try:
        return _run(args)
    except InputError as err:  # a drawn input is named by its stream (vent/plume_rise/height): name the option
        flag = _FLAGS.get(err.field) or _FLAGS.get(err.field.rsplit("/", 1)[-1].replace("_", " "))
        if err.where is None and flag is not None:
            raise InputError(flag, err.value, err.allowed) from None
        raise


def _inputs(args):
    errs = Collector()
    vals = {}
    if args.entrainment is None:
        # the one default, with its source; imported here so that start-up stays light
        from ..plume import DEFAULT_ENTRAINMENT

        args.entrainment = repr(float(DEFAULT_ENTRAINMENT))
    spec = [("rise_height", "length"), ("heat_power", "power"), ("exit_temperature", "temperature"),
            ("exit_velocity", "velocity"), ("diameter", "length"), ("buoyancy_frequency", "frequency"),
            ("ambient_temperature", "temperature"), ("ambient_salinity", "dimensionless"),
            ("pressure", "pressure"), ("depth", "length"), ("entrainment", "dimensionless"),
            ("current", "velocity"), ("stratification_scale", "dimensionless")]
    for key, dim in spec:
        text = getattr(args, "absolute_pressure" if key == "pressure" else key)
        if text is None:
            continue
        with errs.check():
            exact_only = key in ("ambient_temperature", "ambient_salinity", "pressure", "depth", "exit_temperature",
                                 "exit_velocity", "diameter")
            flag = _FLAGS["pressure"] if key == "pressure" else "--" + key.replace("_", "-")
            vals[key] = (parse_quantity if exact_only else parse_uncertain)(text, dim, flag)
    with errs.check():
        if args.method not in ("integral", "closed-form"):
            raise InputError("--method", args.method, "one of integral, closed-form")
    with errs.check():
        if args.level not in ("maximum", "spreading"):
            raise InputError("--level", args.level, "one of maximum, spreading")
    if args.exit_temperature is not None:
        for key in ("exit_velocity", "diameter"):
            if getattr(args, key) is None:
                errs.add(InputError("--" + key.replace("_", "-"), "(none)", "a value with --exit-temperature"))
        if args.method != "integral":
            errs.add(InputError("--method", args.method, "'integral' for a forced plume from an orifice"))
    elif args.exit_velocity is not None or args.diameter is not None:
        errs.add(InputError("--exit-velocity" if args.exit_velocity else "--diameter", "given",
                            "an orifice's --exit-velocity and --diameter only with --exit-temperature"))
    with errs.check():
        vals["monte_carlo"] = monte_carlo_settings(args)
    if args.buoyancy_frequency is not None:
        for key in ("ambient_temperature", "ambient_salinity"):
            if getattr(args, key) is None:
                errs.add(InputError("--" + key.replace("_", "-"), "(none)", "a value with --buoyancy-frequency"))
        if args.absolute_pressure is None and args.depth is None:
            errs.add(InputError("--absolute-pressure", "(none)",
                                "the vent's --absolute-pressure or --depth with --buoyancy-frequency"))
    with errs.check():
        for key in ("buoyancy_frequency", "rise_height", "heat_power"):
            v = vals.get(key)
            if v is not None and not isinstance(v, Uncertain) and not v.magnitude > 0:
                raise InputError("--" + key.replace("_", "-"), getattr(args, key), "a value > 0")
    window = None
    with errs.check():
        if str(args.window).strip().lower() != "none":
            window = parse_quantity(args.window, "length", "--window")
            if not window.magnitude > 0:
                raise InputError("--window", args.window, "a bin width > 0 m, or 'none'")
    errs.raise_if_any()
    return vals, window


def _run(args) -> int:
    from ..plume import figures, inversion
    from ..plume.propagation import orifice_plume_source, plume_rise_propagation
    from ..profiles import read_ctd_cast

    vals, window = _inputs(args)
    if args.figure:
        try:
            figures.figure_format(args.figure)
        except InputError as err:
            raise InputError("--figure", err.value, err.allowed) from None
    mc = vals.pop("monte_carlo")
    uncertain = any(isinstance(v, Uncertain) for v in vals.values())
    draws = mc.draws if mc.draws is not None else (DEFAULT_DRAWS if uncertain else None)
    if args.ctd_profile is not None and args.ctd is None:
        raise InputError("--ctd-profile", args.ctd_profile, "a cast of the file given with --ctd (no --ctd given)")
    if args.ctd is not None:
        profile = args.ctd_profile
        if profile is not None and profile.strip().isdigit():
            profile = int(profile)  # a position; any other text is an identifier
        try:
            strat = read_ctd_cast(args.ctd, latitude=args.latitude, longitude=args.longitude, window=window,
                                  profile=profile)
        except InputError as err:
            if err.field != "profile":
                raise
            raise InputError("--ctd-profile", err.value, err.allowed, where=err.where) from None
        if args.ambient_temperature is not None or args.ambient_salinity is not None:
            print("ventflux plume-rise: note: the CTD cast gives the ambient at the vent; --ambient-temperature and "
                  "--ambient-salinity are not used with --ctd", file=sys.stderr)
    else:
        strat = vals["buoyancy_frequency"]
    site = dict(level=args.level, method=args.method, vent_depth=vals.get("depth"), pressure=vals.get("pressure"),
                ambient_temperature=vals.get("ambient_temperature"), ambient_salinity=vals.get("ambient_salinity"),
                latitude=args.latitude, longitude=args.longitude)
    profile = _current_profile(args.current_profile) if args.current_profile is not None else None
    source = None
    if args.exit_temperature is not None:
        source = orifice_plume_source(vals["exit_temperature"], vals["exit_velocity"], vals["diameter"], strat,
                                      **{k: v for k, v in site.items() if k not in ("level", "method")})
    if args.rise_height is not None:
        direction = "rise height to heat power"
    elif source is not None:
        direction = "orifice to rise height"
    else:
        direction = "heat power to rise height"
    track = bool(args.figure or args.profile_table)
    unphysical = None
    if draws:
        inputs = {"height": vals.get("rise_height"), "heat_power": vals.get("heat_power"),
                  "entrainment": vals.get("entrainment"), "current": vals.get("current"),
                  "stratification_scale": vals.get("stratification_scale")}
        if args.ctd is None:
            inputs["buoyancy_frequency"] = strat
        pp = plume_rise_propagation(inputs, strat if args.ctd is not None else None, draws=draws, seed=mc.seed,
                                    vent=args.name, max_unphysical=mc.max_unphysical, source=source, track=track,
                                    current_profile=profile, **site)
        res, nom, unphysical = pp.result, pp.result.nominal, pp.unphysical
    else:
        common = dict(entrainment=vals.get("entrainment"), current=profile or vals.get("current"),
                      stratification_scale=vals.get("stratification_scale"), track=track, **site)
        if args.rise_height is not None:
            res = inversion.heat_power_from_rise_height(vals["rise_height"], strat, **common)
        else:
            res = inversion.rise_height_from_heat_power(vals.get("heat_power"), strat, source=source, **common)
        nom = res
    payload = _payload(res, nom, direction, args, vals)
    if unphysical is not None:
        payload["unphysical_draws"] = unphysical  # outside an input's range or without a plume solution
        payload["max_unphysical_share"] = mc.max_unphysical
    budget = _budget(args, payload, vals, strat, site, source, profile)
    if args.figure:
        write_output("--figure", args.figure, figures.save_plume_figure, res, args.figure)
    if args.profile_table:
        write_output("--profile-table", args.profile_table, _write_track, nom, args.profile_table)
    if args.json:
        print_json(payload)
    else:
        _print_readable(payload, res)
        print_budget(budget)
    return 0


def _budget(args, payload, vals, strat, site, source, profile):
    """``--budget``: the estimate's uncertain inputs (named as the survey draws them) through the same solver.

    The estimator below only routes the drawn inputs to ``ventflux.plume.inversion`` (``predrawn``), as
    ``plume_rise_propagation`` does; the inverse's budget is of the heat power, the forward's of the rise height.
    """
    if not getattr(args, "budget", None):
        return []
    import pint

    from ..plume import inversion
    from ..plume.propagation import _physical

    inverse = args.rise_height is not None
    keys = ("rise_height", "heat_power", "entrainment", "current", "stratification_scale")
    inputs = {k: vals[k] for k in keys if vals.get(k) is not None}
    if args.ctd is None:
        inputs["buoyancy_frequency"] = strat
    if args.current_profile is not None:
        inputs.pop("current", None)

    def estimator(**a):
        m = max(np.size(v.magnitude) if isinstance(v, pint.Quantity) else 1 for v in a.values())
        a = {k: (Q_(np.broadcast_to(v.magnitude, (m,)), v.units) if isinstance(v, pint.Quantity) else v)
             for k, v in a.items()}
        stratification = a.pop("buoyancy_frequency", strat)
        kw = {k: a[k].to("dimensionless").magnitude for k in ("entrainment", "stratification_scale") if k in a}
        current = profile if profile is not None else a.get("current")
        if inverse:
            return inversion.heat_power_from_rise_height(a["rise_height"], stratification, current=current, **kw,
                                                         **site, predrawn=True)
        return inversion.rise_height_from_heat_power(a.get("heat_power"), stratification, current=current,
                                                     source=source, **kw, **site, predrawn=True)

    def valid(sampled, exact, m):
        named = {("height" if k == "rise_height" else k): v for k, v in sampled.items()}  # the survey's names
        return np.broadcast_to(_physical(named), (m,))

    labels = {k: _FLAGS.get(k.replace("_", " "), "--" + k.replace("_", "-")) for k in inputs}
    return add_budget(args, payload, estimator, inputs, valid, output="heat_power" if inverse else "rise_height",
                      unit="MW" if inverse else "m", labels=labels)



def _current_profile(path):
    from ..plume.inversion import CurrentProfile
    from ..tables import read_quantity_table

    tbl = read_quantity_table(path, columns={"depth": "length", "speed": "velocity"})
    return CurrentProfile(depth=tbl["depth"], speed=tbl["speed"])


def _val(q, unit):
    return float(np.asarray(q.to(unit).magnitude))


def _payload(res, nom, direction, args, vals):
    from ..plume.propagation import closed_form_heat_power
    from ..properties.seawater import CP0

    col = nom.column
    out = {
        "direction": direction, "method": nom.method, "level": nom.level,
        "heat_power_W": _val(nom.heat_power, "W"), "buoyancy_flux_m4_s3": _val(nom.buoyancy_flux, "m^4/s^3"),
        "rise_height_m": _val(nom.rise_height, "m"), "spreading_height_m": _val(nom.spreading_height, "m"),
        "downstream_distance_m": _val(nom.downstream_distance, "m"),
        "spreading_volume_flux_m3_s": _val(nom.spreading_volume_flux, "m^3/s"),
        "spreading_ct_excess_K": _val(nom.spreading_anomaly, "K"),
        "spreading_dilution": _val(nom.spreading_dilution, "dimensionless"),
        "vent_depth_m": col.vent_depth, "vent_sea_pressure_Pa": _val(Q_(col.p0, "dbar"), "Pa"),
        "ambient_absolute_salinity_g_kg": col.SA0, "ambient_conservative_temperature_degC": col.CT0,
        "ambient_density_kg_m3": col.rho0, "thermal_expansion_1_K": col.alpha0, "cp0_J_kg_K": CP0,
        "stratification": ("constant N" if args.ctd is None else f"CTD cast {args.ctd}"),
        "mean_buoyancy_frequency_1_s": float(col.mean_n(max(_val(nom.rise_height, "m"), 1.0))),
        "entrainment_tophat": float(nominal(vals["entrainment"]).to("dimensionless").magnitude),
    }
    if nom.method == "integral" and args.rise_height is not None:
        # The common practice beside the full computation: the point-source formula with the mean N.
        out["closed_form_heat_power_W"] = closed_form_heat_power(_val(nom.rise_height, "m"), col)
        out["closed_form_ignores_current"] = args.current is not None or args.current_profile is not None
    if res.summary:
        out["draws"] = res.draws
        out["seed"] = res.seed
        units = {"heat_power": "W", "buoyancy_flux": "m^4/s^3", "rise_height": "m", "spreading_height": "m",
                 "downstream_distance": "m"}
        for k, s in res.summary.items():
            out.update(s.as_dict(k, units[k]))
    return out


def _print_readable(p, res):
    out = sys.stdout
    out.write(f"Plume rise, {p['direction']} ({p['method']}, {p['stratification']}; densities TEOS-10)\n")
    rows = [("heat power", p["heat_power_W"] / 1e6, "MW", "heat_power", 1e-6),
            ("buoyancy flux", p["buoyancy_flux_m4_s3"], "m^4/s^3", "buoyancy_flux", 1.0),
            ("maximum rise height", p["rise_height_m"], "m", "rise_height", 1.0),
            ("spreading height", p["spreading_height_m"], "m", "spreading_height", 1.0),
            ("downstream distance of the top", p["downstream_distance_m"], "m", "downstream_distance", 1.0),
            ("volume flux at spreading level", p["spreading_volume_flux_m3_s"], "m^3/s", None, 1.0),
            ("CT excess at spreading level", p["spreading_ct_excess_K"], "K", None, 1.0),
            ("dilution at spreading level", p["spreading_dilution"], "1", None, 1.0),
            ("mean N over the rise", p["mean_buoyancy_frequency_1_s"], "1/s", None, 1.0)]
    if "closed_form_heat_power_W" in p:
        label = ("heat power, closed form (formula ignores the current)" if p.get("closed_form_ignores_current")
                 else "heat power, closed form")
        rows.insert(1, (label, p["closed_form_heat_power_W"] / 1e6, "MW", None, 1e-6))
    for label, v, unit, key, f in rows:
        line = f"  {label:<32} {_fmt(v):>10}  {unit:<6}"
        if res.summary and key in res.summary:
            s = res.summary[key]
            line += "  median {}  5–95 % {} – {}".format(*(_fmt(getattr(s, k).magnitude * f) for k in
                                                        ("median", "p05", "p95")))
        out.write(line + "\n")
    if res.summary:
        out.write(f"Monte Carlo: {p['draws']} draws, seed {p['seed']}, {p['unphysical_draws']} dropped (outside an "
                  "input's range or without a plume solution); value column is the nominal estimate.\n")


def _fmt(v):
    return "–" if v is None or not np.isfinite(v) else f"{v:.4g}"


def _write_track(res, path):
    from ..io import atomic_write_text

    t = res.track
    if t is None:
        return
    cols = [("height", "m"), ("distance", "m"), ("radius", "m"), ("velocity", "m/s"), ("volume_flux", "m^3/s"),
            ("reduced_gravity", "m/s^2")]
    lines = [",".join(column_name(k, u) for k, u in cols)]
    data = np.column_stack([t[k].to(u).magnitude for k, u in cols])
    lines += [",".join(f"{v:.6g}" for v in row) for row in data]
    atomic_write_text(path, "\n".join(lines) + "\n")


METHODS = [
    Method(name="plume-rise-integral",
           summary="rise height ↔ heat power with a top-hat integral plume model on TEOS-10 densities, "
                   "in a CTD profile or constant N, optionally bent over by a current",
           estimates="heat power, buoyancy flux, rise height",
           inputs=("rise height or heat power", "CTD cast or buoyancy frequency", "vent depth or absolute pressure",
                   "entrainment coefficient", "current"),
           command="ventflux plume-rise --method integral"),
    Method(name="plume-rise-closed-form",
           summary="rise height ↔ buoyancy flux with the point-source formula z = 5.0 (F/π)^(1/4) N^(-3/4)",
           estimates="heat power, buoyancy flux, rise height",
           inputs=("rise height or heat power", "buoyancy frequency (or the mean of a CTD cast)"),
           command="ventflux plume-rise --method closed-form"),
]
