"""``ventflux methods``: the estimation methods, fluid models and velocity sources installed."""

from __future__ import annotations

from ..registry import BROKEN_PLUGINS, fluid_models, methods, velocity_sources
from .output import add_output_options, print_json


def configure(p):
    add_output_options(p)


def run(args) -> int:
    ms = sorted(methods(), key=lambda m: m.name)
    fs = sorted(fluid_models(), key=lambda f: f.name)
    vs = sorted(velocity_sources(), key=lambda v: v.name)
    if args.json:
        print_json({
            "methods": [{"name": m.name, "provided_by": m.provider, "estimates": m.estimates,
                         "command": m.command, "summary": m.summary} for m in ms],
            "fluid_models": [{"name": f.name, "provided_by": f.provider, "summary": f.summary} for f in fs],
            "velocity_sources": [{"name": v.name, "provided_by": v.provider, "feeds": list(v.feeds),
                                  "summary": v.summary} for v in vs],
            "plugins_failed_to_load": dict(BROKEN_PLUGINS),
        })
        return 0
    _section("Estimation methods", [(m.name, m.provider, m.summary) for m in ms])
    _section("Vent-fluid models", [(f.name, f.provider, f.summary) for f in fs])
    _section("Velocity sources", [(v.name, v.provider, f"feeds {', '.join(v.feeds)}: {v.summary}") for v in vs])
    if BROKEN_PLUGINS:
        _section("Plugins that failed to load", [(k, "", v) for k, v in sorted(BROKEN_PLUGINS.items())])
    return 0


def _section(title, rows):
    print(title)
    if not rows:
        print("  (none installed)")
        return
    w0 = max(len(r[0]) for r in rows + [("name", "")])
    w1 = max(len(r[1]) for r in rows + [("", "provided by")])
    print(f"  {'name':<{w0}}  {'provided by':<{w1}}  what it does")
    for a, b, c in rows:
        print(f"  {a:<{w0}}  {b:<{w1}}  {c}")
