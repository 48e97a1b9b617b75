"""Command-line access: ``ventflux plume-layer``.  Parses and prints; the physics is in ``section`` and ``box``.

Examples
--------
::

    ventflux plume-layer towyo.csv --vent-depth "2480 m" --current "0.04 ± 0.01 m/s" \\
        --current-direction "80 ± 15 deg" --out layer_profiles.csv --figures figs/
    ventflux plume-layer towyo.nc --vent-depth "2480 m" --current-record mooring.nc \\
        --current-uncertainty "0.01 m/s" --json
    ventflux plume-layer north.csv east.csv south.csv west.csv --current "0.05 m/s" \\
        --current-direction "70 deg"        # a closed box: the net heat flux out of it

Only light modules are imported here: this module is loaded whenever the
``ventflux`` command lists its subcommands.
"""

from __future__ import annotations

import sys
from pathlib import Path

from ventflux.plugin_api import add_monte_carlo_options, add_output_options, print_json, print_table, write_output

DEFAULT_BIN = "5 m"


def configure(p):
    p.add_argument("section", nargs="+", help="tow-yo or vehicle section: CSV with units in headers, or netCDF with "
                                              "CF standard names; several sections in order around a closed box "
                                              "give the net heat flux out of it")
    p.add_argument("--vent-depth", help="depth of the vent, e.g. '2480 ± 5 m' (rise heights are measured from it)")
    p.add_argument("--current", help="constant current speed, e.g. '0.04 ± 0.01 m/s' (unless the file has "
                                     "current_east/current_north, or --current-record is given)")
    p.add_argument("--current-direction", help="bearing toward which the current flows, clockwise from north, "
                                               "e.g. '80 ± 15 deg' (default: across the section)")
    p.add_argument("--current-record", help="current meter or ADCP record (CF netCDF or CSV), interpolated to "
                                            "each sample's time (and depth)")
    p.add_argument("--current-uncertainty", help="accuracy of a measured current, per horizontal component, e.g. "
                                                 "'0.005 m/s'")
    p.add_argument("--closure-tolerance", help="largest gap between the sections of a box, e.g. '100 m' (default: "
                                               "the widest profile spacing)")
    p.add_argument("--band-top", help="top depth of a box's integral, e.g. '2000 m' (default: from the layers)")
    p.add_argument("--band-bottom", help="bottom depth of a box's integral, e.g. '2300 m'")
    p.add_argument("--factor", type=float, default=3.0, help="detection threshold in background-noise standard "
                                                             "deviations (default %(default)s)")
    p.add_argument("--bin-size", default=DEFAULT_BIN, help="depth-bin thickness (default %(default)s)")
    p.add_argument("--degree", type=int, default=2, choices=(1, 2),
                   help="degree of the background θ–σ0 polynomial (default %(default)s)")
    p.add_argument("--tracer", default="temperature", choices=("temperature", "optical", "either"),
                   help="anomaly that defines the layer (default %(default)s)")
    p.add_argument("--margin", help="band margin above and below the layer for the flux integral (default: half "
                                    "the layer band's thickness)")
    p.add_argument("--latitude", type=float, help="degrees, when the file gives local east/north only")
    p.add_argument("--longitude", type=float, help="degrees, when the file gives local east/north only")
    add_monte_carlo_options(p)
    p.add_argument("--out", help="write the per-profile table (layer top, core, bottom, heights) to this CSV")
    p.add_argument("--figures", help="folder for the section, profile and heat-flux figures (PNG)")
    p.add_argument("--quiet", action="store_true", help="no progress messages")
    add_output_options(p)


def _spec(args):
    from ventflux.plugin_api import Collector, InputError, parse_quantity, parse_uncertain

    errs = Collector()

    def q(text, dim, opt, uncertain=True):
        if text is None:
            return None
        with errs.check():
            return (parse_uncertain if uncertain else parse_quantity)(text, dim, opt)
        return None

    paths = [Path(s) for s in args.section]
    spec = {"data": paths[0] if len(paths) == 1 else None, "sections": paths if len(paths) > 1 else None,
            "current": q(args.current, "velocity", "--current"),
            "current_direction": q(args.current_direction, "angle", "--current-direction"),
            "current_uncertainty": q(args.current_uncertainty, "velocity", "--current-uncertainty", False),
            "current_record": None if args.current_record is None else Path(args.current_record),
            "vent_depth": q(args.vent_depth, "length", "--vent-depth"),
            "bin_size": q(args.bin_size, "length", "--bin-size", False),
            "margin": q(args.margin, "length", "--margin", False),
            "closure_tolerance": q(args.closure_tolerance, "length", "--closure-tolerance", False),
            "band_top": q(args.band_top, "length", "--band-top", False),
            "band_bottom": q(args.band_bottom, "length", "--band-bottom", False),
            "factor": args.factor, "degree": args.degree, "tracer": args.tracer}
    if not args.factor >= 1:
        errs.add(InputError("--factor", args.factor, "a number ≥ 1"))
    if spec["bin_size"] is not None and not spec["bin_size"].magnitude > 0:
        errs.add(InputError("--bin-size", args.bin_size, "a length > 0"))
    if (args.band_top is None) != (args.band_bottom is None):
        errs.add(InputError("--band-top" if args.band_top is None else "--band-bottom", "(missing)",
                            "--band-top and --band-bottom together"))
    if len(paths) == 1:
        for opt, v in (("--closure-tolerance", args.closure_tolerance), ("--band-top", args.band_top),
                       ("--band-bottom", args.band_bottom)):
            if v is not None:
                errs.add(InputError(opt, v, "no value for one section (it applies to a box of several sections)"))
    errs.raise_if_any()
    return spec


def _progress(args, msg):
    if not args.quiet and not args.json:
        print(f"plume-layer: {msg}", file=sys.stderr)


def run(args) -> int:
    from types import SimpleNamespace

    from ventflux.plugin_api import (
        DEFAULT_DRAWS,
        InputError,
        SharedDraws,
        UnphysicalPolicy,
        atomic_write_bytes,
        atomic_write_text,
        monte_carlo_settings,
    )

    from .survey import analyse, box_rows, propagate_analysis, summary_rows

    mc = monte_carlo_settings(args)
    spec = _spec(args)
    site = SimpleNamespace(latitude=args.latitude, longitude=args.longitude)
    _progress(args, f"reading and analysing {len(args.section)} section(s)")
    a = analyse(spec, site)
    if not a.measured and spec["current"] is None:
        raise InputError("--current", "(missing)", "a current speed (the section file has no current columns and "
                         "no --current-record is given)")
    if a.measured and (spec["current"] is not None or spec["current_direction"] is not None):
        raise InputError("--current", args.current or args.current_direction, "no constant current: the currents "
                         "are measured (give their accuracy with --current-uncertainty)")
    draws = SharedDraws(DEFAULT_DRAWS if mc.draws is None else mc.draws, mc.seed)
    policy = UnphysicalPolicy(mc.max_unphysical, option="--max-unphysical")
    _progress(args, f"propagating {mc.draws} draws")
    per, out = propagate_analysis(spec, a, draws, policy, key="plume-layer")
    rows = summary_rows(a.results[0], out) if a.box is None else box_rows(a, per, out)
    if args.out:
        table = a.results[0].rows() if a.box is None else [{"section": n, **r} for n, res in zip(a.names, a.results)
                                                            for r in res.rows()]
        write_output("--out", args.out, atomic_write_text, args.out, _csv(table))
    if args.figures:
        from .figures import _png, section_figures

        folder = Path(args.figures)
        write_output("--figures", folder, lambda: folder.mkdir(parents=True, exist_ok=True))
        figs = [(stem, _png(fig), cap) for res, p in zip(a.results, per) for stem, fig, cap in section_figures(res, p)]
        if a.box is not None:
            from .figures import box_png

            figs.append(("box", box_png(a, per, out), ""))
        for stem, png, _ in figs:
            write_output("--figures", folder, atomic_write_bytes, folder / f"{stem}.png", png)
    if args.json:
        print_json(_payload(a, per, out, draws, policy))
        return 0
    title = a.results[0].source if a.box is None else f"closed box of {len(a.results)} sections"
    print_table([(r["quantity"], r["nominal"], r["unit"]) for r in rows], title=title)
    for r in rows:
        if "p05" in r:
            print(f"  {r['quantity']}: 90 % interval {r['p05']:.4g} to {r['p95']:.4g} {r['unit']}")
    for n in _notes(a, out):
        print(f"note: {n}")
    return 0


def _notes(a, out):
    from .survey import _draw_notes

    notes = list(a.notes)
    for name, r in zip(a.names, a.results):
        notes += [f"{name}: {n}" if a.box is not None else n for n in r.notes]
    return notes + _draw_notes(out)


#: Table units written in SI for JSON keys (the vocabulary's rule).
_SI = {"mK": ("K", 1e-3), "MW": ("W", 1e6)}


def _si_rows(rows):
    from ventflux.plugin_api import parse_column_name, unit_tag

    out = []
    for r in rows:
        row = {}
        for k, v in r.items():
            base, unit = parse_column_name(k)
            if unit in _SI:
                unit, f = _SI[unit]
                v = v * f
            row[f"{base}_{unit_tag(unit)}" if unit else base] = v
        out.append(row)
    return out


def _flux_summaries(p, res, out, heights=True):
    import re

    from .survey import summaries

    for name, s in summaries(res, out, heights=heights).items():
        if s is None:
            continue
        unit = "m" if name.startswith("rise_height_") else "W"
        if unit == "m":
            p[f"{name}_m"] = res.height(name[len("rise_height_"):])
        p.update(s.as_dict(re.sub(r"[^0-9a-z]+", "_", name.lower()).strip("_"), unit))


def _section_payload(res, out, heights=True):
    p = {"section": res.source, "heat_flux_W": out.nominal_heat_flux,
         "heat_flux_constant_cp_W": out.shortcut_heat_flux, "normal_bearing_deg": res.normal_bearing,
         "noise_dtheta_K": res.noise, "threshold_dtheta_K": res.noise * res.factor,
         "profiles_with_layer": int(res.found.sum()), "profiles_total": res.n_profiles, "bin_size_m": res.bin_size,
         "missing_samples_dropped": res.n_dropped, "missing_samples_dropped_by_variable": dict(res.dropped)}
    _flux_summaries(p, res, out, heights=heights)
    p["profiles"] = _si_rows(res.rows())
    p["notes"] = list(res.notes)
    return p


def _payload(a, per, out, draws, policy):
    """One JSON object, SI units in the keys (``heat_flux_W_p05``, ``rise_height_maximum_m_median``)."""
    common = {"seed": draws.seed, "draws": draws.n_draws, "unphysical_draws": out.unphysical,
              **policy.as_dict(), "failed_draws": out.failed}
    if a.box is None:
        return {**_section_payload(a.results[0], out), **common, "notes": _notes(a, out)}
    p = {"box": a.names, "net_heat_flux_W": out.nominal_heat_flux,
         "net_heat_flux_constant_cp_W": out.shortcut_heat_flux, **common,
         "largest_gap_m": max(g for *_, g in a.box.gaps), "closure_tolerance_m": a.box.tolerance,
         "band_top_m": a.box.band[0], "band_bottom_m": a.box.band[1]}
    net: dict[str, object] = {}
    _flux_summaries(net, None, out, heights=False)
    p.update({f"net_{k}": v for k, v in net.items()})
    p["sections"] = [_section_payload(r, o, heights=False) for r, o in zip(a.results, per)]
    p["notes"] = _notes(a, out)
    return p


def _csv(rows):
    import csv
    import io

    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(rows[0]))
    w.writeheader()
    w.writerows(rows)
    return buf.getvalue()
