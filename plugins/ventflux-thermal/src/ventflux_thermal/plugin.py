"""Hook implementations of ventflux-thermal: commands, methods and the profile velocity source."""

from __future__ import annotations

from ventflux.plugin_api import hookimpl
from ventflux.plugin_api import Command, Method, VelocitySource

from . import cli


@hookimpl
def ventflux_commands():
    return [
        Command(name="probe-heat-flow",
                help="reduce sediment heat-flow probe penetrations (one or a cruise's worth) to conductive heat flow",
                configure=cli.configure_probe, run=cli.run_probe),
        Command(name="profile-advection",
                help="vertical Darcy velocity and heat fluxes from the curvature of a temperature-depth profile",
                configure=cli.configure_advection, run=cli.run_advection),
        Command(name="array-anomaly",
                help="mean temperature anomaly, variability and dominant periods of a diffuse-flow thermistor array",
                configure=cli.configure_array, run=cli.run_array),
    ]


@hookimpl
def ventflux_estimation_methods():
    return [
        Method(name="probe-heat-flow",
               summary="frictional-decay equilibrium temperatures, heat-pulse conductivity, T on thermal resistance",
               estimates="conductive heat flow", command="probe-heat-flow",
               inputs=("probe record", "sensor depths", "penetration time", "heat-pulse time and energy")),
        Method(name="profile-advection",
               summary="steady 1-D advection-diffusion fit of T(z): Péclet number, Darcy velocity, heat fluxes",
               estimates="Darcy velocity, advective heat flux", command="profile-advection",
               inputs=("temperature-depth profile", "sediment conductivity", "pressure")),
        Method(name="array-anomaly",
               summary="thermistor array minus ambient reference: anomaly per sensor and patch, spectrum peaks",
               estimates="temperature anomaly", command="array-anomaly",
               inputs=("array record", "reference sensor")),
    ]


@hookimpl
def ventflux_velocity_sources():
    from .advection import profile_velocity

    return [VelocitySource(
        name="profile-advection",
        summary="Darcy velocity (upward positive) from a temperature-depth profile's curvature; "
                "input: profile CSV; options: conductivity, pressure or depth, layer_thickness",
        feeds=("diffuse",),
        estimate=profile_velocity)]


@hookimpl
def ventflux_survey_sections():
    from .survey import SEDIMENT_PROBES

    return [SEDIMENT_PROBES]
