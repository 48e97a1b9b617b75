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

Estimators take a fluid-model *object* (``FluidModel``); ``fluid_model(name)``
here builds the core's own models. Models added by plugins (through the
``ventflux_fluid_models`` hook) are looked up by ``ventflux.registry.fluid_model``,
one layer up: this package imports nothing above ``units`` and ``errors``.
"""

from .heat import specific_heat_content, vent_fluid_state  # noqa: F401
from .models import CORE_MODELS, fluid_model  # noqa: F401
from .seawater import (  # noqa: F401
    SeawaterState,
    buoyancy_frequency_squared,
    pressure_from_depth,
    seawater_state,
)
from .ventfluid import DEFAULT_MODEL, FluidModel, IAPWS95Water  # noqa: F401
