"""``ventflux survey``: the whole job, from one survey file to a results folder and report."""

from __future__ import annotations

import sys
from pathlib import Path

from ..registry import Method
from .output import add_output_options, print_json

def configure(p):
    p.add_argument("survey", nargs="?", help="the survey file (TOML)")
    p.add_argument("--out", metavar="DIR", default=None,
                   help="results folder (default: ventflux-results/<scenario> in the current folder); it is "
                        "replaced only once the new one is complete")
    p.add_argument("--check", action="store_true", help="validate the survey file and its data files, compute nothing")
    p.add_argument("--format", nargs="?", const="", default=None, metavar="TABLE",
                   help="describe the survey file: every table, key and CSV column (or one TABLE, e.g. vent.orifice "
                        "or diffuse; with --json as JSON) and exit")
    p.add_argument("--template", nargs="?", const="survey.toml", default=None, metavar="PATH",
                   help="write a commented starter survey to PATH (default survey.toml) and its sample data files "
                        "under data/ beside it, then exit; existing files are never overwritten")
    p.add_argument("--draws", type=int, default=None, metavar="N", help="override the file's Monte Carlo draws")
    p.add_argument("--seed", type=int, default=None, help="override the file's random seed")
    p.add_argument("--max-unphysical", default=None, metavar="SHARE",
                   help="override the file's [run] max_unphysical (share of draws dropped as impossible before the "
                        "run refuses; recorded in summary.json)")
    p.add_argument("--quiet", action="store_true", help="no progress messages")
    p.add_argument("--scheduler", default="auto", metavar="WHERE",
                   help="where the vents' methods and the sections are estimated: 'auto' (default: processes "
                        "forked from this one on Linux with several cores, else this process), 'serial' (this "
                        "process) or an executor a plugin provides (ventflux-series: 'local', 'threads' or a "
                        "dask.distributed scheduler address); the numbers are the same")
    p.add_argument("--budget", choices=("draws", "full", "off"), default="draws",
                   help="uncertainty budget: which input owns the variance of each result, from the run's own draws "
                        "(default), from a dedicated design (full: costs about (inputs + 2 + 6) / 10 times the run) "
                        "or none")
    add_output_options(p)


def _describe(args) -> int:
    """``--format [TABLE]``: the survey schema as text or JSON."""
    from ..survey.schema import as_json, format_text
    from ..survey.spec import survey_schema

    schema = survey_schema()
    if args.json:
        print_json(as_json(schema, args.format or None))
    else:
        print(format_text(schema, args.format or None))
    return 0


def _template(args) -> int:
    """``--template [PATH]``: write the starter survey and its data files."""
    from ..survey.template import write_template

    written = write_template(args.template)
    if args.json:
        print_json({"written": [str(p) for p in written]})
    else:
        for p in written:
            print(f"wrote {p}")
        print(f"next: edit them, then 'ventflux survey --check {written[0]}'")
    return 0


def run(args) -> int:
    from .. import ahead

    try:
        return _run(args)
    finally:
        ahead.discard()  # whatever was begun ahead and is no longer needed (a file with problems, an error)


def _run(args) -> int:
    from ..errors import InputError
    from ..survey.run import run_survey
    from ..survey.spec import load_survey

    if args.format is not None:
        return _describe(args)
    if args.template is not None:
        return _template(args)
    if not args.survey:
        raise InputError("survey", "(missing)", "the path of a survey file (see 'ventflux survey --format')")
    if args.draws is not None and args.draws < 100:
        raise InputError("--draws", args.draws, "at least 100 draws for a survey")
    mu = None
    if args.max_unphysical is not None:
        from ..uncertainty import check_max_unphysical

        mu = check_max_unphysical(args.max_unphysical, "--max-unphysical")
    # the command line's draws, seed and limit replace [run]'s while the file is read (the probe reduction
    # draws then): the limit is recorded in summary.json as max_unphysical_share
    from contextlib import nullcontext

    from .. import ahead
    from ..executor import AUTO

    # For a run on forked workers, a parser may begin a long computation of the run's on the core the check
    # leaves idle (ventflux.ahead: the video correlation); --check and the other schedulers begin nothing.
    with ahead.allowed() if not args.check and args.scheduler == AUTO else nullcontext():
        spec = load_survey(args.survey, draws=args.draws, seed=args.seed, max_unphysical=mu,
                           progress=None if args.quiet else _say)
    if mu is not None:
        spec.max_unphysical_option = "--max-unphysical"  # what a refusal names
    if args.draws is not None:
        from ..resources import check_memory
        from ..survey.spec import _series

        check_memory(args.draws, _series(spec.vents, spec.sections), "--draws")
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
    from ..io import check_output_location, file_stem

    out = Path(args.out) if args.out else Path.cwd() / "ventflux-results" / file_stem(spec.site.name)
    check_output_location(out, spec.input_files)  # before computing: a bad --out is refused at once

    def progress(msg):
        if not args.quiet:
            print(f"ventflux survey: {msg}", file=sys.stderr, flush=True)

    from ..executor import open_executor

    with open_executor(args.scheduler, field="--scheduler") as executor:
        # while the estimates run, this process imports what writing needs, then renders the figures of finished
        # tasks on the core the longest task leaves free (ventflux.executor.ForkExecutor.map)
        from ..survey.rendering import render_one_ahead

        result = run_survey(spec, progress=progress, executor=executor, meanwhile=_import_writers,
                            spare=render_one_ahead)
    result.budget_mode = args.budget  # the uncertainty budget written with the results (ventflux.survey.budget)
    progress("writing tables, figures and the report")
    from ..survey import report
    path = report.write_results(result, out)
    if args.json:
        import json

        print_json({"report": str(path), "results": str(out),
                    **{k: v for k, v in json.loads((out / "summary.json").read_text()).items()
                       if k.endswith(("_p05", "_p50", "_p95"))}})
        return 0
    s = result.total
    if s is not None:
        s = s.to("MW")
        print(f"{spec.site.name}: total heat output {s.median.m:.3g} MW (5-95 %: {s.p05.m:.3g}-{s.p95.m:.3g} MW)")
    print(f"report: {path}")
    return 0


def _say(msg: str) -> None:
    print(f"ventflux survey: {msg}", file=sys.stderr, flush=True)


def _import_writers() -> None:
    """Import what writing the results needs, while forked workers estimate (a core is often free then).

    The report module brings pandas, ``results.nc`` xarray and h5netcdf; xarray's first variable loads its
    array back-ends (``dask.array`` when Dask is installed). About 1 s of imports, measured, that were otherwise
    made after the estimates.
    """
    import h5netcdf  # noqa: F401
    import xarray as xr

    from ..survey import netcdf, report  # noqa: F401

    xr.Variable("x", [0.0])


METHODS = [Method(name="field survey", summary="every vent and method of a survey file, correlated Monte Carlo "
                                               "totals, focused/diffuse split, method agreement, reservoir lifetimes",
                  estimates="field heat power and water flux", command="ventflux survey")]
