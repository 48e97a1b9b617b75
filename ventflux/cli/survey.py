"""``ventflux survey``: the whole job, from one survey file to a results folder and report."""

from __future__ import annotations

import sys
from pathlib import Path

from ..registry import Method
from .output import add_output_options, print_json

FORMAT = """\
A survey file is TOML. Quantities are strings with units ("2.05 degC", "2480 m"); any measured value may carry
an uncertainty ("1.4 ± 0.2 m/s", "uniform(9, 11) cm", "lognormal(0.3, 1.5) cm/s") or refer to a named entry
of [shared] as "@name" (drawn once per Monte Carlo draw for every value that refers to it). Paths are relative
to the survey file; CSV files carry units in their column headers ("temperature [degC]").

[site]       name (required), cruise, depth | pressure (absolute), latitude, longitude (required),
             ambient_temperature (required), ambient_salinity (practical, default 35),
             ctd (CSV cast: "pressure [dbar]" or "depth [m]", "temperature [degC]", "salinity"),
             ctd_smoothing (a length: the profile's smoothing window)
[run]        draws (default 10000; at most what the machine's memory holds), seed (default 20261202; 0 to 2^32-1),
             max_unphysical (largest share of draws dropped as physically impossible, counted and reported,
             before the run refuses; default 0.05), allow_implausible (default false: values outside
             ventflux.limits' plausibility table are refused)
[shared]     name = value, e.g. "camera scale" = "1.00 ± 0.03" (a relative factor) or any quantity
[[vent]]     name (required), exit_temperature (for the water flux, if no orifice gives one), and methods:
{methods}
{sections}
[[reservoir]] name, supplies ("field total" | "focused" | "diffuse" | a vent name), volume | area + thickness,
             temperature_drop, temperature (initial, for the pore fluid), porosity, melt_volume, rock_density,
             pressure | depth_below_seafloor (default: the seafloor pressure), pressure_regime
             ("hydrostatic" | "lithostatic", below the seafloor), size (the length L of the conductive
             time L²/κ; default a sheet's thickness, else the cube root of the volume)
"""


def configure(p):
    p.add_argument("survey", nargs="?", help="the survey file (TOML)")
    p.add_argument("--out", metavar="DIR", default=None,
                   help="results folder (default: ventflux-results/<scenario> in the current folder); it is "
                        "replaced only once the new one is complete")
    p.add_argument("--check", action="store_true", help="validate the survey file and its data files, compute nothing")
    p.add_argument("--format", action="store_true", help="describe the survey file's format and exit")
    p.add_argument("--draws", type=int, default=None, metavar="N", help="override the file's Monte Carlo draws")
    p.add_argument("--seed", type=int, default=None, help="override the file's random seed")
    p.add_argument("--quiet", action="store_true", help="no progress messages")
    p.add_argument("--scheduler", default=None, metavar="WHERE",
                   help="where the vents are estimated: 'serial' (default, this process) or an executor a plugin "
                        "provides (ventflux-series: 'local', 'threads' or a dask.distributed scheduler address); "
                        "the numbers are the same")
    p.add_argument("--budget", choices=("draws", "full", "off"), default="draws",
                   help="uncertainty budget: which input owns the variance of each result, from the run's own draws "
                        "(default), from a dedicated design (full: costs about (inputs + 2 + 6) / 10 times the run) "
                        "or none")
    add_output_options(p)


def _format_text():
    from ..survey.spec import survey_components

    methods, sections = survey_components()
    m = "\n".join(f"             [vent.{k}]{'(array: [[vent.' + k + ']])' if v.many else ''}: {v.summary} "
                  f"({v.provider})" for k, v in sorted(methods.items()))
    s = "\n".join(f"[{k}]  {v.summary} ({v.provider})" for k, v in sorted(sections.items()))
    return FORMAT.format(methods=m, sections=s)


def run(args) -> int:
    from ..errors import InputError
    from ..survey import report
    from ..survey.run import run_survey
    from ..survey.spec import load_survey

    if args.format:
        print(_format_text())
        return 0
    if not args.survey:
        raise InputError("survey", "(missing)", "the path of a survey file (see 'ventflux survey --format')")
    if args.draws is not None and args.draws < 100:
        raise InputError("--draws", args.draws, "at least 100 draws for a survey")
    spec = load_survey(args.survey)
    if args.draws is not None:
        from ..resources import check_memory
        from ..survey.spec import _series

        check_memory(args.draws, _series(spec.vents, spec.sections), "--draws")
        spec.draws = args.draws
    if args.seed is not None:
        spec.seed = args.seed
    for line in spec.warnings.lines():
        print(f"ventflux survey: warning: {line}", file=sys.stderr)
    if args.check:
        n = len(spec.vents)
        w = len(spec.warnings)
        msg = f"{spec.path.name}: valid ({n} vent{'s' if n != 1 else ''}, sections: " \
              f"{', '.join(spec.sections) or 'none'}, {len(spec.input_files)} input files" \
              f"{f', {w} warning' + ('s' if w != 1 else '') if w else ''})"
        if args.json:
            print_json({"valid": True, "vents": [v.name for v in spec.vents], "sections": list(spec.sections),
                        "input_files": list(spec.input_files), "warnings": spec.warnings.as_list()})
        else:
            print(msg)
        return 0
    out = Path(args.out) if args.out else Path.cwd() / "ventflux-results" / report._slug(spec.site.name)
    report.check_output_location(out, spec)

    def progress(msg):
        if not args.quiet:
            print(f"ventflux survey: {msg}", file=sys.stderr, flush=True)

    from ..executor import open_executor

    with open_executor(args.scheduler, field="--scheduler") as executor:
        result = run_survey(spec, progress=progress, executor=executor)
    result.budget_mode = args.budget  # the uncertainty budget written with the results (ventflux.survey.budget)
    progress("writing tables, figures and the report")
    path = report.write_results(result, out)
    if args.json:
        import json

        print_json({"report": str(path), "results": str(out),
                    **{k: v for k, v in json.loads((out / "summary.json").read_text()).items()
                       if k.endswith(("_MW_median", "_MW_p05", "_MW_p95", "_median", "_p05", "_p95"))}})
        return 0
    s = result.total
    if s is not None:
        s = s.to("MW")
        print(f"{spec.site.name}: total heat output {s.median.m:.3g} MW (5-95 %: {s.p05.m:.3g}-{s.p95.m:.3g} MW)")
    print(f"report: {path}")
    return 0


METHODS = [Method(name="field survey", summary="every vent and method of a survey file, correlated Monte Carlo "
                                               "totals, focused/diffuse split, method agreement, reservoir lifetimes",
                  estimates="field heat power and water flux", command="ventflux survey")]
