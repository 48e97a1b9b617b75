"""Hook implementations of ventflux-series. Registration imports nothing heavy (Dask, xarray, scipy load on run)."""

from __future__ import annotations

from ventflux.plugin_api import hookimpl
from ventflux.plugin_api import Command, Method


def _configure(p):
    from .cli import configure

    configure(p)


def _run(args):
    from .cli import run

    return run(args)


@hookimpl
def ventflux_commands():
    return [Command(name="series", help="each vent's heat output through time from many records or clips, on Dask",
                    configure=_configure, run=_run, provider="ventflux-series")]


@hookimpl
def ventflux_estimation_methods():
    return [Method(name="output time series",
                   summary="vent-temperature loggers, thermistor arrays or clips through time; tidal periods, "
                           "trend and steps; resumable, on Dask",
                   estimates="heat power through time", command="ventflux series",
                   inputs=("manifest", "items CSV", "records or clips"), provider="ventflux-series")]


@hookimpl
def ventflux_executors():
    from .dask_executor import executor_info  # imports nothing of Dask until an executor is opened

    return [executor_info()]
