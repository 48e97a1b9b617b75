"""Plume rise through the package's one propagation driver: one route for ``ventflux plume-rise`` and a survey.

Every uncertain input (rise height or heat power, entrainment coefficient,
current, buoyancy frequency, stratification scale) is drawn through the
run's ``SharedDraws`` under ``<vent>/plume_rise/<input>`` (the survey's key
paths; the command's ``--name`` gives the vent), so the command and a survey
draw the same values for the same seed. Draws outside an input's physical
range are dropped before solving; draws whose plume cannot be solved (it
never reaches the observed height, say) are dropped after; both are counted
together under the run's one limit (``uncertainty.UnphysicalPolicy``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import gsw
import numpy as np
import pint

from ..properties.seawater import STANDARD_ATMOSPHERE
from ..uncertainty import (
    DEFAULT_MAX_UNPHYSICAL,
    SharedDraws,
    Uncertain,
    UnphysicalPolicy,
    driver_settings,
    nominal,
    propagate,
)
from ..units import Q_
from .inversion import (
    PlumeRiseResult,
    ambient_column,
    heat_power_from_rise_height,
    rise_height_from_heat_power,
)
from .source import PlumeSource, plume_source_from_exit

#: Inputs of one plume that may be drawn, and the physical range of each draw.
PLUME_INPUTS = {"height": "> 0", "heat_power": "> 0", "entrainment": "> 0", "current": "≥ 0",
                "buoyancy_frequency": "> 0", "stratification_scale": "> 0"}
#: Survey key → keyword of the inversion functions.
_KEYWORD = {"height": "rise_height", "heat_power": "heat_power"}


def plume_input_names(vent: str) -> dict[str, str]:
    """Names the plume inputs of ``vent`` are drawn under (the survey's key paths)."""
    return {k: f"{vent}/plume_rise/{k}" for k in PLUME_INPUTS}


def _physical(args) -> np.ndarray:
    keep = np.ones((), bool)
    for k, rule in PLUME_INPUTS.items():
        v = args.get(k)
        if v is None:
            continue
        m = np.asarray(v.to_base_units().magnitude if isinstance(v, pint.Quantity) else v, float)
        keep = keep & ((m > 0) if rule == "> 0" else (m >= 0))
    return keep


@dataclass(frozen=True)
class PlumePropagation:
    """A plume's drawn result (dropped draws NaN), its nominal result and the bookkeeping."""

    result: PlumeRiseResult  # arrays over all n_draws; NaN where dropped; ``nominal`` set; ``summary`` of kept
    heat_power: pint.Quantity  # (n_draws,), NaN where dropped
    unphysical: int  # dropped before solving (outside a physical range) plus after (no solution)
    n_draws: int
    seed: int
    max_unphysical: float


def plume_rise_propagation(inputs: dict, stratification, *, draws: SharedDraws | int, seed: int | None = None,
                           names: dict[str, str] | None = None, vent: str = "vent",
                           max_unphysical: float | UnphysicalPolicy = DEFAULT_MAX_UNPHYSICAL,
                           level: str = "maximum", method: str = "integral", vent_depth=None, pressure=None,
                           ambient_temperature=None, ambient_salinity=None, latitude=None, longitude=None,
                           source: PlumeSource | None = None, track: bool = False,
                           current_profile=None) -> PlumePropagation:
    """Monte Carlo plume rise, inverse (``inputs["height"]``) or forward (``heat_power`` or ``source``).

    Parameters
    ----------
    inputs : dict
        Any of ``PLUME_INPUTS`` as quantities, ``Uncertain`` values or None.
        ``buoyancy_frequency`` is used when ``stratification`` is None.
    stratification : AmbientProfile or None
        The site's CTD cast; None for a constant buoyancy frequency.
    draws : SharedDraws or int
        The run's shared draws (a survey), or a number of draws with ``seed``.
    names : dict, optional
        Stream names; default ``plume_input_names(vent)``.
    max_unphysical : float or UnphysicalPolicy
    current_profile : CurrentProfile, optional
        A measured current profile (exact), instead of ``inputs["current"]``.

    Returns
    -------
    PlumePropagation
    """
    shared, policy = driver_settings(draws, seed, max_unphysical)
    names = {**plume_input_names(vent), **(names or {})}
    given = {k: v for k, v in inputs.items() if v is not None}
    n = shared.n_draws
    site = dict(level=level, method=method, vent_depth=vent_depth, pressure=pressure,
                ambient_temperature=ambient_temperature, ambient_salinity=ambient_salinity, latitude=latitude,
                longitude=longitude)

    def solve(predrawn, emulated_by=None, **a):
        strat = stratification
        if strat is None:
            strat = a.pop("buoyancy_frequency")
        kw = {"entrainment": a.pop("entrainment", None), "stratification_scale": a.pop("stratification_scale", None)}
        kw = {k: (v.to("dimensionless").magnitude if isinstance(v, pint.Quantity) else v) for k, v in kw.items()
              if v is not None}
        current = current_profile if current_profile is not None else a.pop("current", None)
        if "height" in a:
            return heat_power_from_rise_height(a.pop("height"), strat, current=current, **kw, **site,
                                               predrawn=predrawn, track=not predrawn and track,
                                               emulated_by=emulated_by)
        return rise_height_from_heat_power(a.pop("heat_power", None), strat, current=current, source=source, **kw,
                                           **site, predrawn=predrawn, track=not predrawn and track)

    def estimator(**a):
        m = _kept_size(a)
        full = {k: (_full(v, m) if isinstance(v, pint.Quantity) else v) for k, v in a.items()}
        return solve(True, **full)

    prop = propagate(estimator, given, names=names, draws=shared, physical=_physical, max_unphysical=policy)
    res = prop.result
    H = np.full(n, np.nan)
    H[prop.keep] = np.broadcast_to(res.heat_power.to("W").magnitude, (prop.kept,))
    failed = int(np.count_nonzero(~np.isfinite(H[prop.keep])))
    keep = np.isfinite(H)
    if failed:
        policy.enforce(keep, f"{vent}/plume_rise", f"{n - prop.kept} of {n} draws outside an input's range, "
                                                   f"{failed} without a plume solution", "draws")
    nominal_inputs = {k: nominal(v) for k, v in given.items()}
    nom = solve(False, emulated_by=prop.result, **nominal_inputs)  # the draws' emulator answers it, if built
    res = replace(res, nominal=nom, draws=n, seed=shared.seed, failed=n - int(keep.sum()),
                  summary={k: replace(s, seed=shared.seed) for k, s in res.summary.items()})
    return PlumePropagation(result=res, heat_power=Q_(H, "W"), unphysical=n - int(keep.sum()), n_draws=n,
                            seed=shared.seed, max_unphysical=policy.max_share)


def _kept_size(a) -> int:
    sizes = [np.size(v.magnitude) for v in a.values() if isinstance(v, pint.Quantity) and np.ndim(v.magnitude) == 1]
    return max(sizes) if sizes else 1


def _full(q: pint.Quantity, m: int) -> pint.Quantity:
    return Q_(np.broadcast_to(np.asarray(q.magnitude, float), (m,)).copy(), q.units) if m > 1 else q


def closed_form_heat_power(rise_height_m: float, column) -> float:
    """Heat power [W] of the point-source rise formula with the column's mean N over the rise height.

    Common practice shown beside the integral model's answer: the buoyancy
    flux of a pure point-source plume rising ``rise_height_m`` in a uniform
    stratification of the mean buoyancy frequency over that height
    (``closed_form.buoyancy_flux_point_source``), converted to heat power at
    the vent's ambient state (``Column.heat_to_buoyancy``).
    """
    from . import closed_form

    n_mean = float(column.mean_n(max(rise_height_m, 1.0)))
    return float(closed_form._buoyancy_flux_point_source(rise_height_m, n_mean) / column.heat_to_buoyancy())


def orifice_plume_source(exit_temperature, exit_velocity, diameter, stratification, *, vent_depth=None,
                         pressure=None, ambient_temperature=None, ambient_salinity=None, latitude=None,
                         longitude=None) -> PlumeSource:
    """Forced-plume source from an orifice's exit conditions at the vent's in-situ pressure.

    The ambient at the vent (in-situ temperature and practical salinity) is
    that of the column the plume rises through, converted back from TEOS-10's
    Conservative Temperature and Absolute Salinity (``gsw.t_from_CT``,
    ``gsw.SP_from_SR``).
    """
    strat = stratification
    if isinstance(strat, Uncertain):
        strat = strat.nominal
    column, _, _ = ambient_column(strat, vent_depth, pressure, ambient_temperature, ambient_salinity, latitude,
                                  longitude)
    p = Q_(column.p0 * 1e4 + STANDARD_ATMOSPHERE, "Pa")
    t_amb = Q_(float(gsw.t_from_CT(column.SA0, column.CT0, column.p0)), "degC")
    sp = float(gsw.SP_from_SR(column.SA0))
    return plume_source_from_exit(exit_temperature, exit_velocity, diameter, p, t_amb, sp)


__all__ = [
    "PLUME_INPUTS",
    "PlumePropagation",
    "closed_form_heat_power",
    "orifice_plume_source",
    "plume_input_names",
    "plume_rise_propagation",
]
