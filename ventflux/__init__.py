"""ventflux: heat and water discharge of seafloor hydrothermal vents.

Core estimators (orifice velocity-temperature, plume rise, diffuse-flow heat
balance) share one property layer: TEOS-10 (gsw) for ambient seawater and
IAPWS-95 (CoolProp) for hot vent fluid. All public functions take pint
quantities from ``ventflux.units``.
"""



def __getattr__(name):
    # ``ventflux.ureg`` and ``ventflux.Q_`` load pint on first use, so that ``ventflux --help`` stays light.
    if name in ("ureg", "Q_"):
        from . import units

        return getattr(units, name)
    raise AttributeError(f"module 'ventflux' has no attribute {name!r}")


#: The package's one version source: ``pyproject.toml`` reads it (setuptools
#: dynamic version) and plugins declare the range they support against it.
__version__ = "0.2.0"
