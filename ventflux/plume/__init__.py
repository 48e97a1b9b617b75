"""Plume-rise estimator: a buoyant plume's rise in a measured stratification, and its inversion.

* ``closed_form``: point-source and bent-over relations, both directions.
* ``integral``: the top-hat integral model with TEOS-10 densities, vertical
  or bent over by a current, integrated over a whole ensemble at once.
* ``source``: forced-plume sources (fluxes, exit conditions, an orifice estimate).
* ``inversion``: ``heat_power_from_rise_height`` and ``rise_height_from_heat_power``,
  with vectorized Monte Carlo uncertainty.
* ``figures``: the plume's profiles beside the stratification.
"""

from .closed_form import (  # noqa: F401
    buoyancy_flux_point_source,
    heat_power_from_buoyancy_flux,
    rise_height_bent_over,
    rise_height_point_source,
)
from .integral import CROSSFLOW_ENTRAINMENT, DEFAULT_ENTRAINMENT, column_above_vent  # noqa: F401
from .inversion import (  # noqa: F401
    LEVELS,
    METHODS,
    CurrentProfile,
    PlumeRiseResult,
    heat_power_from_rise_height,
    rise_height_from_heat_power,
)
from .source import PlumeSource, plume_source, plume_source_from_exit, plume_source_from_orifice  # noqa: F401
