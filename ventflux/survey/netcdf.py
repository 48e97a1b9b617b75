"""A survey's results as one netCDF file, ``results.nc``.

The file holds what ``SurveyResult.to_xarray()`` holds (``ventflux.presentation``):
field totals, each vent's and each section item's heat power, the field's
water fluxes and the reservoirs' timescales, with ``units`` and ``long_name``
attributes (UDUNITS unit strings, CF conventions [1]_). Each output with
Monte Carlo draws is summarized in variables ``<output>_p05``, ``_p50``,
``_p95``, ``_mean`` and ``_sd`` (the vocabulary's suffixes); with
``draws=True`` (a survey's ``[run] netcdf_draws = true``) the draws
themselves are kept too, along the ``draw`` dimension, so that any other
statistic can be computed later. Global attributes name the survey file,
the seed, the draws kept and dropped, and ventflux's version.

The file is written with the h5netcdf engine to a temporary name in the
same folder and renamed into place, so a reader never sees half a file.

References
----------
.. [1] NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import numpy as np

#: Statistics written for every output with draws, by the vocabulary's suffix.
STATISTICS = ("p05", "p50", "p95", "mean", "sd")


def results_dataset(result, draws: bool = False):
    """The survey result as an ``xarray.Dataset`` ready for netCDF (statistics, and the draws on request).

    Parameters
    ----------
    result : SurveyResult
    draws : bool
        Keep the Monte Carlo draws (dimension ``draw``) beside their statistics.

    Returns
    -------
    xarray.Dataset
    """
    import xarray as xr

    from .. import __version__

    full = result.to_xarray()
    out = {}
    for name, da in full.data_vars.items():
        if "draw" not in da.dims:
            stat = "_p50" if da.attrs.get("statistic", "").startswith("median") else ""
            out[f"{name}{stat}"] = da  # only statistics were kept (a reservoir's timescales): named as such
            continue
        with np.errstate(all="ignore"):
            stats = {
                "p05": da.quantile(0.05, dim="draw").drop_vars("quantile"),
                "p50": da.median(dim="draw"),
                "p95": da.quantile(0.95, dim="draw").drop_vars("quantile"),
                "mean": da.mean(dim="draw"),
                "sd": da.std(dim="draw", ddof=1),
            }
        for key in STATISTICS:
            label = {"p05": "5th percentile", "p50": "median", "p95": "95th percentile", "mean": "mean",
                     "sd": "standard deviation"}[key]
            out[f"{name}_{key}"] = stats[key].assign_attrs(
                {**da.attrs, "long_name": f"{da.attrs.get('long_name', name)}, {label} of the Monte Carlo draws",
                 "cell_methods": "draw: " + {"p05": "percentile", "p50": "median", "p95": "percentile",
                                             "mean": "mean", "sd": "standard_deviation"}[key]})
        if draws:
            out[name] = da
    ds = xr.Dataset(out)
    if not draws and "draw" in ds.coords:
        ds = ds.drop_vars("draw")
    ds.attrs = {k: _attr(v) for k, v in full.attrs.items() if v is not None}
    ds.attrs.update({"Conventions": "CF-1.8", "source": f"ventflux {__version__}",
                     "draws_kept": int(result.n_draws), "draws_included": int(bool(draws)),
                     "comment": "Estimates for scientific analysis, not for the operational safety of people or "
                                "vehicles near hot fluids."})
    return ds


def _attr(v):
    """A value netCDF can store as an attribute (text or a number)."""
    if isinstance(v, (bool, np.bool_)):
        return int(v)
    if isinstance(v, (int, float, str, np.integer, np.floating)):
        return v
    return str(v)


def write_netcdf(result, path, draws: bool = False) -> Path:
    """Write a survey result as one netCDF file, atomically.

    Parameters
    ----------
    result : SurveyResult
    path : path-like
        The file to write (replaced if it exists).
    draws : bool
        Keep the Monte Carlo draws beside their statistics.

    Returns
    -------
    pathlib.Path
    """
    path = Path(path)
    ds = results_dataset(result, draws)
    encoding = {name: {"zlib": True, "complevel": 4} for name, da in ds.data_vars.items()
                if da.dtype.kind == "f" and da.ndim > 0}
    fd, tmp = tempfile.mkstemp(prefix=".results-", suffix=".nc", dir=path.parent)
    os.close(fd)
    try:
        _write_h5netcdf(ds, tmp, encoding)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path


def _write_h5netcdf(ds, path, encoding) -> None:
    """``ds.to_netcdf(path, engine="h5netcdf", encoding=encoding)``, without importing Dask's cluster scheduler.

    ``to_netcdf`` asks Dask which scheduler is active (to close files between writes on a cluster), and
    opening a store for writing asks again for its lock: with Dask installed, each imports
    ``dask.distributed`` (about 0.25 s, measured), for a file written here from memory in one thread. The
    store is given its lock and filled as ``to_netcdf`` fills it; the file is the same (a test compares them).
    """
    import threading

    from xarray.backends import H5NetCDFStore

    store = H5NetCDFStore.open(path, mode="w", lock=threading.Lock())
    try:
        ds.dump_to_store(store, encoding=encoding)
    finally:
        store.close()
