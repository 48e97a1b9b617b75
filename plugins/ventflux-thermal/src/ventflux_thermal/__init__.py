"""ventflux-thermal: sediment heat-flow probes, advective flux from temperature profiles, diffuse-flow arrays.

Library entry points for scripts:

* ``ventflux_thermal.probe.reduce_penetration(record_path, sensor_depths=None, ...)`` → heat flow ± SE
* ``ventflux_thermal.advection.fit_advection(depth, temperature, conductivity, pressure=...)``
* ``ventflux_thermal.array.array_anomalies(time, temperature, reference, sensors, patches=None)``
"""

from .advection import fit_advection, profile_velocity  # noqa: F401
from .array import array_anomalies  # noqa: F401
from .probe import ProbeConstants, reduce_penetration  # noqa: F401

__version__ = "0.2.0"  # the one version source (pyproject.toml reads it)
