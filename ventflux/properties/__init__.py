"""The shared property layer.

* ``seawater``: ambient seawater from TEOS-10 (gsw).
* ``ventfluid``: hot vent fluid from IAPWS-95 (CoolProp), pure water.
* ``heat``: the heat a vent fluid carries, an enthalpy difference at in-situ
  pressure with one fluid model at both ends.

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
