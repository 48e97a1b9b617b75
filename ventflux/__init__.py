"""ventflux: heat and water discharge of seafloor hydrothermal vents.

Core estimators (orifice velocity-temperature, plume rise, diffuse-flow heat
balance) share one property layer: TEOS-10 (gsw) for ambient seawater and
IAPWS-95 (CoolProp) for hot vent fluid. All public functions take pint
quantities from ``ventflux.units``.
"""

from .units import Q_, ureg  # noqa: F401

#: The package's one version source: ``pyproject.toml`` reads it (setuptools
#: dynamic version) and plugins declare the range they support against it.
__version__ = "0.2.0"
