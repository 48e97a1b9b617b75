"""Plugin discovery and the description objects the hooks return.

The core registers its own methods through the same hooks as any plugin
(``ventflux.core_plugin``), so ``ventflux methods`` lists both alike.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass, field
from importlib import metadata
from typing import Callable

import pluggy

from . import hookspecs


@dataclass(frozen=True)
class Method:
    """An estimation method: its name, what it gives and what it needs."""

    name: str
    summary: str
    estimates: str = "heat power"
    inputs: tuple[str, ...] = ()
    command: str | None = None
    provider: str = "ventflux"


@dataclass(frozen=True)
class FluidModelInfo:
    """An equation of state for vent fluid, built on demand by ``factory()``."""

    name: str
    summary: str
    factory: Callable
    provider: str = "ventflux"


@dataclass(frozen=True)
class Reader:
    """A reader of one kind of field data (``kind``) from files with ``suffixes``."""

    name: str
    kind: str
    suffixes: tuple[str, ...]
    read: Callable
    provider: str = "ventflux"


@dataclass(frozen=True)
class VelocitySource:
    """A measured velocity: ``feeds`` lists the estimators that accept it."""

    name: str
    summary: str
    feeds: tuple[str, ...]
    estimate: Callable
    provider: str = "ventflux"


@dataclass(frozen=True)
class Command:
    """A ``ventflux`` subcommand."""

    name: str
    help: str
    configure: Callable
    run: Callable
    provider: str = "ventflux"
    aliases: tuple[str, ...] = field(default_factory=tuple)


class Deferred:
    """A callable named by module and attribute, imported on its first call.

    Command descriptions use it for ``configure`` and ``run`` so that listing
    the commands (``ventflux --help``) imports none of their modules, e.g.
    ``Command("orifice", "...", configure=Deferred("ventflux.cli.orifice", "configure"), run=...)``.
    """

    __slots__ = ("attribute", "module")

    def __init__(self, module: str, attribute: str):
        self.module = module
        self.attribute = attribute

    def __call__(self, *args, **kwargs):
        import importlib

        return getattr(importlib.import_module(self.module), self.attribute)(*args, **kwargs)

    def __repr__(self):
        return f"Deferred({self.module!r}, {self.attribute!r})"


def deferred_command(name: str, help: str, module: str, aliases: tuple[str, ...] = (),
                     provider: str = "ventflux") -> Command:
    """A ``Command`` whose ``configure`` and ``run`` are module ``module``'s functions of those names, imported on use."""
    return Command(name=name, help=help, configure=Deferred(module, "configure"), run=Deferred(module, "run"),
                   provider=provider, aliases=tuple(aliases))


@functools.lru_cache(maxsize=1)
def plugin_manager() -> pluggy.PluginManager:
    """The process-wide plugin manager, core plus every installed plugin."""
    pm = pluggy.PluginManager(hookspecs.PROJECT)
    pm.add_hookspecs(hookspecs)
    from . import core_plugin

    pm.register(core_plugin, name="ventflux")
    # Load plugins one by one: a broken plugin is reported, not fatal, so the
    # core and the other plugins keep working.
    for ep in metadata.entry_points(group=hookspecs.PROJECT):
        if pm.get_plugin(ep.name) is not None or pm.is_blocked(ep.name):
            continue
        try:
            plugin = ep.load()
            pm.register(plugin, name=ep.name)
        except Exception as exc:  # noqa: BLE001 - any failure of third-party code
            BROKEN_PLUGINS[ep.name] = f"{type(exc).__name__}: {exc}"
            warnings.warn(f"ventflux plugin '{ep.name}' ({ep.value}) failed to load and is skipped: "
                          f"{type(exc).__name__}: {exc}", RuntimeWarning, stacklevel=2)
    return pm


#: Plugins whose entry point failed to load: name -> reason.
BROKEN_PLUGINS: dict[str, str] = {}


def _collect(hook_name: str):
    pm = plugin_manager()
    out = []
    for impl in getattr(pm.hook, hook_name).get_hookimpls():
        items = getattr(impl.plugin, hook_name)() or []
        dist = pm.get_name(impl.plugin)
        for item in items:
            out.append(_with_provider(item, dist))
    return out


def _with_provider(item, plugin_name):
    from dataclasses import replace

    if getattr(item, "provider", "ventflux") != "ventflux" or plugin_name == "ventflux":
        return item
    dist = _distribution_for(plugin_name)
    return replace(item, provider=dist)


def _distribution_for(plugin_name: str) -> str:
    for ep in metadata.entry_points(group=hookspecs.PROJECT):
        if ep.name == plugin_name and ep.dist is not None:
            return ep.dist.name
    return plugin_name


def methods() -> list[Method]:
    return _collect("ventflux_estimation_methods")


def fluid_models() -> list[FluidModelInfo]:
    return _collect("ventflux_fluid_models")


def readers() -> list[Reader]:
    return _collect("ventflux_input_readers")


def velocity_sources() -> list[VelocitySource]:
    return _collect("ventflux_velocity_sources")


def commands() -> list[Command]:
    return _collect("ventflux_commands")


def survey_methods() -> list:
    return _collect("ventflux_survey_methods")


def survey_sections() -> list:
    return _collect("ventflux_survey_sections")


@functools.lru_cache(maxsize=None)
def fluid_model(name: str):
    """The fluid model called ``name``, built once (``InputError`` listing the known ones if absent)."""
    from .errors import InputError

    known = {m.name: m for m in fluid_models()}
    if name not in known:
        raise InputError("fluid model", name, "one of " + ", ".join(sorted(known)))
    return known[name].factory()


def velocity_source(name: str) -> VelocitySource:
    from .errors import InputError

    known = {s.name: s for s in velocity_sources()}
    if name not in known:
        raise InputError("velocity source", name, "one of " + (", ".join(sorted(known)) or "(none installed)"))
    return known[name]


def distribution_versions() -> dict[str, str]:
    """Versions of ventflux and of every installed plugin distribution (for provenance)."""
    out = {"ventflux": _version("ventflux")}
    for ep in metadata.entry_points(group=hookspecs.PROJECT):
        if ep.dist is not None:
            out[ep.dist.name] = ep.dist.version
    return out


def _version(dist: str) -> str:
    try:
        return metadata.version(dist)
    except metadata.PackageNotFoundError:
        return "unknown"
