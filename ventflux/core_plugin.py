"""The core's own hook implementations: its methods, fluid models, readers and commands.

Each command lives in its own module under ``ventflux.cli`` and exposes
``COMMAND`` (a ``registry.Command``) and optionally ``METHODS`` (a list of
``registry.Method``).
"""

from __future__ import annotations

import importlib

from .hookspecs import hookimpl
from .registry import FluidModelInfo

_COMMAND_MODULES = (
    "ventflux.cli.methods",
    "ventflux.cli.orifice",
    "ventflux.cli.plume",
    "ventflux.cli.diffuse",
    "ventflux.cli.summarize",
    "ventflux.cli.survey",
)


def _modules():
    return [importlib.import_module(name) for name in _COMMAND_MODULES]


@hookimpl
def ventflux_commands():
    return [m.COMMAND for m in _modules() if hasattr(m, "COMMAND")]


@hookimpl
def ventflux_estimation_methods():
    return [meth for m in _modules() for meth in getattr(m, "METHODS", [])]


@hookimpl
def ventflux_fluid_models():
    from functools import partial

    from . import properties

    summaries = {
        properties.DEFAULT_MODEL: "pure water, IAPWS-95 (CoolProp), with a cached interpolation table",
        "iapws95-water-direct": "pure water, IAPWS-95 (CoolProp), every point solved directly (slow, exact)",
    }
    return [FluidModelInfo(name=name, summary=summaries[name], factory=partial(properties.fluid_model, name))
            for name in properties.CORE_MODELS]


@hookimpl
def ventflux_input_readers():
    return []


@hookimpl
def ventflux_velocity_sources():
    return []


@hookimpl
def ventflux_survey_methods():
    from .survey import builtin

    return list(builtin.METHODS)


@hookimpl
def ventflux_survey_sections():
    from .survey import builtin

    return list(builtin.SECTIONS)
