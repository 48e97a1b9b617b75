"""ventflux-watercolumn: the plume layer in tow-yo and vehicle sections, and the heat it carries.

Modules, each with one job, importing downwards only:

- ``reading``: a section from CSV (units in headers) or netCDF (CF standard names).
- ``anomaly``: TEOS-10 state, profiles, the background θ–σ₀ fit and the anomalies.
- ``layer``: vertical binning and the plume layer's top, core and bottom.
- ``flux``: the heat flux across the section (gridding, bootstrap, current).
- ``section``: the whole analysis of one section, the one entry point.
- ``survey``, ``cli``, ``figures``, ``plugin``: how ventflux reaches it.
"""

__version__ = "0.1.0"
