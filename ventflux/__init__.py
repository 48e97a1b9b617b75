"""ventflux: heat and water discharge of seafloor hydrothermal vents.

Core estimators (orifice velocity-temperature, plume rise, diffuse-flow heat
balance) share one property layer: TEOS-10 (gsw) for ambient seawater and
IAPWS-95 (CoolProp) for hot vent fluid. All public functions take pint
quantities from ``ventflux.units``.
"""

from importlib import metadata as _metadata

from .units import Q_, ureg  # noqa: F401

try:
    __version__ = _metadata.version("ventflux")
except _metadata.PackageNotFoundError:  # running from a source tree
    __version__ = "0.1.0"
