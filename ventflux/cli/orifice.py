"""``ventflux orifice``: heat, mass and volume discharge of one vent orifice."""

from __future__ import annotations

import sys

from ..errors import Collector, InputError
from ..orifice import DEFAULT_AMBIENT_SALINITY
from ..registry import Method
from ..uncertainty import DEFAULT_DRAWS, Uncertain, parse_uncertain
from .budget import add_budget, add_budget_option, print_budget
from .montecarlo import add_monte_carlo_options, monte_carlo_settings
from .output import add_output_options, print_json

#: Vent name of a single orifice given on the command line (keys its random streams).
DEFAULT_VENT_NAME = "vent"

# (attribute, unit shown, label) of the readable table.
_SHOWN = (
    ("heat_power", "MW", "heat power (enthalpy difference)"),
    ("heat_power_constant_cp", "MW", "heat power, constant-cp shortcut"),
    ("shortcut_difference", "percent", "shortcut minus enthalpy result"),
    ("mass_flux", "kg/s", "mass flux"),
    ("volume_flux_exit", "L/s", "volume flux at exit conditions"),
    ("volume_flux_ambient", "L/s", "volume flux at ambient conditions"),
    ("specific_heat_content", "kJ/kg", "enthalpy above ambient"),
    ("exit_density", "kg/m^3", "exit density (IAPWS-95)"),
    ("ambient_density", "kg/m^3", "ambient density (TEOS-10)"),
    ("mean_velocity", "m/s", "area-mean exit velocity"),
    ("area", "cm^2", "orifice area"),
    ("pressure", "MPa", "absolute in-situ pressure"),
)

_UNC = "; accepts '± sd', 'uniform(lo, hi) unit' or 'lognormal(median, factor) unit'"


def configure(p):
    g = p.add_argument_group("orifice measurements")
    g.add_argument("--exit-temperature", required=True, metavar="Q",
                   help="exit temperature of the vent fluid, e.g. '352 degC'" + _UNC)
    vel = g.add_mutually_exclusive_group(required=True)
    vel.add_argument("--velocity", metavar="Q",
                     help="exit velocity, e.g. '1.4 m/s' (area-mean unless --velocity-kind centerline)" + _UNC)
    vel.add_argument("--velocity-source", metavar="NAME",
                     help="take the exit velocity from an installed velocity source (see 'ventflux methods')")
    g.add_argument("--source-option", action="append", default=[], metavar="KEY=VALUE",
                   help="an option for --velocity-source (repeatable), e.g. clip=jet.mp4")
    size = g.add_mutually_exclusive_group(required=True)
    size.add_argument("--diameter", metavar="Q", help="orifice diameter (major axis if elliptical), e.g. '12 cm'")
    size.add_argument("--area", metavar="Q", help="orifice area, e.g. '0.011 m^2'")
    g.add_argument("--minor-diameter", metavar="Q", help="minor axis of an elliptical orifice")
    g.add_argument("--velocity-kind", choices=("area-mean", "centerline"), default="area-mean",
                   help="what the velocity is: the area mean (default) or the centreline value")
    g.add_argument("--profile-factor", type=float, default=None, metavar="X",
                   help="mean/centreline velocity ratio for --velocity-kind centerline (default 49/60, "
                        "1/7-power-law turbulent profile)")
    a = p.add_argument_group("site and ambient seawater")
    where = a.add_mutually_exclusive_group(required=True)
    where.add_argument("--absolute-pressure", metavar="Q",
                       help="absolute in-situ pressure (sea pressure plus one atmosphere), e.g. '26 MPa'")
    where.add_argument("--depth", metavar="Q", help="depth below the sea surface, e.g. '2550 m' (TEOS-10 p_from_z)")
    a.add_argument("--latitude", type=float, default=None, metavar="DEG",
                   help="latitude in degrees north (for --depth)")
    a.add_argument("--ambient-temperature", required=True, metavar="Q",
                   help="in-situ ambient temperature, e.g. '2.1 degC'")
    a.add_argument("--ambient-salinity", default=f"{DEFAULT_AMBIENT_SALINITY:g}", metavar="S",
                   help=f"practical salinity (default {DEFAULT_AMBIENT_SALINITY:g}, TEOS-10 standard seawater)")
    m = p.add_argument_group("model and uncertainty")
    m.add_argument("--fluid", default="iapws95-water", help="vent-fluid model (see 'ventflux methods')")
    m.add_argument("--name", default=DEFAULT_VENT_NAME, metavar="NAME",
                   help="the vent's name: labels the result and keys its random streams, so the draws equal "
                        "those of the first orifice of a survey vent of that name with the same seed "
                        f"(default '{DEFAULT_VENT_NAME}')")
    add_monte_carlo_options(m, draws_default=None)
    add_budget_option(m)
    add_output_options(p)


def _inputs(args):
    errs = Collector()
    vals = {}
    dims = {"temperature": "temperature", "velocity": "velocity", "diameter": "length", "area": "area",
            "minor_diameter": "length", "pressure": "pressure", "depth": "length",
            "ambient_temperature": "temperature", "ambient_salinity": "dimensionless"}
    for key, dim in dims.items():
        flag = _FLAGS[key]
        text = getattr(args, flag[2:].replace("-", "_"))
        if text is None:
            continue
        with errs.check():
            vals[key] = parse_uncertain(text, dim, flag)
    if args.velocity_source is not None:
        with errs.check():
            vals["velocity"] = _velocity_from_source(args.velocity_source, args.source_option)
    if args.minor_diameter is not None and args.diameter is None:
        errs.add(InputError("--minor-diameter", args.minor_diameter, "a minor diameter only together with --diameter"))
    with errs.check():
        vals["monte_carlo"] = monte_carlo_settings(args)
    errs.raise_if_any()
    if "ambient_salinity" in vals and not isinstance(vals["ambient_salinity"], Uncertain):
        vals["ambient_salinity"] = float(vals["ambient_salinity"].to("dimensionless").magnitude)
    if args.latitude is not None:
        vals["latitude"] = args.latitude
    vals["velocity_kind"] = args.velocity_kind
    if args.profile_factor is not None:
        vals["profile_factor"] = args.profile_factor
    from ..registry import fluid_model

    try:
        vals["fluid"] = fluid_model(args.fluid)  # estimators take the model object, not its name
    except InputError as err:
        raise InputError("--fluid", args.fluid, err.allowed) from None
    return vals


def _velocity_from_source(name, options):
    """Exit velocity from a registered velocity source that feeds the orifice estimator."""
    from ..registry import velocity_source
    from ..uncertainty import Uncertain, normal

    src = velocity_source(name)
    if "orifice" not in src.feeds:
        raise InputError("--velocity-source", name, "a velocity source that feeds the orifice estimator")
    kwargs = {}
    for opt in options:
        key, sep, value = opt.partition("=")
        if not sep or not key.strip():
            raise InputError("--source-option", opt, "KEY=VALUE")
        kwargs[key.strip().replace("-", "_")] = value.strip()
    out = src.estimate(**kwargs)
    if isinstance(out, Uncertain):
        return out
    if isinstance(out, tuple):
        v, sd = out
        return v if sd is None else normal(v.to("m/s"), sd.to("m/s"))
    return out


def run(args) -> int:
    try:
        return _run(args)
    except InputError as err:  # name the command-line option rather than the library argument
        flag = _FLAGS.get(err.field.rsplit("/", 1)[-1].replace(" ", "_").replace("-", "_"))
        if err.where is None and flag is not None:
            raise InputError(flag, err.value, err.allowed) from None
        raise


#: The estimator's keyword → the option that gives it (``ventflux.vocabulary``'s names).
_FLAGS = {"temperature": "--exit-temperature", "velocity": "--velocity", "diameter": "--diameter", "area": "--area",
          "minor_diameter": "--minor-diameter", "pressure": "--absolute-pressure", "depth": "--depth",
          "ambient_temperature": "--ambient-temperature", "ambient_salinity": "--ambient-salinity",
          "profile_factor": "--profile-factor", "velocity_kind": "--velocity-kind"}


def _run(args) -> int:
    from ..orifice import (
        orifice_discharge,
        orifice_discharge_uncertain,
        orifice_input_names,
        physical_draws,
    )

    vals = _inputs(args)
    mc = vals.pop("monte_carlo")
    uncertain = any(isinstance(v, Uncertain) for v in vals.values())
    draws = mc.draws if mc.draws is not None else (DEFAULT_DRAWS if uncertain else None)
    rejected = 0
    if draws:
        res = orifice_discharge_uncertain(draws=draws, seed=mc.seed, names=orifice_input_names(args.name, 0),
                                          max_unphysical=mc.max_unphysical, **vals)
        result, summaries, rejected = res.nominal, res.summaries, res.rejected
        payload = res.as_dict()
    else:
        result, summaries = orifice_discharge(**vals), {}
        payload = result.as_dict()
    payload["vent"] = args.name
    payload["fluid_model"] = args.fluid
    budget = add_budget(args, payload, orifice_discharge, vals, physical_draws, labels=_FLAGS)  # --budget
    if args.json:
        print_json(payload)
        return 0
    _print_readable(result, summaries, draws, mc.seed, rejected=rejected, limit=mc.max_unphysical)
    print_budget(budget)
    return 0


def _print_readable(result, summaries, draws, seed, out=None, rejected=0, limit=0.05):
    out = out or sys.stdout
    head = ["quantity", "value", "unit"] + (["median", "5 %", "95 %"] if summaries else [])
    rows = []
    for attr, unit, label in _SHOWN:
        q = getattr(result, attr).to(unit)
        row = [label, f"{q.magnitude:.4g}", "%" if unit == "percent" else unit]  # units as the vocabulary writes them
        if summaries:
            s = summaries.get(attr)
            row += [f"{getattr(s, k).to(unit).magnitude:.4g}" if s else "" for k in ("median", "p05", "p95")]
        rows.append(row)
    widths = [max(len(r[i]) for r in rows + [head]) for i in range(len(head))]
    fmt = "  ".join(f"{{:<{w}}}" if i in (0, 2) else f"{{:>{w}}}" for i, w in enumerate(widths))
    out.write("Vent orifice discharge (vent fluid: pure water, IAPWS-95; ambient: TEOS-10)\n")
    out.write(fmt.format(*head) + "\n")
    for r in rows:
        out.write(fmt.format(*r) + "\n")
    if summaries:
        out.write(f"Monte Carlo: {draws} draws, seed {seed}, {rejected} dropped as physically impossible "
                  f"(limit {limit:.1%}); value column is the nominal estimate.\n")


METHODS = [Method(name="orifice", summary="exit temperature, velocity and orifice size → heat power with "
                                          "IAPWS-95 enthalpy difference; constant-cp shortcut beside it",
                  estimates="heat power, mass flux, volume flux",
                  inputs=("exit temperature", "exit velocity", "orifice size", "absolute pressure or depth",
                          "ambient temperature", "ambient salinity"),
                  command="ventflux orifice")]
