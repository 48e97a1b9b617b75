"""Hook implementations of ventflux-watercolumn: the command, the method and the survey section.

Registration imports nothing heavy: the command module loads only argparse helpers; xarray, gsw and
matplotlib are imported where they are used.
"""

from __future__ import annotations

from ventflux.plugin_api import hookimpl
from ventflux.plugin_api import Command, Method, Reader


@hookimpl
def ventflux_commands():
    from . import cli

    return [Command(name="plume-layer", help="plume layer in a tow-yo or vehicle section (TEOS-10 anomalies, "
                                             "top/core/bottom, rise heights) and the heat flux across it",
                    configure=cli.configure, run=cli.run, provider="ventflux-watercolumn")]


@hookimpl
def ventflux_estimation_methods():
    return [Method(name="water-column", summary="background θ–σ0 fit, Δθ and optical anomalies, plume-layer "
                   "detection; ρ c_p0 ΔΘ u·n over the section, bootstrapped over profiles",
                   estimates="plume rise height, heat flux across a control surface", command="plume-layer",
                   inputs=("tow-yo or vehicle section (CSV or CF netCDF)", "current", "vent depth"),
                   provider="ventflux-watercolumn")]


@hookimpl
def ventflux_input_readers():
    from .reading import SUFFIXES, read_section

    return [Reader(name="water-column section", kind="water-column section", suffixes=SUFFIXES,
                   read=read_section, provider="ventflux-watercolumn"),
            Reader(name="plume-layer rise height", kind="rise height", suffixes=SUFFIXES, read=_rise_height,
                   provider="ventflux-watercolumn")]


@hookimpl
def ventflux_survey_sections():
    from .survey import WATER_COLUMN

    return [WATER_COLUMN]


def _rise_height(path, **options):
    from .survey import rise_height  # imported on use: registration stays light

    return rise_height(path, **options)
