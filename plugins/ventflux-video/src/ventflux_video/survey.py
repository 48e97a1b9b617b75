"""Survey method ``[vent.video]``: a vent's heat power from the decay of its plume's velocity on video.

The clip is reduced once (``jet.analyze_jet_clip``, with the nominal inputs)
and ``propagation.jet_draws`` draws the heat power through the run's named
inputs: the plume constant (uniform over 3.85-4.7 by default, one input for
every vent), the tracer-to-velocity width ratio of the volume view (one input
for every vent by default), the pixel scale (``scale_factor``; a camera or
laser scaler used for several clips is declared once under ``[shared]`` and
referred to by ``scale_factor = "@name"``, so its error is common to them),
the correlation's own error and the fit's (each clip's own). The report
lists each part's share.

Keys: ``clip``, ``pixel_size``, ``orifice = [column, row]`` (required);
``scale_factor``, ``plume_constant``, ``tracer_to_velocity_width_ratio``
(uncertain, shareable), ``view`` (``volume``, the default for dive video, or
``sheet``), ``frame_rate``, ``region``, ``mode``, ``background``.
Checking the file (``--check``) opens each clip's header: its frame size,
frame count and rate, and whether the orifice and the region lie in the frame.
A survey run on forked workers begins each usable clip's correlation as soon as
its keys are read (``ventflux.ahead``), while the rest of the file is checked;
the estimate takes that field, or computes it itself if none was begun.
"""

from __future__ import annotations

import numpy as np

from ventflux.plugin_api import InputError
from ventflux.plugin_api import MethodEstimate, SurveyMethod
from ventflux.plugin_api import SurveyKey
from ventflux.plugin_api import as_float, nominal_of
from ventflux.plugin_api import Q_
from ventflux.plugin_api import start_ahead, take_ahead


def _parse(f, ctx):
    from .sightline import VIEWS

    raw = f.table.get("clip")
    folder = isinstance(raw, str) and raw.strip() and (f.base_dir / raw).is_dir()  # an image sequence's folder
    spec = {"clip": f.path_value("clip", required=True, kind="dir" if folder else "file"),
            "pixel_size": f.quantity("pixel_size", "length", required=True, uncertain=False, positive=True),
            "scale_factor": f.quantity("scale_factor", "dimensionless", positive=True),
            "frame_rate": f.quantity("frame_rate", "frequency", uncertain=False, positive=True),
            "region": f.string("region"),
            "mode": f.string("mode", default="correlation", choices=("correlation", "tracking")),
            "background": f.string("background", default="median", choices=("median", "none")),
            "view": f.string("view", default="volume", choices=VIEWS),
            "plume_constant": f.quantity("plume_constant", "dimensionless", positive=True),
            "tracer_to_velocity_width_ratio": f.quantity("tracer_to_velocity_width_ratio", "dimensionless",
                                                         positive=True)}
    if not f.has("plume_constant"):
        f.defaults[f.key("plume_constant")] = "uniform(3.85, 4.7), one draw for every vent (pure-plume constant k)"
    if spec["view"] == "volume" and not f.has("tracer_to_velocity_width_ratio"):
        f.defaults[f.key("tracer_to_velocity_width_ratio")] = "uniform(1.0, 1.2), one draw for every vent"
    if not f.has("view"):
        f.defaults[f.key("view")] = "volume (the camera sees the whole plume; line-of-sight correction)"
    f.mark_used("orifice")
    orifice = f.table.get("orifice")
    if not (isinstance(orifice, list) and len(orifice) == 2 and all(isinstance(v, (int, float)) for v in orifice)):
        f.error("orifice", repr(orifice), "the orifice's [column, row] in full-frame pixels, e.g. [80, 248]")
        orifice = None
    spec["orifice"] = orifice
    spec["clip_key"], spec["where"] = f.key("clip"), f.where  # how a refusal of the clip's analysis names it
    f.check_unknown()
    if spec["clip"] is not None:
        ctx.input_files[str(spec["clip"])] = "video clip"
        if _check_clip(f, spec) and _field_key(spec) is not None:
            # the clip's correlation (seconds) depends on the clip alone: begun now, on the core the file's
            # check leaves idle, when the survey command allows it (ventflux.ahead); the estimate takes it
            from functools import partial

            from .jet import clip_field

            # the settings _estimate gives analyze_jet_clip, the rest its defaults: the same field
            start_ahead(_field_key(spec), partial(clip_field, spec["clip"], frame_rate=spec["frame_rate"],
                                                  roi=spec["region"], mode=spec["mode"],
                                                  background=spec["background"]))
    return spec


def _field_key(spec):
    """What the clip's mean field depends on: the file (its path, size and time of last change) and the settings
    the survey passes to ``analyze_jet_clip``."""
    try:
        st = spec["clip"].stat()
    except OSError:
        return None
    return ("ventflux-video clip field", str(spec["clip"]), st.st_size, st.st_mtime_ns, str(spec["frame_rate"]),
            str(spec["region"]), spec["mode"], spec["background"])


def _check_clip(f, spec) -> bool:
    """Open the clip's header now, so an unreadable file, a bad region or an orifice off the frame is reported
    with the file's other problems (the run and ``--check`` accept the same files). True if the clip is usable."""
    from .frames import FrameStream

    try:
        stream = FrameStream(spec["clip"], frame_rate=spec["frame_rate"], region=spec["region"])
    except InputError as e:
        key = {"--region": "region", "--frame-rate": "frame_rate"}.get(e.field, "clip")
        f.error(key, spec.get(key) if key != "clip" else str(spec["clip"].name), e.allowed)
        return False
    h, w = stream.frame_shape
    spec["frame_shape"], spec["frame_count"] = (h, w), stream.expected_frames
    usable = True
    if stream.expected_frames is not None and stream.expected_frames < 2:
        f.error("clip", str(spec["clip"].name), f"a clip of at least 2 frames (it holds {stream.expected_frames})")
        usable = False
    if spec["orifice"] is None:
        return False
    x, y = spec["orifice"]
    if not (0 <= x <= w - 1 and 0 <= y <= h - 1):
        f.error("orifice", repr(spec["orifice"]), f"a [column, row] inside the clip's {w} x {h} frame "
                f"(column 0 to {w - 1}, row 0 to {h - 1})")
        return False
    if stream.region is not None:
        r = stream.region
        if not (r.left <= x <= r.left + r.width - 1 and r.top < y):
            f.error("orifice", repr(spec["orifice"]), f"a column inside the region ({r.left} to "
                    f"{r.left + r.width - 1}) and a row below its top ({r.top}), so the plume above it is in view")
            return False
    return usable


def _estimate(spec, vent, ctx):
    from .jet import DEFAULT_WIDTH_RATIO, analyze_jet_clip
    from .plume import DEFAULT_PLUME_CONSTANT
    from .propagation import jet_draws, part_names

    k0 = DEFAULT_PLUME_CONSTANT if spec["plume_constant"] is None else \
        float(as_float(nominal_of(spec["plume_constant"])))
    lam = spec["tracer_to_velocity_width_ratio"]
    lam0 = DEFAULT_WIDTH_RATIO if lam is None else float(as_float(nominal_of(lam)))
    ctx.progress(f"{vent}: reading {spec['clip'].name}")
    field = take_ahead(_field_key(spec))  # the clip's field if it was begun while the file was read, else None
    try:
        res = analyze_jet_clip(spec["clip"], spec["pixel_size"], tuple(spec["orifice"]), roi=spec["region"],
                               ambient_temperature=Q_(float(np.mean(ctx.ambient_temperature.to("K").magnitude)), "K"),
                               ambient_salinity=float(np.mean(ctx.ambient_salinity)), pressure=ctx.pressure,
                               latitude=ctx.site.latitude, frame_rate=spec["frame_rate"], mode=spec["mode"],
                               plume_constant=k0, view=spec["view"], width_ratio=lam0, background=spec["background"],
                               field=field)
    except InputError as e:  # what the clip gave cannot be analysed: named by the survey's key of the clip
        raise InputError(f"{spec['clip_key']} ({e.field})", e.value, e.allowed, where=spec["where"]) from None
    names = part_names(vent)  # the same names as video-jet --name: one vent, one set of streams
    mc = jet_draws(res, ctx.draws, names, spec["plume_constant"], lam, spec["scale_factor"],
                   max_unphysical=ctx.policy)
    # the run passes an ambient temperature and the site's pressure, so the heat power is there
    assert res.heat_power is not None and mc.heat_power is not None
    # corrected_profile, which analyze_jet_clip always applies, sets both factors
    assert res.profile.sightline_factor is not None and res.profile.window_factor is not None
    H0 = res.heat_power.to("W").magnitude
    H = mc.expand(mc.heat_power.to("W")).magnitude  # NaN where a draw was dropped as impossible
    row = {"vent": vent, "clip": spec["clip"].name, "pixel_size [mm]": float(spec["pixel_size"].to("mm").magnitude),
           "view": res.view, "frame_pairs": int(res.field.pairs), "frames_skipped": int(res.field.skipped_frames),
           "frames_missing": len(res.field.frame_gaps) + int(res.field.missing_frames),
           "exit_velocity [m/s]": float(res.exit_velocity.to("m/s").magnitude),
           "exit_velocity_sd [m/s]": float(np.std(mc.exit_velocity.to("m/s").magnitude, ddof=1)),
           "buoyancy_flux [m^4/s^3]": float(res.buoyancy_flux.to("m^4/s^3").magnitude),
           "buoyancy_flux_sd [m^4/s^3]": float(np.std(mc.buoyancy_flux.to("m^4/s^3").magnitude, ddof=1)),
           "virtual_origin [m]": float(res.virtual_origin.to("m").magnitude),
           "heat_power [MW]": H0 / 1e6, "plume_constant": k0,
           "sightline_factor": float(np.median(res.profile.sightline_factor)),
           "window_factor": float(np.median(res.profile.window_factor)),
           "unphysical_draws": int(mc.propagation.unphysical)}
    row.update({f"heat_power_sd_{part} [%]": 100 * share["buoyancy_flux"] for part, share in mc.parts.items()})
    figs = []
    try:
        from .outputs import profile_plot

        fig = profile_plot(res.profile, res.plume, res.exit_velocity, res.exit_velocity_sd)
        figs.append(("video_profile", fig, f"{vent}: centreline velocity against height on video, with the "
                                           "pure-plume fit w = k (F/(z − z0))^(1/3)."))
    except Exception:  # noqa: BLE001 - a figure must not sink the run
        pass
    shares = ", ".join(f"{part.replace('_', ' ')} {100 * s['buoyancy_flux']:.0f} %" for part, s in mc.parts.items())
    view = ("volume view: centreline speeds corrected for the line of sight (factor "
            f"{row['sightline_factor']:.2f}, tracer-to-velocity width ratio {lam0:g})" if res.view == "volume"
            else "sheet view: no line-of-sight correction")
    notes = [f"Video: buoyancy flux from the decay of centreline velocity with height (k = {k0:g} nominal), "
             f"heat power H = ρ c_p0 F / (g α) with TEOS-10 at the vent; {view}; window-averaging factor "
             f"{row['window_factor']:.2f}. Spread of the heat power by part (relative sd): {shares}."]
    if mc.propagation.unphysical:
        notes.append(f"Video ({vent}): {mc.propagation.unphysical} of {mc.propagation.n_draws} draws dropped as "
                     f"physically impossible (limit {mc.propagation.policy.max_share:.1%}).")
    notes += [f"Video ({vent}): {flag}" for flag in res.flags]
    return MethodEstimate(heat_power=Q_(H, "W"), nominal_heat_power=Q_(H0, "W"), rows=[row], figures=figs,
                          notes=notes)


#: The keys of ``[vent.video]`` (declared for the survey's validator and ``ventflux survey --format``).
VIDEO_KEYS = (
    SurveyKey("clip", "path", "the video clip (a video file, or a folder of numbered frames)", required=True),
    SurveyKey("pixel_size", "length", "size of one pixel at the plume's distance (formerly metres_per_pixel)",
              required=True),
    SurveyKey("scale_factor", "dimensionless", "relative error of the pixel size (e.g. \"@camera scale\" of "
              "[shared], one laser pair for every clip)", uncertain=True),
    SurveyKey("frame_rate", "frequency", "frames per second", default="the clip's own"),
    SurveyKey("region", "string", "the part of the frame analysed, \"LEFT,TOP,WIDTH,HEIGHT\" in pixels",
              default="the whole frame"),
    SurveyKey("orifice", "list", "the orifice's [column, row] in full-frame pixels, e.g. [80, 248]", required=True),
    SurveyKey("mode", "string", "how velocities are measured", choices=("correlation", "tracking"),
              default='"correlation"'),
    SurveyKey("background", "string", "background removed from each frame", choices=("median", "none"),
              default='"median"'),
    SurveyKey("view", "string", "what the camera sees: the whole plume (line-of-sight correction) or a sheet",
              choices=("volume", "sheet"), default='"volume"'),
    SurveyKey("plume_constant", "dimensionless", "pure-plume centreline constant k of w = k (F/z)^(1/3)",
              uncertain=True, default="uniform(3.85, 4.7), one draw for every vent"),
    SurveyKey("tracer_to_velocity_width_ratio", "dimensionless", "width ratio of the tracer and velocity profiles "
              "(volume view)", uncertain=True, default="uniform(1.0, 1.2), one draw for every vent"),
)

VIDEO = SurveyMethod(key="video", summary="plume velocity decay on a video clip → buoyancy flux and heat power",
                     parse=_parse, estimate=_estimate, provider="ventflux-video", keys=VIDEO_KEYS)
