"""ventflux-series: each vent's heat output as a time series, from many clips and records, on Dask."""

__version__ = "0.1.0"
