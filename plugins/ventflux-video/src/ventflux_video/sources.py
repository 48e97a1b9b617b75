"""Velocity sources for the core estimators, callable with quantities or with the CLI's strings.

``ventflux orifice``/``diffuse`` pass ``--source-option KEY=VALUE`` strings, so
each option is converted here: ``pixel_size="0.5 mm"`` (``metres_per_pixel``,
its old name, is accepted until ventflux 0.4 with a deprecation line),
``orifice_xy="80,248"``, ``roi="0,0,160,256"``, ``frame_rate="50/s"``,
``passes="64,32,32"``, ``pairs="40"``, ``mode="tracking"``, ``view="sheet"``,
``tracer_to_velocity_width_ratio="1.1"``, ``background="none"`` (the survey's key names).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ventflux.plugin_api import Q_, InputError, parse_quantity, renamed_key, warn_deprecated

_QUANTITIES = {"pixel_size": "length", "frame_rate": "frequency", "search_half_width": "length"}
_INTS = ("gap", "pairs", "start", "stop", "exit_points")


def _options(options):
    out: dict[str, Any] = {}  # option -> value: strings, and the quantities and numbers they are read as
    for key, value in options.items():  # old spellings of a key: accepted, with one deprecation line
        new = renamed_key("source_option", key)
        if new is not None:
            warn_deprecated(key, new, "--source-option")
            if out.get(new) is None:
                out[new] = value
            continue
        if value is not None or key not in out:
            out[key] = value
    for key, dim in _QUANTITIES.items():
        if isinstance(out.get(key), str):
            out[key] = parse_quantity(out[key], dim, key)
    for key in _INTS:
        if isinstance(out.get(key), str):
            try:
                out[key] = int(out[key])
            except ValueError:
                raise InputError(key, out[key], "a whole number") from None
    if isinstance(out.get("passes"), str):
        from .cli import parse_windows

        out["passes"] = parse_windows(out["passes"], "passes")
    for key in ("overlap", "plume_constant", "tracer_to_velocity_width_ratio"):
        if isinstance(out.get(key), str):
            try:
                out[key] = float(out[key])
            except ValueError:
                raise InputError(key, out[key], "a number") from None
    if isinstance(out.get("orifice_xy"), str):
        from .cli import _pair

        out["orifice_xy"] = _pair(out["orifice_xy"], "orifice_xy")
    return out


def _clip(clip, options):
    clip = clip if clip is not None else options.pop("path", None)
    if clip is None:
        raise InputError("clip", "(missing)", "the clip to measure, e.g. --source-option clip=jet.mp4")
    if "region" in options and "roi" not in options:
        options["roi"] = options.pop("region")
    return clip


def _field(path, opts, default_mode):
    from .averaging import mean_field_of_clip
    from .frames import FrameStream

    stream = FrameStream(path, frame_rate=opts.get("frame_rate"), region=opts.get("roi"),
                         start=opts.get("start", 0), stop=opts.get("stop"))
    return mean_field_of_clip(stream, opts.get("mode", default_mode), opts.get("passes", (64, 32, 32)),
                              opts.get("overlap", 0.5), opts.get("gap", 1), opts.get("pairs"),
                              background=opts.get("background", "median"))


def exit_velocity_source(clip=None, pixel_size=None, orifice_xy=None, **options):
    """Exit velocity of a jet and its sd from a clip (feeds the orifice estimator).

    It is the *centreline* speed at the orifice: with ``ventflux orifice`` give
    ``--velocity-kind centerline`` so the profile factor turns it into an area mean.
    The speed is corrected as ``video-jet`` corrects it (window averaging, and
    the line of sight for the default ``view="volume"``), and its standard
    deviation adds, to the extrapolation's, the spread of the line-of-sight
    factor over the default width-ratio range and the correlation's own
    error (``propagation``).
    """
    from .jet import (DEFAULT_WIDTH_RATIO, centreline_profile, check_scale, corrected_profile, exit_velocity,
                      narrow_jet)
    from .sightline import DEFAULT_WIDTH_RATIO_RANGE, check_view, line_of_sight_factor

    path = _clip(clip, options)
    opts = _options(dict(options, pixel_size=pixel_size, orifice_xy=orifice_xy))
    if opts.get("pixel_size") is None or opts.get("orifice_xy") is None:
        raise InputError("pixel_size/orifice_xy", "(missing)", "both options for a video exit velocity")
    mpp = check_scale(opts["pixel_size"], "pixel_size")
    view = check_view(opts.get("view", "volume"))
    lam = opts.get("tracer_to_velocity_width_ratio", DEFAULT_WIDTH_RATIO)
    field = _field(path, opts, "correlation")
    passes = opts.get("passes", (64, 32, 32))
    profile = corrected_profile(centreline_profile(field, mpp, opts["orifice_xy"], opts.get("search_half_width")),
                                field.interval, mpp, passes[-1], view, lam, field.pattern_width)
    points = opts.get("exit_points", 4)
    reason = narrow_jet(profile, passes[-1], points)
    if reason:
        import sys

        print(f"warning: video-exit-velocity: {reason}", file=sys.stderr)
    w0, sd = exit_velocity(profile, points)
    rel = [float(sd / w0)] if w0.magnitude else [0.0]
    if view == "volume":  # half the factor's change over the default range, as a standard deviation
        d = (w0 / (mpp / field.interval)).to("dimensionless").magnitude
        lo, hi = (line_of_sight_factor(r, d, field.pattern_width) for r in DEFAULT_WIDTH_RATIO_RANGE)
        rel.append(float(abs(lo - hi) / (lo + hi)) / np.sqrt(3))  # uniform: half-width over sqrt(3)
    return w0, abs(w0) * float(np.sqrt(np.sum(np.square(rel))))


def mean_upflow_source(clip=None, pixel_size=None, **options):
    """Mean upward velocity over a region and its standard error (feeds the diffuse estimator).

    The mean is over the grid points of the time-averaged field; the standard
    error is the points' spread over the square root of their number.
    """
    from .jet import check_scale

    path = _clip(clip, options)
    opts = _options(dict(options, pixel_size=pixel_size))
    if opts.get("pixel_size") is None:
        raise InputError("pixel_size", "(missing)", "a pixel size, e.g. '0.5 mm'")
    mpp = check_scale(opts["pixel_size"], "pixel_size")
    field = _field(path, opts, "tracking")
    w = field.velocity(mpp)[1].to("m/s").magnitude
    w = w[np.isfinite(w)]
    if w.size == 0:
        raise InputError("clip", path, "a clip with tracked motion in the region")
    se = float(np.std(w, ddof=1) / np.sqrt(w.size)) if w.size > 1 else 0.0
    return Q_(float(np.mean(w)), "m/s"), Q_(se, "m/s")
