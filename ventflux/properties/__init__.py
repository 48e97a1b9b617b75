"""The shared property layer.

* ``seawater``: ambient seawater from TEOS-10 (gsw).
* ``seawater_heat``: heat content and density of seawater from its freezing
  point to boiling: TEOS-10 to 40 °C, IAPWS-95 water with IAPWS-08's saline
  part to 80 °C, IAPWS-95 water with the saline part held beyond, joined
  continuously; every result names its model.
* ``ventfluid``: hot vent fluid from IAPWS-95 (CoolProp), pure water.
* ``heat``: the heat a vent fluid carries, an enthalpy difference at in-situ
  pressure with one fluid model at both ends, and the one constant-c_p
  shortcut shown beside it (TEOS-10's c_p0).

Fluid models are found through the ``ventflux_fluid_models`` hook, so a brine
equation of state can be added by a plugin; ``fluid_model(name)`` builds one.
"""

from .heat import specific_heat_content, vent_fluid_state  # noqa: F401
from .seawater import (  # noqa: F401
    SeawaterState,
    buoyancy_frequency_squared,
    pressure_from_depth,
    seawater_state,
)
from .ventfluid import DEFAULT_MODEL, FluidModel, IAPWS95Water  # noqa: F401


def fluid_model(name: str = DEFAULT_MODEL) -> FluidModel:
    """Build a fluid model by name (the core's or a plugin's)."""
    from ..registry import fluid_model as _build

    return _build(name)
