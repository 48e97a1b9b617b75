"""ventflux-video's hook implementations: commands, a video reader and velocity sources."""

from __future__ import annotations

from ventflux.plugin_api import hookimpl
from ventflux.plugin_api import Method, Reader, VelocitySource


@hookimpl
def ventflux_commands():
    from .cli import COMMANDS

    return COMMANDS


@hookimpl
def ventflux_estimation_methods():
    return [Method(name="plume-velocity-decay",
                   summary="buoyancy flux and heat power from the decay of a plume's centreline velocity with "
                           "height in a video (pure-plume theory with a fitted virtual origin)",
                   estimates="heat power", inputs=("clip", "pixel size", "orifice position", "ambient seawater"),
                   command="video-jet")]


def _read_frames(path, **options):
    from .frames import FrameStream

    return FrameStream(path, **options)


@hookimpl
def ventflux_input_readers():
    from .frames import IMAGE_SUFFIXES, VIDEO_SUFFIXES

    return [Reader(name="video-frames", kind="video", suffixes=VIDEO_SUFFIXES + IMAGE_SUFFIXES, read=_read_frames)]


@hookimpl
def ventflux_velocity_sources():
    from .sources import exit_velocity_source, mean_upflow_source

    return [
        VelocitySource(name="video-exit-velocity",
                       summary="jet centreline velocity from a clip, extrapolated to the orifice (use "
                               "--velocity-kind centerline; options: clip, pixel_size, orifice_xy, roi, "
                               "frame_rate, passes, pairs, exit_points, view, tracer_to_velocity_width_ratio, "
                               "background)",
                       feeds=("orifice",), estimate=exit_velocity_source),
        VelocitySource(name="video-mean-upflow",
                       summary="mean upward velocity over a region of a clip, by particle tracking by default "
                               "(options: clip, pixel_size, roi, frame_rate, mode, pairs)",
                       feeds=("diffuse",), estimate=mean_upflow_source),
    ]


@hookimpl
def ventflux_survey_methods():
    from .survey import VIDEO

    return [VIDEO]
