"""ventflux-thermal: sediment heat-flow probes, advective flux from temperature profiles, diffuse-flow arrays.

Library entry points for scripts:

* ``ventflux_thermal.probe.reduce_penetration(record_path, sensor_depths=None, ...)`` → heat flow ± SE
* ``ventflux_thermal.station.reduce_station(record_path, ...)`` → every penetration of a continuous record
* ``ventflux_thermal.advection.fit_advection(depth, temperature, conductivity, pressure=...)``
* ``ventflux_thermal.array.array_anomalies(time, temperature, reference, sensors, patches=None)``

The names are imported on first use, so that loading the plugin (the command
registration) does not import SciPy or Matplotlib.
"""

from __future__ import annotations

import importlib

__version__ = "0.2.0"  # the one version source (pyproject.toml reads it)

_LAZY = {"fit_advection": "advection", "profile_velocity": "advection", "array_anomalies": "array",
         "ProbeConstants": "constants", "reduce_penetration": "probe", "reduce_station": "station"}


def __getattr__(name):
    if name in _LAZY:
        return getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = ["ProbeConstants", "array_anomalies", "fit_advection", "profile_velocity", "reduce_penetration",
           "reduce_station"]
