"""The core's vent-fluid models by name (plugins' models: ``ventflux.registry.fluid_model``)."""

from __future__ import annotations

import functools

from ..errors import InputError
from .ventfluid import DEFAULT_MODEL, FluidModel, IAPWS95Water

#: The core's fluid models by name: the arguments each is built with.
CORE_MODELS = {
    DEFAULT_MODEL: {"tabulated": True},
    "iapws95-water-direct": {"tabulated": False},
}


@functools.cache
def fluid_model(name: str = DEFAULT_MODEL) -> FluidModel:
    """One of the core's fluid models by name, built once (default pure water, IAPWS-95).

    Estimators take the model object; plugins' models are found through
    ``ventflux.registry.fluid_model``.
    """
    if name not in CORE_MODELS:
        raise InputError("fluid model", name, "one of " + ", ".join(CORE_MODELS)
                         + " (models from plugins: ventflux.registry.fluid_model)")
    return IAPWS95Water(**CORE_MODELS[name])
