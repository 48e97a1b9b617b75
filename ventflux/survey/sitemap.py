"""A site map of the survey: vents and diffuse patches at their positions, in metres east and north of the site.

Positions may be written as latitude/longitude (degrees) or as local east/north
offsets in metres from the site's own latitude and longitude (``[site]``).
Latitude/longitude are mapped to metres with the local equirectangular
projection, east = R cos(φ₀) Δλ, north = R Δφ, R = 6 371 008.8 m (the mean
radius (2a + b)/3 of the GRS 80 ellipsoid, from memory); across a vent field a few kilometres wide its
error is far below a GPS or USBL fix (common practice, no source).

The position of a vent is read from ``VentSpec.position`` and of a patch from
position columns of the diffuse patch table (``latitude``/``longitude`` or
``east``/``north``), when present; with no position at all the report says so
instead of drawing a map.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .rendering import subplots

#: Mean Earth radius [m]: (2a + b)/3 of the GRS 80 ellipsoid (from memory).
EARTH_RADIUS_M = 6_371_008.8
_AXES = {"latitude": "latitude", "lat": "latitude", "longitude": "longitude", "lon": "longitude",
         "east": "east", "north": "north", "x": "east", "y": "north"}


@dataclass(frozen=True)
class Place:
    """One thing on the map."""

    name: str
    kind: str  # "vent" or "patch"
    east_m: float
    north_m: float
    heat_power_MW: float = float("nan")


def _number(v, unit: str) -> float | None:
    if v is None:
        return None
    if hasattr(v, "to"):
        try:
            x = float(v.to(unit).magnitude)
        except Exception:  # a dimension that cannot be this axis
            return None
        return x if math.isfinite(x) else None
    if hasattr(v, "nominal"):  # an uncertain position: its central value
        return _number(v.nominal, unit)
    try:
        x = float(v)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


def _fields(position) -> dict:
    """A position written as a mapping or an object → ``{'latitude': ..., 'east': ...}`` (what it has)."""
    if position is None:
        return {}
    items: list[tuple] = (list(position.items()) if isinstance(position, dict) else
                          [(k, getattr(position, k)) for k in _AXES if hasattr(position, k)])
    out = {}
    for k, v in items:
        axis = _AXES.get(str(k).partition(" [")[0].strip().lower())
        if axis is not None and v is not None:
            out[axis] = v
    return out


def local_metres(position, origin_latitude: float | None, origin_longitude: float | None):
    """``(east, north)`` in metres from the site for a position, or None when it gives no usable pair."""
    f = _fields(position)
    if "east" in f and "north" in f:
        e, n = _number(f["east"], "m"), _number(f["north"], "m")
        return (e, n) if e is not None and n is not None else None
    if "latitude" in f and "longitude" in f:
        lat, lon = _number(f["latitude"], "degree"), _number(f["longitude"], "degree")
        if lat is None or lon is None:
            return None
        lat0 = lat if origin_latitude is None else float(origin_latitude)
        lon0 = lon if origin_longitude is None else float(origin_longitude)
        dlon = (lon - lon0 + 180.0) % 360.0 - 180.0  # the short way round (0–360 and ±180 both allowed)
        east = EARTH_RADIUS_M * math.cos(math.radians(lat0)) * math.radians(dlon)
        return east, EARTH_RADIUS_M * math.radians(lat - lat0)
    return None


def _row_position(row: dict) -> dict:
    return {k: v for k, v in row.items() if _AXES.get(str(k).partition(" [")[0].strip().lower())}


def _table_position(row: dict):
    """A table row's position columns, with their unit taken from the column name (``east [km]``)."""
    out = {}
    for k, v in _row_position(row).items():
        name, _, unit = str(k).partition(" [")
        unit = unit.rstrip("]")
        axis = _AXES[name.strip().lower()]
        if unit and axis in ("east", "north") and _number(v, "m") is not None:
            from ..units import Q_

            v = Q_(float(v), unit)
        out[axis] = v
    return out


def places(result) -> list[Place]:
    """Every vent and patch of a survey result that has a position, in metres from the site."""
    site = result.spec.site
    lat0 = getattr(site, "latitude", None)
    lon0 = getattr(site, "longitude", None)
    out = []
    power = {vr.name: vr.heat_power for vr in result.vents}
    for v in result.spec.vents:
        en = local_metres(getattr(v, "position", None), lat0, lon0)
        if en is not None:
            p = power.get(v.name)
            mw = float(_median(p.to("MW").magnitude)) if p is not None else float("nan")
            out.append(Place(v.name, "vent", en[0], en[1], mw))
    patch_kw = {}
    for s in result.sections.values():
        for rows in s.tables.values():
            for row in rows:
                if "patch" not in row:
                    continue
                kw = row.get("heat_power_median [kW]", row.get("heat_power_p50 [kW]", float("nan")))
                patch_kw[str(row["patch"])] = float(kw)
                en = local_metres(_table_position(row), lat0, lon0)
                if en is not None:
                    out.append(Place(str(row["patch"]), "patch", en[0], en[1], float(kw) / 1e3))
    placed = {p.name for p in out if p.kind == "patch"}
    for name, position in _patch_table_positions(result.spec):  # positions kept on the parsed patch table
        en = local_metres(position, lat0, lon0)
        if en is not None and name not in placed:
            out.append(Place(name, "patch", en[0], en[1], patch_kw.get(name, float("nan")) / 1e3))
    return out


def _patch_table_positions(spec):
    """(name, position) of each patch of a parsed patch table (``names`` and per-patch ``positions``, or
    ``latitude``/``longitude`` or ``east``/``north`` columns), in every section that has one."""
    for parsed in (getattr(spec, "sections", None) or {}).values():
        t = parsed.get("table") if isinstance(parsed, dict) else None
        names = getattr(t, "names", None)
        if t is None or names is None:
            continue
        positions = getattr(t, "positions", None)
        if positions is not None:
            yield from ((str(n), p) for n, p in zip(names, positions))
            continue
        cols = {a: getattr(t, a) for a in ("latitude", "longitude", "east", "north") if getattr(t, a, None) is not None}
        for i, n in enumerate(names):
            yield str(n), {a: v[i] for a, v in cols.items()}


def _median(a) -> float:
    import numpy as np

    a = np.asarray(a, float)
    a = a[np.isfinite(a)]
    return float(np.median(a)) if a.size else float("nan")


NO_POSITIONS = ("No site map: the survey gives no position for any vent or patch. Add a <code>position</code> to a "
                "<code>[[vent]]</code> (latitude and longitude, or east and north in metres from the site) or "
                "position columns to the diffuse patch table to get one.")


def site_map_figure(items: list[Place], site_name: str = ""):
    """The map: vents as triangles, patches as circles, labelled, in metres east and north of the site."""


    fig, ax = subplots(figsize=(6.5, 5.5))
    style = {"vent": ("^", "C3", 70, "vent"), "patch": ("o", "C0", 30, "diffuse patch")}
    for kind, (marker, colour, size, label) in style.items():
        pts = [p for p in items if p.kind == kind]
        if pts:
            ax.scatter([p.east_m for p in pts], [p.north_m for p in pts], marker=marker, s=size, color=colour,
                       edgecolor="k", linewidth=0.5, label=label, zorder=3)
    ax.plot([0.0], [0.0], "+", color="0.3", ms=9, label="site's latitude and longitude")
    for p in items:
        power = f" ({p.heat_power_MW:.2g} MW)" if math.isfinite(p.heat_power_MW) else ""
        ax.annotate(p.name + power, (p.east_m, p.north_m), xytext=(4, 4), textcoords="offset points", fontsize=7)
    ax.margins(0.12)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("east of the site [m]")
    ax.set_ylabel("north of the site [m]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="best")
    what = " and ".join(k for k, there in (("vents", any(p.kind == "vent" for p in items)),
                                           ("diffuse patches", any(p.kind == "patch" for p in items))) if there)
    ax.set_title(f"{site_name + ': ' if site_name else ''}positions of the {what} (heat power)", fontsize=10)
    fig.set_layout_engine("tight")
    return fig
