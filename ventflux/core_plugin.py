"""The core's own hook implementations: its methods, fluid models, readers and commands.

Each command lives in its own module under ``ventflux.cli`` with functions
``configure(parser)`` and ``run(args)``, and optionally ``METHODS`` (a list of
``registry.Method``). Commands are described here, by name and help, and
their modules are imported only when the command is chosen (``registry.Deferred``),
so ``ventflux --help`` stays light.
"""

from __future__ import annotations

import importlib

from .hookspecs import hookimpl
from .registry import FluidModelInfo, deferred_command

# (name, one-line help, module holding configure and run)
_COMMANDS = (
    ("methods", "list estimation methods, fluid models and velocity sources, and who provides each",
     "ventflux.cli.methods"),
    ("orifice", "heat, mass and volume discharge of one vent orifice", "ventflux.cli.orifice"),
    ("plume-rise", ("heat power from a plume's rise height in a measured stratification "
                    "(or rise height from heat power)"), "ventflux.cli.plume"),
    ("diffuse", "heat and water discharge of diffuse-flow patches (TEOS-10 enthalpy), with scale-up to mapped areas",
     "ventflux.cli.diffuse"),
    ("summarize", "water throughput, reservoir lifetime and size, ridge-flank heat deficit", "ventflux.cli.summarize"),
    ("survey", "run a whole vent-field survey: totals, split, method comparison, reservoirs, report",
     "ventflux.cli.survey"),
)


def _modules():
    return [importlib.import_module(module) for _, _, module in _COMMANDS]


@hookimpl
def ventflux_commands():
    return [deferred_command(name, help_, module) for name, help_, module in _COMMANDS]


@hookimpl
def ventflux_estimation_methods():
    return [meth for m in _modules() for meth in getattr(m, "METHODS", [])]


@hookimpl
def ventflux_fluid_models():
    from functools import partial

    from . import properties

    summaries = {
        properties.DEFAULT_MODEL: ("pure water, IAPWS-95 (explicit Helmholtz evaluation), "
                                   "with a cached interpolation table"),
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
