"""``ventflux summarize``: what a vent field's heat output means, one question at a time.

Examples
--------
Water carried by a 100 MW vent at 350 °C and 25 MPa::

    ventflux summarize water --heat-power "100 ± 20 MW" --exit-temperature "350 degC" \\
        --absolute-pressure 25MPa --ambient-temperature "2 degC"

How long 10⁻² km³ of dry hot rock cooled by 800 K sustains it (and L²/κ beside it)::

    ventflux summarize reservoir --heat-power "100 MW" --volume "0.01 km^3" --temperature-drop "800 K" --porosity 0

With pore fluid (IAPWS-95 enthalpy difference at the reservoir pressure) and a melt lens::

    ventflux summarize reservoir --heat-power "100 ± 30 MW" --area "1 km^2" --thickness "50 m" \\
        --temperature-drop "uniform(250, 350) K" --temperature "420 degC" --absolute-pressure 30MPa \\
        --melt-volume "0.001 km^3"

The reservoir needed for 100 MW over 10 years under 1 km²::

    ventflux summarize size --heat-power "100 MW" --duration "10 yr" --temperature-drop "300 K" --area "1 km^2" \\
        --porosity 0

Ridge-flank heat deficit against GDH1 and the water column for a 10 K rise::

    ventflux summarize flank --observed "1 Myr=120 mW/m^2" --observed "5 Myr=110 mW/m^2" \\
        --observed "10 Myr=100 mW/m^2" --half-spreading-rate "25 mm/yr" --temperature-rise "10 K" \\
        --absolute-pressure 35MPa

Every quantity may carry an uncertainty (``"100 ± 20 MW"``, ``"uniform(600, 900) K"``,
``"lognormal(0.01, 2) km^3"``); results are then medians with 5th–95th percentiles.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from .. import reservoir as rv
from .. import summarizer as sm
from ..errors import InputError
from ..orifice import DEFAULT_AMBIENT_SALINITY
from ..registry import Method
from ..ridge_flank import DEFICIT_SPANS, REFERENCES
from ..tables import read_quantity_table
from ..uncertainty import DEFAULT_DRAWS, parse_uncertain
from ..units import Q_, parse_quantity
from .montecarlo import add_monte_carlo_options, monte_carlo_settings
from .output import add_output_options, print_json, print_table

# (option, dimension, required, default text, help) per question; the option's
# dest is the library function's parameter name.
_COMMON_WATER = [
    ("--heat-power", "power", True, None, "heat power, e.g. '100 ± 20 MW'"),
    ("--exit-temperature", "temperature", True, None, "vent exit temperature, e.g. '350 degC'"),
    ("--absolute-pressure", "pressure", True, None, "absolute in-situ pressure, e.g. '25 MPa'"),
    ("--ambient-temperature", "temperature", True, None, "ambient seawater temperature, e.g. '2 degC'"),
    ("--ambient-salinity", "dimensionless", False, f"{DEFAULT_AMBIENT_SALINITY:g}",
     "ambient practical salinity; the default is TEOS-10's reference salinity"),
]
_HEAT = [
    ("--temperature-drop", "temperature", True, None, "cooling of the hot rock, e.g. '800 K'"),
    ("--rock-density", "density", False, f"{rv.ROCK_DENSITY.magnitude:g} kg/m^3",
     "rock density of basaltic crust, from memory"),
    ("--rock-heat-capacity", "specific heat capacity", False, f"{rv.ROCK_HEAT_CAPACITY.magnitude:g} J/(kg*K)",
     "rock specific heat capacity, from memory"),
    ("--porosity", "dimensionless", False, f"{rv.POROSITY:g}",
     "pore fraction filled with fluid, a few per cent in upper crust (from memory)"),
    ("--temperature", "temperature", False, None,
     "initial reservoir temperature (needed for the pore fluid when porosity > 0)"),
    ("--absolute-pressure", "pressure", False, None,
     "absolute reservoir pressure (for the pore fluid; or give --depth-below-seafloor and --seafloor-pressure)"),
]
_RESERVOIR_PRESSURE = [
    ("--depth-below-seafloor", "length", False, None,
     "depth of the reservoir below the seafloor, for its pressure (with --seafloor-pressure)"),
    ("--seafloor-pressure", "pressure", False, None, "absolute pressure at the seafloor, e.g. '25 MPa'"),
]
# question -> (answering function, help text, options as (flag, dimension, required, default, help))
QUESTIONS: dict[str, tuple[Callable[..., sm.Answer], str, list[tuple]]] = {
    "water": (sm.water_answer, "mass flux, volume flux and annual throughput carried by a heat power",
              _COMMON_WATER),
    "reservoir": (sm.reservoir_answer, "heat-mining time, decline lifetime and conductive timescale of a reservoir",
                  [("--heat-power", "power", True, None, "heat power drawn from the reservoir")] + _HEAT
                  + _RESERVOIR_PRESSURE + [
                      ("--volume", "volume", False, None, "hot-rock volume, e.g. '0.01 km^3'"),
                      ("--area", "area", False, None, "reservoir area (with --thickness)"),
                      ("--thickness", "length", False, None, "reservoir thickness (with --area)"),
                      ("--melt-volume", "volume", False, None, "volume of a crystallizing melt lens"),
                      ("--latent-heat", "specific energy", False, f"{rv.LATENT_HEAT.magnitude:g} J/kg",
                       "latent heat of crystallization of basaltic melt, from memory"),
                      ("--melt-density", "density", False, f"{rv.MELT_DENSITY.magnitude:g} kg/m^3",
                       "melt density, from memory"),
                      ("--size", "length", False, None, ("length L for L^2/kappa (default: the sheet's thickness "
                                                          "for --area and --thickness, else the cube root of the "
                                                          "volume)")),
                      ("--diffusivity", "diffusivity", False, f"{rv.THERMAL_DIFFUSIVITY.magnitude:g} m^2/s",
                       "thermal diffusivity of the rock, from memory"),
                  ]),
    "size": (sm.reservoir_size_answer, "reservoir size needed to sustain a power for a time",
             [("--heat-power", "power", True, None, "heat power to sustain"),
              ("--duration", "time", True, None, "how long, e.g. '10 yr'")] + _HEAT + _RESERVOIR_PRESSURE + [
                 ("--area", "area", False, None, "area, to give the thickness")]),
    "flank": (sm.flank_answer, "ridge-flank heat deficit against a conductive cooling reference",
              [("--half-spreading-rate", "velocity", False, None, "half spreading rate, e.g. '25 mm/yr'"),
               ("--temperature-rise", "temperature", False, None, "warming of the circulated seawater, e.g. '10 K'"),
               ("--ambient-temperature", "temperature", False, "2 degC",
                "bottom-water temperature, typical of deep water (from memory)"),
               ("--absolute-pressure", "pressure", False, None, "absolute seafloor pressure (with --temperature-rise)"),
               ("--ambient-salinity", "dimensionless", False, f"{DEFAULT_AMBIENT_SALINITY:g}",
                "bottom-water practical salinity"),
               ("--conductivity", "thermal conductivity", False, None, "half-space: thermal conductivity"),
               ("--diffusivity", "diffusivity", False, None, "half-space: thermal diffusivity"),
               ("--temperature-difference", "temperature", False, None,
                "half-space: mantle minus surface temperature")]),
}
#: Option destination → the answering function's keyword, where the vocabulary's name differs.
_RENAME = {"heat_power": "power", "exit_temperature": "temperature", "absolute_pressure": "pressure",
           "ambient_salinity": "salinity"}


def _dest(option):
    return option.lstrip("-").replace("-", "_")


def configure(p):
    sub = p.add_subparsers(dest="question", metavar="QUESTION", parser_class=type(p))
    sub.required = True
    for name, (_, help_text, options) in QUESTIONS.items():
        q = sub.add_parser(name, help=help_text, description=help_text)
        for option, _dim, required, default, help_ in options:
            shown = f" (default {default})" if default is not None else ""
            q.add_argument(option, dest=_dest(option), required=required, default=default, help=help_ + shown)
        if name in ("reservoir", "size"):
            q.add_argument("--pressure-regime", choices=rv.PRESSURE_REGIMES, default="hydrostatic",
                           help="pressure below the seafloor: under cold seawater (1025 kg/m^3) or under the rock "
                                "(default hydrostatic)")
        if name == "reservoir":
            q.add_argument("--spent-fraction", type=float, default=rv.SPENT_FRACTION,
                           help="output fraction at which a declining reservoir is spent "
                                f"(default {rv.SPENT_FRACTION})")
            q.add_argument("--cooled-faces", type=int, choices=(1, 2), default=1,
                           help="faces through which a sheet (--area, --thickness) cools: 1, its top (L = thickness), "
                                "or 2 (L = half the thickness); default 1")
        if name == "flank":
            q.add_argument("--observed", action="append", default=[], metavar="AGE=HEAT_FLOW",
                           help="one observation, e.g. '5 Myr=110 mW/m^2' (repeatable)")
            q.add_argument("--profile", help="CSV with columns 'age [Myr]' and 'heat_flow [mW/m^2]'")
            q.add_argument("--reference", choices=REFERENCES, default="gdh1",
                           help="conductive cooling reference (default gdh1)")
            q.add_argument("--deficit-span", choices=DEFICIT_SPANS, default="observed",
                           help="deficit the water column uses: over the observed ages, or from age 0 adding the "
                                "reference's heat loss before the first observation (default observed; both are "
                                "reported)")
        add_monte_carlo_options(q, DEFAULT_DRAWS)
        add_output_options(q)


def _observations(args):
    if bool(args.observed) == bool(args.profile):
        raise InputError("--observed/--profile", "both" if args.profile else "neither",
                         "heat-flow observations from --observed (repeated) or --profile, not both")
    if args.profile:
        t = read_quantity_table(args.profile, columns={"age": "time", "heat_flow": "heat flux"})
        return t["age"], t["heat_flow"]
    ages, flows = [], []
    for item in args.observed:
        age, sep, flow = item.partition("=")
        if not sep:
            raise InputError("--observed", item, "AGE=HEAT_FLOW, e.g. '5 Myr=110 mW/m^2'")
        ages.append(parse_quantity(age, "time", "--observed age").to("Myr").magnitude)
        flows.append(parse_quantity(flow, "heat flux", "--observed heat flow").to("mW/m^2").magnitude)
    return Q_(np.array(ages), "Myr"), Q_(np.array(flows), "mW/m^2")


def run(args) -> int:
    try:
        return _run(args)
    except InputError as err:  # the answering function names its keyword: name the option the user typed
        _, _, options = QUESTIONS[args.question]
        flags = {_RENAME.get(_dest(o[0]), _dest(o[0])): o[0] for o in options}
        flag = flags.get(err.field.rsplit("/", 1)[-1].replace(" ", "_"))
        if err.where is None and flag is not None:
            raise InputError(flag, err.value, err.allowed) from None
        raise


def _run(args) -> int:
    fn, _, options = QUESTIONS[args.question]
    mc = monte_carlo_settings(args)
    kwargs = {}
    for option, dim, _required, _default, _help in options:
        text = getattr(args, _dest(option))
        if text is None:
            continue
        kwargs[_RENAME.get(_dest(option), _dest(option))] = parse_uncertain(text, dim, option)
    if args.question in ("reservoir", "size"):
        kwargs["pressure_regime"] = args.pressure_regime
    if args.question == "reservoir":
        kwargs["spent_fraction"] = args.spent_fraction
        kwargs["cooled_faces"] = args.cooled_faces
    if args.question == "flank":
        kwargs["age"], kwargs["heat_flow"] = _observations(args)
        kwargs["reference"] = args.reference
        kwargs["deficit_span"] = args.deficit_span
    answer = fn(**kwargs, draws=mc.draws, seed=mc.seed, max_unphysical=mc.max_unphysical)
    if args.json:
        out = answer.as_dict()
        # the inputs as written, named as the options that gave them (heat_power, not the keyword power)
        named = {_RENAME.get(_dest(o[0]), _dest(o[0])): _dest(o[0]) for o in options}
        out["inputs"] = {named.get(k, k): v for k, v in out.get("inputs", {}).items()}
        print_json(out)
    else:
        title = f"{answer.question}: " + ("exact inputs" if answer.draws == 1 else
                                          f"median [5th, 95th percentile] of {answer.draws} draws, seed {answer.seed}")
        rows = [(label, value, "1" if unit == "dimensionless" else unit) for label, value, unit in answer.rows()]
        print_table(rows, title=title)
    return 0



METHODS = [
    Method(name="water-throughput", summary="mass and volume flux and annual throughput from heat power "
           "(IAPWS-95 enthalpy difference, TEOS-10 ambient density)", estimates="water throughput",
           inputs=("heat power", "exit temperature", "absolute pressure", "ambient temperature"),
           command="summarize water"),
    Method(name="reservoir-heat-mining", summary="heat-mining time, exponential-decline lifetime and L^2/kappa of a "
           "hot-rock reservoir", estimates="reservoir lifetime",
           inputs=("heat power", "volume or area and thickness", "temperature drop"), command="summarize reservoir"),
    Method(name="reservoir-sizing", summary="hot-rock volume that sustains a power for a time",
           estimates="reservoir size", inputs=("heat power", "duration", "temperature drop"),
           command="summarize size"),
    Method(name="flank-heat-deficit", summary="conductive heat-flow deficit against half-space cooling or GDH1, "
           "per area, per ridge length and as a circulated-water column", estimates="advective heat loss",
           inputs=("age", "heat flow", "half spreading rate", "fluid temperature rise"), command="summarize flank"),
]
