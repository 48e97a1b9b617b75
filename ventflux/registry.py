"""Plugin discovery and the description objects the hooks return.

The core registers its own methods through the same hooks as any plugin
(``ventflux.core_plugin``), so ``ventflux methods`` lists both alike.
"""

from __future__ import annotations

import functools
import importlib
import warnings
from dataclasses import dataclass, field
from importlib import metadata
from typing import Callable

import pluggy

from . import hookspecs
from .errors import InputError
from .uncertainty import Uncertain
from .units import require_dimension


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
    """A ``Command`` whose ``configure`` and ``run`` are ``module``'s functions of those names, imported on use."""
    return Command(name=name, help=help, configure=Deferred(module, "configure"), run=Deferred(module, "run"),
                   provider=provider, aliases=tuple(aliases))


#: Module holding the core's own hook implementations.
CORE_PLUGIN = "ventflux.core_plugin"


@functools.lru_cache(maxsize=1)
def plugin_manager() -> pluggy.PluginManager:
    """The process-wide plugin manager, core plus every installed plugin."""
    pm = pluggy.PluginManager(hookspecs.PROJECT)
    pm.add_hookspecs(hookspecs)
    # The core's own hooks are loaded by name, like a plugin's: this module sits
    # below the commands and the survey that the core plugin collects, so it
    # must not import them (``tests/test_layers.py`` checks the import graph).
    pm.register(importlib.import_module(CORE_PLUGIN), name="ventflux")
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


@functools.cache
def fluid_model(name: str):
    """The fluid model called ``name``, built once (``InputError`` listing the known ones if absent)."""
    known = {m.name: m for m in fluid_models()}
    if name not in known:
        raise InputError("fluid model", name, "one of " + ", ".join(sorted(known)))
    return known[name].factory()


def velocity_source(name: str) -> VelocitySource:
    known = {s.name: s for s in velocity_sources()}
    if name not in known:
        raise InputError("velocity source", name, "one of " + (", ".join(sorted(known)) or "(none installed)"))
    return known[name]


def velocity_from_source(name: str, *args, **options):
    """Velocity from a registered velocity source (a plugin's measurement).

    Parameters
    ----------
    name : str
        Name of a source from ``ventflux.registry.velocity_sources()`` that
        feeds ``"diffuse"``.
    *args, **options
        Passed to the source's ``estimate`` callable (e.g. the path of a
        temperature-depth profile and its options).

    Returns
    -------
    pint.Quantity or Uncertain
        The velocity; an ``Uncertain`` (normal) when the source reports a
        standard uncertainty.
    """
    import inspect

    src = velocity_source(name)
    if "diffuse" not in src.feeds:
        raise InputError("velocity source", name, "a source that feeds the diffuse estimator")
    try:
        sig = inspect.signature(src.estimate)
    except (TypeError, ValueError):  # a builtin without a signature: call it as it is
        sig = None
    if sig is not None:
        try:
            sig.bind(*args, **options)
        except TypeError as exc:
            accepted = ", ".join(p for p in sig.parameters if p not in ("args", "kwargs"))
            raise InputError(f"velocity source {name}", ", ".join([*map(str, args), *options]) or "(nothing)",
                             f"its input and options ({accepted}): {exc}") from None
    out = src.estimate(*args, **options)
    if isinstance(out, Uncertain):
        return out
    if isinstance(out, tuple):
        v, sd = out[0], out[1]
        v = require_dimension(v, "velocity", f"velocity from {name}")
        if sd is None:
            return v
        return Uncertain("normal", float(v.to("m/s").magnitude), float(sd.to("m/s").magnitude), "m/s")
    return require_dimension(out, "velocity", f"velocity from {name}")


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
