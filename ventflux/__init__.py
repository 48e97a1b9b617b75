"""ventflux: heat and water discharge of seafloor hydrothermal vents.

Core estimators (orifice velocity-temperature, plume rise, diffuse-flow heat
balance) share one property layer: TEOS-10 (gsw) for ambient seawater and
IAPWS-95 (CoolProp) for hot vent fluid. All public functions take pint
quantities from ``ventflux.units``.

The Python API, for scripts and notebooks::

    import ventflux as vf

    r = vf.orifice_discharge(vf.Q_(352, "degC"), vf.Q_(1.4, "m/s"), vf.Q_(12, "cm"),
                             pressure=vf.Q_(26, "MPa"), ambient_temperature=vf.Q_(2.1, "degC"))
    r                      # median and 5-95 % of every output, with units
    r.to_dataframe()       # pandas; .to_xarray(): draws along a ``draw`` dimension

    survey = vf.Survey.from_file("survey.toml")
    result = survey.run()

Every name in ``__all__`` is loaded on first use (module ``__getattr__``),
so that ``import ventflux`` and ``ventflux --help`` stay light.
"""

#: The package's one version source: ``pyproject.toml`` reads it (setuptools
#: dynamic version) and plugins declare the range they support against it.
__version__ = "0.2.0"

#: Public name → module it lives in (relative to this package).
_API = {
    # units, uncertainty and errors
    "ureg": ".units",
    "Q_": ".units",
    "check_units": ".units",
    "Uncertain": ".uncertainty",
    "normal": ".uncertainty",
    "uniform": ".uncertainty",
    "lognormal": ".uncertainty",
    "Summary": ".uncertainty",
    "InputError": ".errors",
    "InputErrors": ".errors",
    # focused vents: orifice velocity and temperature
    "orifice_discharge": ".orifice",
    "orifice_discharge_uncertain": ".orifice",
    "OrificeDischarge": ".orifice",
    "UncertainDischarge": ".orifice",
    # plumes: rise height <-> heat power
    "heat_power_from_rise_height": ".plume.inversion",
    "rise_height_from_heat_power": ".plume.inversion",
    "PlumeRiseResult": ".plume.inversion",
    "plume_source_from_orifice": ".plume.source",
    "plume_source_from_exit": ".plume.source",
    "rise_height_point_source": ".plume.closed_form",
    "buoyancy_flux_point_source": ".plume.closed_form",
    # diffuse flow
    "diffuse_discharge": ".diffuse",
    "diffuse_propagation": ".diffuse",
    "DiffuseDischarge": ".diffuse",
    "DiffusePropagation": ".diffuse",
    # reservoirs and the summarizer's questions
    "reservoir_heat": ".reservoir",
    "reservoir_lifetime": ".reservoir",
    "reservoir_size_for": ".reservoir",
    "water_answer": ".summarizer",
    "reservoir_answer": ".summarizer",
    "reservoir_size_answer": ".summarizer",
    "flank_answer": ".summarizer",
    # the water column
    "read_ctd_cast": ".profiles",
    "ambient_profile": ".profiles",
    "constant_stratification": ".profiles",
    "AmbientProfile": ".profiles",
    # the field survey
    "Survey": ".survey.python_api",
    "SurveyResult": ".survey.run",
    "write_netcdf": ".survey.netcdf",
    "survey_budget": ".survey.budget",
}

__all__ = sorted(_API) + ["__version__"]


def __getattr__(name):
    # Loaded on first use so that ``import ventflux`` (and ``ventflux --help``) import no heavy module.
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'ventflux' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(module, __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(_API))
