"""Survey method ``[vent.video]``: a vent's heat power from the decay of its plume's velocity on video.

The clip is reduced once (``jet.analyze_jet_clip``) to a buoyancy flux with its
fit uncertainty, and the heat power follows from TEOS-10 at the vent. The
Monte Carlo draws carry two errors: the fit's (independent for each clip)
and the pixel scale's. Velocities and heights both scale with the pixel
size s, so the buoyancy flux F ∝ w³ z goes as s⁴; a camera or laser scaler
used for several clips is declared once under ``[shared]`` and referred to
by ``scale_factor = "@name"``, so its error is common to all of them.
"""

from __future__ import annotations

import numpy as np
from ventflux.plugin_api import InputError
from ventflux.plugin_api import MethodEstimate, SurveyMethod
from ventflux.plugin_api import as_float, resolve
from ventflux.plugin_api import Q_


def _parse(f, ctx):
    from .plume import DEFAULT_PLUME_CONSTANT

    spec = {"clip": f.path_value("clip", required=True),
            "pixel_size": f.quantity("pixel_size", "length", required=True, uncertain=False, positive=True),
            "scale_factor": f.quantity("scale_factor", "dimensionless", positive=True),
            "frame_rate": f.quantity("frame_rate", "frequency", uncertain=False, positive=True),
            "region": f.string("region"),
            "mode": f.string("mode", default="correlation", choices=("correlation", "tracking")),
            "plume_constant": f.quantity("plume_constant", "dimensionless", positive=True)}
    if spec["plume_constant"] is None and "plume_constant" not in f.table:
        spec["plume_constant"] = Q_(DEFAULT_PLUME_CONSTANT, "dimensionless")
        f.defaults[f.key("plume_constant")] = f"{DEFAULT_PLUME_CONSTANT} (pure-plume centreline constant k)"
    f.used.add("orifice")
    orifice = f.table.get("orifice")
    if not (isinstance(orifice, list) and len(orifice) == 2 and all(isinstance(v, (int, float)) for v in orifice)):
        f.error("orifice", repr(orifice), "the orifice's [column, row] in full-frame pixels, e.g. [80, 248]")
        orifice = None
    spec["orifice"] = orifice
    f.check_unknown()
    if spec["clip"] is not None:
        ctx.input_files[str(spec["clip"])] = "video clip"
        try:  # open the clip now so an unreadable file or a bad region is reported with the rest
            from .frames import FrameStream

            FrameStream(spec["clip"], frame_rate=spec["frame_rate"], region=spec["region"])
        except InputError as e:
            f.error("clip", str(spec["clip"].name), e.allowed)
    return spec


def _estimate(spec, vent, ctx):
    from .jet import analyze_jet_clip

    from ventflux.plugin_api import nominal_of

    n = ctx.draws.n_draws
    k0 = float(as_float(nominal_of(spec["plume_constant"])))
    ctx.progress(f"{vent}: reading {spec['clip'].name}")
    res = analyze_jet_clip(spec["clip"], spec["pixel_size"], tuple(spec["orifice"]), roi=spec["region"],
                           ambient_temperature=Q_(float(np.mean(ctx.ambient_temperature.to("K").magnitude)), "K"),
                           ambient_salinity=float(np.mean(ctx.ambient_salinity)), pressure=ctx.pressure,
                           latitude=ctx.site.latitude, frame_rate=spec["frame_rate"], mode=spec["mode"],
                           plume_constant=k0)
    H0 = res.heat_power.to("W").magnitude
    rel = float(res.heat_power_sd.to("W").magnitude / H0) if res.heat_power_sd is not None else 0.0
    from ventflux.plugin_api import Uncertain

    fit = resolve(Uncertain("lognormal", 1.0, float(np.exp(rel)), "dimensionless") if rel > 0
                  else Q_(1.0, "dimensionless"), f"{vent}/video/fit", ctx.draws)
    H = H0 * np.broadcast_to(as_float(fit), (n,))
    # w = k (F/z)^(1/3), so F = (w/k)^3 z: an uncertain (typically shared) k scales F as k^-3.
    k = as_float(resolve(spec["plume_constant"], f"{vent}/video/plume_constant", ctx.draws))
    H = H * (k0 / np.broadcast_to(k, (n,))) ** 3
    if spec["scale_factor"] is not None:
        s = as_float(resolve(spec["scale_factor"], f"{vent}/video/scale_factor", ctx.draws))
        H = H * np.broadcast_to(s, (n,)) ** 4
    row = {"vent": vent, "clip": spec["clip"].name, "pixel_size [mm]": float(spec["pixel_size"].to("mm").magnitude),
           "frame_pairs": int(res.field.pairs), "frames_skipped": int(res.field.skipped_frames),
           "exit_velocity [m/s]": float(res.exit_velocity.to("m/s").magnitude),
           "exit_velocity_sd [m/s]": float(res.exit_velocity_sd.to("m/s").magnitude),
           "buoyancy_flux [m^4/s^3]": float(res.buoyancy_flux.to("m^4/s^3").magnitude),
           "buoyancy_flux_sd [m^4/s^3]": float(res.buoyancy_flux_sd.to("m^4/s^3").magnitude),
           "virtual_origin [m]": float(res.virtual_origin.to("m").magnitude),
           "heat_power [MW]": H0 / 1e6, "plume_constant": k0}
    figs = []
    try:
        from .outputs import profile_figure

        fig = profile_figure(res.profile, res.plume, res.exit_velocity, res.exit_velocity_sd)
        figs.append(("video_profile", fig, f"{vent}: centreline velocity against height on video, with the "
                                           "pure-plume fit w = k (F/(z − z0))^(1/3)."))
    except Exception:  # noqa: BLE001 - a figure must not sink the run
        pass
    return MethodEstimate(heat_power=Q_(H, "W"), nominal_heat_power=Q_(H0, "W"), rows=[row], figures=figs,
                          notes=["Video: buoyancy flux from the decay of centreline velocity with height "
                                 f"(k = {k0:g}), heat power H = ρ c_p0 F / (g α) with TEOS-10 at "
                                 "the vent."])


VIDEO = SurveyMethod(key="video", summary="plume velocity decay on a video clip → buoyancy flux and heat power",
                     parse=_parse, estimate=_estimate, provider="ventflux-video")
