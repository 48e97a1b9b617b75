"""Table rows as JSON: SI units in the keys, one spelling for each statistic (``ventflux.vocabulary``).

The survey's CSV tables carry their unit in brackets and keep the unit a reader
expects (``heat_power_p50 [MW]``); its JSON files (``summary.json``,
``budget.json``) carry the same numbers in SI units with the unit after an
underscore and the statistic last (``heat_power_W_p50``). Temperatures stay in
``degC`` (a derived SI unit) and ratios are bare, as the vocabulary says.
"""

from __future__ import annotations

import functools
import math

#: The SI unit a JSON key is written in, by dimension (first match wins).
SI_UNITS = ("W", "J", "s", "kg/s", "m^3/s", "m", "m^2", "m^3", "W/m^2", "W/m", "J/m^2", "m^3/s/m", "kg", "Pa", "K",
            "m/s", "J/kg", "kg/m^3")
#: Statistic suffixes of a column and their one spelling (``vocabulary``: ``_sd``, ``_p05``/``_p50``/``_p95``).
STATISTICS = {"mean": "mean", "median": "p50", "p50": "p50", "p05": "p05", "p95": "p95", "std": "sd", "sd": "sd"}
_DIMENSIONLESS = ("", "1", "dimensionless")
#: A yearly amount written in SI is a rate per second, named as one (``annual_volume [km^3/yr]`` →
#: ``volume_flux_ambient_m3_s``: the throughput's volume of ambient seawater per unit time).
SI_NAMES = {"annual_volume": "volume_flux_ambient", "annual_mass": "mass_flux"}


@functools.lru_cache(maxsize=256)
def si_unit(unit: str) -> str:
    """The SI unit a value in ``unit`` is written in for JSON (``'MW'`` → ``'W'``, ``'yr'`` → ``'s'``).

    Remembered per unit: a results folder asks for the same few units for thousands of cells.
    """
    if unit in _DIMENSIONLESS:
        return ""
    if unit in ("degC", "°C"):
        return "degC"
    from ..units import ureg

    dim = ureg.Quantity(1.0, unit).dimensionality
    for u in SI_UNITS:
        if ureg.Quantity(1.0, u).dimensionality == dim:
            return u
    return str(ureg.Quantity(1.0, unit).to_base_units().units)


def split_column(column: str) -> tuple[str, str, str]:
    """``'heat_power_p05 [MW]'`` → ``('heat_power', 'p05', 'MW')`` (statistic and unit may be empty)."""
    name, _, unit = column.partition(" [")
    unit = unit.rstrip("]")
    head, _, tail = name.rpartition("_")
    if head and tail in STATISTICS:
        return head, STATISTICS[tail], unit
    return name, "", unit


def json_key(column: str) -> tuple[str, str, str]:
    """A CSV column → (JSON key, unit of the column, SI unit of the key).

    Examples
    --------
    >>> json_key("heat_power_median [MW]")
    ('heat_power_W_p50', 'MW', 'W')
    >>> json_key("diffuse_fraction")
    ('diffuse_fraction', '', '')
    """
    from ..uncertainty import unit_tag

    name, stat, unit = split_column(column)
    si = si_unit(unit)
    name = SI_NAMES.get(name, name) if si else name
    key = f"{name}_{unit_tag(si)}" if si else name
    return (f"{key}_{stat}" if stat else key), unit, si


def to_si(value, unit: str, si: str):
    """``value`` in ``unit`` written in ``si`` (left as it is when not a finite number or already SI)."""
    if not si or unit == si or isinstance(value, bool) or not isinstance(value, (int, float)):
        return value
    if isinstance(value, float) and not math.isfinite(value):
        return value
    scale, offset = _conversion(unit, si)
    return float(value) * scale + offset


@functools.lru_cache(maxsize=256)
def _conversion(unit: str, si: str) -> tuple[float, float]:
    """``(scale, offset)`` with ``value_si = value * scale + offset``: every unit pint knows is affine in another of
    its dimension (an offset only for temperatures), so two points give the conversion exactly."""
    from ..units import ureg

    zero = float(ureg.Quantity(0.0, unit).to(si).magnitude)
    return float(ureg.Quantity(1.0, unit).to(si).magnitude) - zero, zero


def json_row(row: dict) -> dict:
    """One table row with SI keys and values (``{'heat_power_p05 [MW]': 2.0}`` → ``{'heat_power_W_p05': 2e6}``)."""
    out = {}
    for column, value in row.items():
        if hasattr(value, "item") and getattr(value, "ndim", 1) == 0:
            value = value.item()
        key, unit, si = json_key(str(column))
        out[key] = to_si(value, unit, si)
    return out


def summary_json(name: str, summary, unit: str) -> dict:
    """A Monte Carlo ``Summary`` as flat JSON keys: ``total_heat_power_W_p50`` and its kin, in SI."""
    si = si_unit(unit)
    s = summary.to(si) if si and si != "degC" else summary
    from ..uncertainty import unit_tag

    key = f"{name}_{unit_tag(si)}" if si else name
    return {f"{key}_{k}": float(getattr(s, attr).magnitude)
            for k, attr in (("mean", "mean"), ("p05", "p05"), ("p50", "median"), ("p95", "p95"), ("sd", "std"))}
