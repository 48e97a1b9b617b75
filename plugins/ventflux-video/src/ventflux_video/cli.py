"""Subcommands ``video-scale``, ``video-field`` and ``video-jet``.

``video-scale`` finds the pixel size; ``video-field`` writes the time-averaged
velocity field of a clip (window correlation or particle tracking) as a CSV
table and a figure; ``video-jet`` adds the centreline profile, the exit
velocity, and the buoyancy flux and heat power from pure-plume theory.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

from ventflux.plugin_api import (
    Command,
    InputError,
    add_deprecated_option,
    add_monte_carlo_options,
    add_output_options,
    atomic_directory,
    monte_carlo_settings,
    parse_quantity,
    print_json,
    print_table,
)


def _pair(text, field, n=2):
    parts = str(text).split(",")
    try:
        vals = [float(p) for p in parts]
    except ValueError:
        vals = []
    if len(vals) != n:
        example = "X,Y" if n == 2 else "X1,Y1,X2,Y2"
        raise InputError(field, text, f"{n} numbers in pixels as {example}")
    return vals


def parse_windows(text, field="--windows"):
    """``"64,32,32"`` → ``(64, 32, 32)``."""
    try:
        sizes = tuple(int(p) for p in str(text).split(","))
    except ValueError:
        raise InputError(field, text, "window sizes in pixels separated by commas, e.g. 64,32,32") from None
    from .correlation import check_passes

    try:
        return check_passes(sizes, 0.0)
    except InputError as err:
        raise InputError(field, text, err.allowed) from None


def _add_clip_options(p):
    p.add_argument("clip", help="video file (mp4, mov, avi, ...), folder of images or glob pattern of images")
    c = p.add_argument_group("frames")
    c.add_argument("--frame-rate", metavar="Q", help="override the file's frame rate, e.g. '30/s' (needed for images)")
    c.add_argument("--region", metavar="L,T,W,H", help="region of interest in pixels: left, top, width, height")
    c.add_argument("--first-frame", type=int, default=0, metavar="N", help="first frame to use (default 0)")
    c.add_argument("--last-frame", type=int, default=None, metavar="N", help="stop before this frame")
    c.add_argument("--frame-step", type=int, default=1, metavar="N", help="use every N-th frame (default 1)")
    c.add_argument("--quiet", action="store_true", help="no progress bar")
    add_deprecated_option(c, "--no-progress", "--quiet", "quiet", takes_value=False)


def _add_scale_options(p, required=True):
    s = p.add_argument_group("scale (give one; perspective is not corrected)")
    s.add_argument("--pixel-size", metavar="Q", help="length of one pixel, e.g. '0.5 mm' or '0.5 ± 0.01 mm'")
    s.add_argument("--points", metavar="X1,Y1,X2,Y2", help="two image points (pixels) a known --distance apart")
    s.add_argument("--distance", metavar="Q", help="distance between --points, e.g. '10 cm'")
    s.add_argument("--laser-separation", metavar="Q", help="separation of two laser spots visible in the clip")
    s.add_argument("--laser-colour", default="white", choices=("red", "green", "white"),
                   help="colour of the laser spots (default white: the brightest spots)")


def _add_velocimetry_options(p):
    v = p.add_argument_group("velocimetry")
    v.add_argument("--mode", default="correlation", choices=("correlation", "tracking"),
                   help="window cross-correlation (default) or particle tracking for sparse targets")
    v.add_argument("--windows", default="64,32,32", metavar="SIZES",
                   help="interrogation window size of each pass in pixels (default 64,32,32); the last sets "
                        "the grid (tracking: the averaging cell)")
    v.add_argument("--overlap", type=float, default=0.5, metavar="F", help="window overlap fraction (default 0.5)")
    v.add_argument("--gap", type=int, default=1, metavar="N", help="frames between the two frames of a pair")
    v.add_argument("--pairs", type=int, default=None, metavar="N", help="average over N frame pairs (default all)")
    v.add_argument("--search-radius", type=float, default=3.0, metavar="PX",
                   help="tracking: search radius around the predicted position, pixels (default 3)")
    v.add_argument("--background", default="median", choices=("median", "none"),
                   help="remove the static background (temporal median of the clip) before correlation "
                        "(default median)")
    p.add_argument("--out", metavar="DIR", help="write tables (CSV) and figures (PNG) to this folder")


def metres_per_pixel(args, field_clip=None):
    """The pixel size from whichever scale option was given (exactly one)."""
    return pixel_scale(args, field_clip)[0]


def pixel_scale(args, field_clip=None):
    """The pixel size and its relative error as a factor of nominal 1 (an ``Uncertain``, or None if exact)."""
    from ventflux.plugin_api import Uncertain, nominal, parse_uncertain

    from .jet import check_scale
    from .scale import metres_per_pixel_from_laser_spots, metres_per_pixel_from_points

    given = [n for n in ("pixel_size", "points", "laser_separation") if getattr(args, n, None) is not None]
    if len(given) != 1:
        raise InputError("--pixel-size/--points/--laser-separation", ", ".join(given) or "(none)",
                         "exactly one way to set the scale")
    if args.pixel_size is not None:
        size = parse_uncertain(args.pixel_size, "length", "--pixel-size")
        mpp = check_scale(nominal(size))
        return mpp, _relative(size) if isinstance(size, Uncertain) else None
    if args.points is not None:
        if args.distance is None:
            raise InputError("--distance", "(missing)", "the distance between --points, e.g. '10 cm'")
        x1, y1, x2, y2 = _pair(args.points, "--points", 4)
        dist = parse_uncertain(args.distance, "length", "--distance")
        mpp = metres_per_pixel_from_points((x1, y1), (x2, y2), nominal(dist))
        return mpp, _relative(dist) if isinstance(dist, Uncertain) else None
    sep = parse_uncertain(args.laser_separation, "length", "--laser-separation")
    frames = field_clip or _stream(args, progress=False, colour=True)
    spots = metres_per_pixel_from_laser_spots(frames, nominal(sep), colour=getattr(args, "laser_colour", "white"))
    rel = spots.relative_error
    if isinstance(sep, Uncertain):
        rel = float(np.hypot(rel, _relative(sep).b))
    return spots.metres_per_pixel, Uncertain("normal", 1.0, rel, "dimensionless") if rel > 0 else None


def _relative(u):
    """An uncertain length as a factor of nominal 1 with the same relative standard deviation."""
    from ventflux.plugin_api import Uncertain

    centre = u.nominal.magnitude
    if u.kind == "normal":
        return Uncertain("normal", 1.0, u.b / centre, "dimensionless")
    if u.kind == "uniform":
        return Uncertain("uniform", u.a / centre, u.b / centre, "dimensionless")
    return Uncertain("lognormal", 1.0, u.b, "dimensionless")


def _stream(args, progress=None, colour=False):
    from .frames import FrameStream

    rate = None if args.frame_rate is None else parse_quantity(args.frame_rate, "frequency", "--frame-rate")
    show = (not args.quiet and sys.stderr.isatty()) if progress is None else progress
    return FrameStream(args.clip, frame_rate=rate, region=args.region, start=args.first_frame,
                       stop=args.last_frame, step=args.frame_step, progress=show, colour=colour)


def _mean_field(args, stream):
    from .averaging import mean_field_of_clip

    return mean_field_of_clip(stream, args.mode, parse_windows(args.windows), args.overlap, args.gap, args.pairs,
                              args.search_radius, args.background)


# ------------------------------------------------------------------ video-scale
def configure_scale(p):
    p.add_argument("clip", nargs="?", help="clip showing two laser spots (with --laser-separation)")
    p.add_argument("--frame-rate", metavar="Q", help="frame rate for an image sequence, e.g. '30/s'")
    p.add_argument("--region", metavar="L,T,W,H", help="region holding the laser spots, pixels")
    p.add_argument("--first-frame", type=int, default=0, metavar="N")
    p.add_argument("--last-frame", type=int, default=None, metavar="N")
    p.add_argument("--frame-step", type=int, default=1, metavar="N")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    add_deprecated_option(p, "--no-progress", "--quiet", "quiet", takes_value=False)
    _add_scale_options(p)
    add_output_options(p)


def run_scale(args) -> int:
    from .scale import metres_per_pixel_from_laser_spots

    spots = None
    if args.laser_separation is not None and args.pixel_size is None and args.points is None:
        if args.clip is None:
            raise InputError("clip", "(missing)", "a clip showing the laser spots")
        sep = parse_quantity(args.laser_separation, "length", "--laser-separation")
        spots = metres_per_pixel_from_laser_spots(_stream(args, progress=False, colour=True), sep,
                                                  colour=args.laser_colour)
        mpp = spots.metres_per_pixel
    else:
        mpp = metres_per_pixel(args)
    if args.json:
        out = {"pixel_size_m": mpp.to("m").magnitude, "perspective_corrected": False}
        if spots is not None:
            out.update(spots.as_dict())
        print_json(out)
        return 0
    rows = [("pixel size", mpp.to("mm").magnitude, "mm")]
    if spots is not None:
        rows += [("spread over frames (sd)", 100 * spots.spread, "%"),
                 ("frames with two spots", spots.frames_used, ""), ("laser colour", spots.colour, "")]
    print_table(rows, title="Pixel size (uniform over the frame; perspective not corrected)")
    return 0


# ------------------------------------------------------------------ video-field
def configure_field(p):
    _add_clip_options(p)
    _add_scale_options(p)
    _add_velocimetry_options(p)
    add_output_options(p)


def _field_summary(field, mpp):
    import numpy as np

    u, w, _, _ = (q.to("m/s").magnitude for q in field.velocity(mpp))
    return {
        "mode": field.mode, "frame_pairs": field.pairs,
        "grid_rows": int(field.y.size), "grid_columns": int(field.x.size),
        "frame_interval_s": field.interval.to("s").magnitude, "pixel_size_m": mpp.to("m").magnitude,
        "mean_w_m_s": float(np.nanmean(w)), "max_w_m_s": float(np.nanmax(w)), "mean_u_m_s": float(np.nanmean(u)),
        "replaced_vector_fraction": field.replaced_fraction, "frames_skipped": field.skipped_frames,
        "frames_missing": field.missing_frames, "orientation": "x right, w up (against image rows)",
        "frame_gaps": list(field.frame_gaps), "duplicate_frames": list(field.duplicate_frames),
        "variable_frame_rate": field.variable_rate, "background_removed": field.background_removed,
    }


def run_field(args) -> int:
    from .outputs import field_figure, field_table

    from .jet import frame_flag

    mpp = metres_per_pixel(args)
    stream = _stream(args)
    field = _mean_field(args, stream)
    out = _field_summary(field, mpp)
    flag = frame_flag(field)
    if flag:
        print(f"warning: {flag}", file=sys.stderr)
    if args.out:
        with atomic_directory(args.out) as tmp:
            (Path(tmp) / "velocity_field.csv").write_text(field_table(field, mpp))
            (Path(tmp) / "velocity_field.png").write_bytes(field_figure(field, mpp))
        out["files"] = [str(Path(args.out) / n) for n in ("velocity_field.csv", "velocity_field.png")]
    if args.json:
        print_json(out)
        return 0
    print_table([("frame pairs", out["frame_pairs"], ""), ("grid", f"{out['grid_rows']} x {out['grid_columns']}", ""),
                 ("mean w (up)", out["mean_w_m_s"], "m/s"), ("max w (up)", out["max_w_m_s"], "m/s"),
                 ("mean u (right)", out["mean_u_m_s"], "m/s"),
                 ("replaced vectors", 100 * out["replaced_vector_fraction"], "%"),
                 ("frames skipped", out["frames_skipped"], "")] +
                [("wrote", f, "") for f in out.get("files", [])], title=f"Velocity field ({field.mode})")
    return 0


# ------------------------------------------------------------------ video-jet
def configure_jet(p):
    _add_clip_options(p)
    _add_scale_options(p)
    p.add_argument("--orifice", required=True, metavar="X,Y", help="orifice column and row in full-frame pixels")
    _add_velocimetry_options(p)
    j = p.add_argument_group("jet and plume")
    j.add_argument("--exit-points", type=int, default=4, metavar="N",
                   help="lowest heights used to extrapolate the exit velocity (default 4)")
    j.add_argument("--fit-from", metavar="Q", help="lowest height for the plume fit, e.g. '5 cm' (default: all)")
    j.add_argument("--fit-to", metavar="Q", help="highest height for the plume fit")
    j.add_argument("--search-half-width", metavar="Q", help="look for the centreline only this far from the orifice")
    j.add_argument("--plume-constant", default=None, metavar="K",
                   help="k in w_c = k (F/(z - z0))^(1/3), a number or a distribution such as 'uniform(3.85, 4.7)' "
                        "(default: uniform over the published 3.85-4.7, nominal 4.275)")
    j.add_argument("--view", default="volume", choices=("volume", "sheet"),
                   help="volume (default, dive video): the camera sees the whole plume and speeds are corrected "
                        "for the line of sight; sheet: a light sheet through the axis")
    j.add_argument("--tracer-to-velocity-width-ratio", dest="width_ratio", default=None, metavar="R",
                   help="tracer-to-velocity width ratio for the volume view, a number or a distribution "
                        "(default: uniform(1.0, 1.2))")
    j.add_argument("--name", default=DEFAULT_VENT_NAME, metavar="NAME",
                   help="the vent's name: keys its random streams, so the draws equal those of a survey vent of that "
                        f"name with the same seed and inputs (default '{DEFAULT_VENT_NAME}')")
    add_monte_carlo_options(j)
    a = p.add_argument_group("ambient seawater (for the heat power)")
    where = a.add_mutually_exclusive_group()
    where.add_argument("--absolute-pressure", dest="absolute_pressure", metavar="Q",
                       help="absolute pressure at the vent, e.g. '25MPa'")
    where.add_argument("--depth", metavar="Q", help="vent depth, e.g. '2500 m'")
    add_deprecated_option(a, "--pressure", "--absolute-pressure", "absolute_pressure")
    a.add_argument("--ambient-temperature", metavar="Q", help="in-situ temperature, e.g. '2.0degC'")
    a.add_argument("--ambient-salinity", default="35", metavar="S", help="practical salinity (default 35)")
    a.add_argument("--latitude", type=float, default=None, metavar="DEG", help="latitude for local gravity")
    add_output_options(p)


#: Vent name of a clip analysed on the command line (keys its random streams, as a survey vent's name does).
DEFAULT_VENT_NAME = "vent"


def _uncertain_number(text, field, default):
    """A dimensionless option: ``None`` → ``default``; ``"4.7"`` or ``"uniform(3.85, 4.7)"`` parsed."""
    from ventflux.plugin_api import parse_uncertain

    if text is None:
        return default
    value = parse_uncertain(str(text), "dimensionless", field)
    from ventflux.plugin_api import nominal

    if not float(nominal(value).to("dimensionless").magnitude) > 0:
        raise InputError(field, text, "a value > 0")
    return value


def run_jet(args) -> int:
    from ventflux.plugin_api import SharedDraws, nominal, pressure_from_depth

    from .jet import check_funnel_pressure

    from .jet import analyze_jet_clip
    from .propagation import default_plume_constant, default_width_ratio, jet_draws, jet_summary, part_names

    from .outputs import field_figure, field_table, profile_figure, profile_table

    mc_opts = monte_carlo_settings(args)
    k = _uncertain_number(args.plume_constant, "--plume-constant", default_plume_constant())
    lam = _uncertain_number(args.width_ratio, "--tracer-to-velocity-width-ratio", default_width_ratio())
    mpp, scale = pixel_scale(args)
    orifice = _pair(args.orifice, "--orifice")
    temp = None if args.ambient_temperature is None else parse_quantity(args.ambient_temperature, "temperature",
                                                                         "--ambient-temperature")
    sal = parse_quantity(args.ambient_salinity, "dimensionless", "--ambient-salinity")
    pressure = None
    if args.absolute_pressure is not None:
        pressure = parse_quantity(args.absolute_pressure, "pressure", "--absolute-pressure")
        try:  # TEOS-10's range, named by the option the user wrote
            check_funnel_pressure(pressure)
        except InputError as err:
            raise InputError("--absolute-pressure", args.absolute_pressure, err.allowed) from None
    elif args.depth is not None:
        pressure = pressure_from_depth(parse_quantity(args.depth, "length", "--depth"), args.latitude)
    if (temp is None) != (pressure is None):
        raise InputError("--ambient-temperature" if temp is None else "--absolute-pressure", "(missing)",
                         "both --ambient-temperature and --absolute-pressure (or --depth) for the heat power")
    heights = tuple(None if v is None else parse_quantity(v, "length", f) for v, f in
                    ((args.fit_from, "--fit-from"), (args.fit_to, "--fit-to")))
    rate = None if args.frame_rate is None else parse_quantity(args.frame_rate, "frequency", "--frame-rate")
    assert mc_opts.draws is not None  # the video command always draws (validated before the clip is read)
    draws = SharedDraws(mc_opts.draws, mc_opts.seed)
    show = not args.quiet and sys.stderr.isatty()
    res = analyze_jet_clip(args.clip, mpp, orifice, roi=args.region, ambient_temperature=temp, ambient_salinity=sal,
                           pressure=pressure, latitude=args.latitude, frame_rate=rate,
                           passes=parse_windows(args.windows), overlap=args.overlap, gap=args.gap, pairs=args.pairs,
                           start=args.first_frame, stop=args.last_frame,
                           plume_constant=float(nominal(k).to("dimensionless").magnitude),
                           plume_heights=heights, exit_points=args.exit_points,
                           search_half_width=None if args.search_half_width is None else
                           parse_quantity(args.search_half_width, "length", "--search-half-width"),
                           mode=args.mode, search_radius=args.search_radius, progress=show, view=args.view,
                           width_ratio=float(nominal(lam).to("dimensionless").magnitude), background=args.background)
    mc = jet_draws(res, draws, part_names(args.name), None if args.plume_constant is None else k,
                   None if args.width_ratio is None else lam, scale, max_unphysical=mc_opts.max_unphysical)
    out = jet_summary(res, mc)
    out["vent"] = args.name
    if args.out:
        names_out = ("centreline.csv", "centreline.png", "velocity_field.csv", "velocity_field.png")
        with atomic_directory(args.out) as tmp:
            (Path(tmp) / names_out[0]).write_text(profile_table(res.profile, res.plume))
            (Path(tmp) / names_out[1]).write_bytes(profile_figure(res.profile, res.plume, res.exit_velocity,
                                                                  res.exit_velocity_sd))
            (Path(tmp) / names_out[2]).write_text(field_table(res.field, mpp))
            (Path(tmp) / names_out[3]).write_bytes(field_figure(res.field, mpp, orifice))
        out["files"] = [str(Path(args.out) / n) for n in names_out]
    for flag in res.flags:
        print(f"warning: {flag}", file=sys.stderr)
    if args.json:
        print_json(out)
        return 0
    rows = [("view", f"{res.view} (line-of-sight factor {out['sightline_factor_median']:.3f})", ""),
            ("exit velocity (centreline)", out["exit_velocity_m_s"], "m/s"),
            ("  sd (total)", out["exit_velocity_sd_m_s"], "m/s"),
            ("buoyancy flux (pure plume)", out["buoyancy_flux_m4_s3"], "m^4/s^3"),
            ("  sd (total)", out["buoyancy_flux_sd_m4_s3"], "m^4/s^3"),
            ("virtual origin", out["virtual_origin_m"], "m"),
            ("plume constant k (nominal)", out["plume_constant"], "")]
    if res.heat_power is not None:
        rows += [("heat power", res.heat_power.to("MW").magnitude, "MW"),
                 ("  sd (total)", out["heat_power_sd_W"] / 1e6, "MW"),
                 ("  5-95 %", f"{out['heat_power_W_p05'] / 1e6:.3g} - {out['heat_power_W_p95'] / 1e6:.3g}", "MW")]
    rows += [(f"  part: {name}", 100 * part["buoyancy_flux"], "% of F") for name, part in mc.parts.items()]
    rows += [("unphysical draws (dropped)", f"{out['unphysical_draws']} of {out['draws']} "
              f"(limit {100 * out['max_unphysical_share']:g} %)", "")]
    rows += [("frame pairs", out["frame_pairs"], ""), ("frames skipped", out["frames_skipped"], "")]
    rows += [("wrote", f, "") for f in out.get("files", [])]
    print_table(rows, title=f"Vent jet from video ({res.field.mode}; w up)")
    return 0


COMMANDS = [
    Command(name="video-scale", help="pixel size from two points a known distance apart or two laser spots in a clip",
            configure=configure_scale, run=run_scale),
    Command(name="video-field", help="time-averaged velocity field of a clip (window correlation or particle "
                                     "tracking), as a table and a figure", configure=configure_field, run=run_field),
    Command(name="video-jet", help="centreline velocity, exit velocity, buoyancy flux and heat power of a vent jet "
                                   "from a clip", configure=configure_jet, run=run_jet),
]
