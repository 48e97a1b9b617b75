"""Command-line access: ``ventflux plume-layer``.  Parses and prints; the physics is in ``section``.

Examples
--------
::

    ventflux plume-layer towyo.csv --vent-depth "2480 m" --current "0.04 ± 0.01 m/s" \\
        --current-direction "80 ± 15 deg" --out layer_profiles.csv --figures figs/
    ventflux plume-layer towyo.nc --vent-depth "2480 m" --current "0.04 m/s" --json

Only light modules are imported here: this module is loaded whenever the
``ventflux`` command lists its subcommands.
"""

from __future__ import annotations

from pathlib import Path

from ventflux.plugin_api import add_output_options, print_json, print_table, write_output

DEFAULT_BIN = "5 m"


def configure(p):
    p.add_argument("section", help="tow-yo or vehicle section: CSV with units in headers, or netCDF with CF "
                                   "standard names")
    p.add_argument("--vent-depth", help="depth of the vent, e.g. '2480 ± 5 m' (rise heights are measured from it)")
    p.add_argument("--current", help="constant current speed, e.g. '0.04 ± 0.01 m/s' (unless the file has "
                                     "current_east/current_north)")
    p.add_argument("--current-direction", help="bearing toward which the current flows, clockwise from north, "
                                               "e.g. '80 ± 15 deg' (default: across the section)")
    p.add_argument("--current-uncertainty", help="error of a measured current along the section's normal, e.g. "
                                                 "'0.005 m/s'")
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
    p.add_argument("--draws", type=int, default=10_000, help="bootstrap/Monte Carlo draws (default %(default)s)")
    p.add_argument("--seed", type=int, help="random seed (default: ventflux's)")
    p.add_argument("--out", help="write the per-profile table (layer top, core, bottom, heights) to this CSV")
    p.add_argument("--figures", help="folder for the section, profile and heat-flux figures (PNG)")
    add_output_options(p)


def _spec(args):
    from ventflux.plugin_api import Collector, InputError
    from ventflux.plugin_api import parse_uncertain
    from ventflux.plugin_api import parse_quantity

    errs = Collector()

    def q(text, dim, opt, uncertain=True):
        if text is None:
            return None
        with errs.check():
            return (parse_uncertain if uncertain else parse_quantity)(text, dim, opt)
        return None

    spec = {"data": Path(args.section), "current": q(args.current, "velocity", "--current"),
            "current_direction": q(args.current_direction, "angle", "--current-direction"),
            "current_uncertainty": q(args.current_uncertainty, "velocity", "--current-uncertainty", False),
            "vent_depth": q(args.vent_depth, "length", "--vent-depth"),
            "bin_size": q(args.bin_size, "length", "--bin-size", False),
            "margin": q(args.margin, "length", "--margin", False),
            "factor": args.factor, "degree": args.degree, "tracer": args.tracer}
    if not args.factor >= 1:
        errs.add(InputError("--factor", args.factor, "a number ≥ 1"))
    if args.draws < 2:
        errs.add(InputError("--draws", args.draws, "at least 2"))
    if spec["bin_size"] is not None and not spec["bin_size"].magnitude > 0:
        errs.add(InputError("--bin-size", args.bin_size, "a length > 0"))
    errs.raise_if_any()
    return spec


def run(args) -> int:
    from types import SimpleNamespace

    from ventflux.plugin_api import SharedDraws
    from ventflux.plugin_api import InputError
    from ventflux.plugin_api import atomic_write_bytes, atomic_write_text

    from .section import draw_section, section_draws
    from .survey import analyse, summary_rows

    spec = _spec(args)
    site = SimpleNamespace(latitude=args.latitude, longitude=args.longitude)
    res = analyse(spec, site)
    if not res.measured_current and spec["current"] is None:
        raise InputError("--current", "(missing)", "a current speed (the section file has no current columns)")
    if res.measured_current and (spec["current"] is not None or spec["current_direction"] is not None):
        raise InputError("--current", args.current or args.current_direction, "no constant current: the section "
                         "file has current columns (give their error with --current-uncertainty)")
    draws = SharedDraws(args.draws, args.seed)
    out = draw_section(res, section_draws(draws, "plume-layer", res.n_profiles, current=spec["current"],
                                          current_direction=spec["current_direction"],
                                          current_uncertainty=spec["current_uncertainty"],
                                          vent_depth=spec["vent_depth"], bin_size=res.bin_size))
    rows = summary_rows(res, out)
    if args.out:
        write_output("--out", args.out, atomic_write_text, args.out, _csv(res.rows()))
    if args.figures:
        from .figures import section_figures

        folder = Path(args.figures)
        write_output("--figures", folder, lambda: folder.mkdir(parents=True, exist_ok=True))
        for stem, png, _ in section_figures(res, out):
            write_output("--figures", folder, atomic_write_bytes, folder / f"{stem}.png", png)
    if args.json:
        print_json(_payload(res, out, draws))
        return 0
    print_table([(r["quantity"], r["nominal"], r["unit"]) for r in rows], title=f"{res.source}")
    for r in rows:
        if "p05" in r:
            print(f"  {r['quantity']}: 90 % interval {r['p05']:.4g} to {r['p95']:.4g} {r['unit']}")
    for n in res.notes:
        print(f"note: {n}")
    return 0


def _payload(res, out, draws):
    """One JSON object, SI units in the keys (``heat_flux_W_p05``, ``rise_height_maximum_m_median``)."""
    import re

    from ventflux.plugin_api import unit_tag
    from ventflux.plugin_api import parse_column_name

    from .survey import summaries

    p = {"section": res.source, "seed": draws.seed, "draws": draws.n_draws, "heat_flux_W": out.nominal_heat_flux,
         "heat_flux_constant_cp_W": out.shortcut_heat_flux, "failed_draws": out.failed,
         "normal_bearing_deg": res.normal_bearing, "noise_dtheta_K": res.noise,
         "threshold_dtheta_K": res.noise * res.factor, "profiles_with_layer": int(res.found.sum()),
         "profiles_total": res.n_profiles, "bin_size_m": res.bin_size}
    for name, s in summaries(res, out).items():
        if s is None:
            continue
        unit = "m" if name.startswith("rise_height_") else "W"
        if unit == "m":
            p[f"{name}_m"] = res.height(name[len("rise_height_"):])
        p.update(s.as_dict(re.sub(r"[^0-9a-z]+", "_", name.lower()).strip("_"), unit))
    rows = []
    for r in res.rows():
        row = {}
        for k, v in r.items():
            base, unit = parse_column_name(k)
            row[f"{base}_{unit_tag(unit)}" if unit else base] = v
        rows.append(row)
    p["profiles"] = rows
    p["notes"] = res.notes
    return p


def _csv(rows):
    import csv
    import io

    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(rows[0]))
    w.writeheader()
    w.writerows(rows)
    return buf.getvalue()
