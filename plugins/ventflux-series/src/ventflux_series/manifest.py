"""The series manifest: which record or clip belongs to which vent, by which method, with which settings.

A manifest is a TOML file beside a CSV that lists the items (one clip or one record file a row). It is read
and checked whole before anything is computed: every problem is reported at once, each with its key path
(``vent[0].velocity``) or file and line. Nothing here computes physics.

Layout::

    [series]      name, items (CSV path), draws (default 1000), seed, interval (averaging window of continuous
                  records, default "1 h"), max_unphysical (fraction of draws, default 0.05)
    [site]        depth | absolute_pressure, latitude, ambient_temperature, ambient_salinity (practical)
    [shared]      name = value: inputs referred to as "@name", drawn once per draw for the whole series
    [[vent]]      name, method, and the method's fixed inputs (see ``METHOD_KEYS``)

The items CSV has the columns ``vent``, ``file`` (relative to the manifest) and, for clips, ``start`` (ISO 8601
time of the clip's first frame); a continuous record carries its own time column.
"""

from __future__ import annotations

import csv
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from ventflux.plugin_api import Collector, InputError
from ventflux.plugin_api import Uncertain, parse_uncertain
from ventflux.plugin_api import parse_quantity
from ventflux.plugin_api import renamed_key, warn_deprecated

#: The methods an item can be estimated by, with what each needs (key: (dimension, required)).
METHOD_KEYS: dict[str, dict[str, tuple[str, bool]]] = {
    # A vent-temperature logger at a fixed orifice with a velocity model: orifice discharge through time.
    "vent-temperature": {"diameter": ("length", True), "velocity": ("velocity", True),
                         "temperature_offset": ("temperature", False)},
    # A thermistor-array record over a diffuse patch: mean anomaly through time with a fixed velocity and area.
    "array-anomaly": {"area": ("area", True), "active_fraction": ("dimensionless", True),
                      "velocity": ("velocity", True)},
    # Dive or observatory clips of a jet: exit velocity from video, fixed orifice and exit temperature.
    "video-exit-velocity": {"diameter": ("length", True), "exit_temperature": ("temperature", True),
                            "pixel_size": ("length", True)},
    # Clips of a buoyant plume: buoyancy flux from the decay of the centreline velocity with height.
    "video-velocity-decay": {"pixel_size": ("length", True)},
}
#: Keys every vent may carry whatever its method.
COMMON_KEYS = {"name", "method", "orifice_x", "orifice_y"}
CLIP_METHODS = ("video-exit-velocity", "video-velocity-decay")
DEFAULT_DRAWS = 1000
DEFAULT_INTERVAL_S = 3600.0
#: Fraction of a time step's draws that may be unphysical before the step is refused (as in the survey).
DEFAULT_MAX_UNPHYSICAL = 0.05


@dataclass(frozen=True)
class Item:
    """One clip or record: the unit of work (one Dask task)."""

    index: int
    vent: str
    method: str
    path: Path
    start: np.datetime64 | None  # clips: time of the first frame; records carry their own times
    line: int  # line in the items CSV, for messages


@dataclass
class VentSettings:
    name: str
    method: str
    inputs: dict  # key -> Quantity | Uncertain | SharedName
    orifice_xy: tuple[float, float] | None = None


@dataclass(frozen=True)
class SharedName:
    """A reference to ``[shared]``: drawn once per draw under ``name`` for every user."""

    name: str


@dataclass
class Manifest:
    path: Path
    name: str
    draws: int
    seed: int
    interval_s: float
    max_unphysical: float
    site: dict
    shared: dict
    vents: dict[str, VentSettings]
    items: list[Item] = field(default_factory=list)


def _value(raw, dimension, key, shared, errors):
    if isinstance(raw, str) and raw.startswith("@"):
        name = raw[1:]
        if name not in shared:
            errors.add(InputError(key, raw, "a name defined under [shared] (" + (", ".join(sorted(shared)) or
                                                                              "none defined") + ")"))
            return None
        ref = shared[name]
        unit_q = ref.nominal if isinstance(ref, Uncertain) else ref
        if not unit_q.check(parse_quantity(f"1 {_UNIT_OF[dimension]}", dimension, key).dimensionality):
            errors.add(InputError(key, raw, f"a shared input of dimension {dimension} ('{name}' is "
                                            f"{unit_q.dimensionality})"))
            return None
        return SharedName(name)
    with errors.check():
        return parse_uncertain(raw if isinstance(raw, str) else str(raw), dimension, key)
    return None


_UNIT_OF = {"length": "m", "velocity": "m/s", "temperature": "K", "area": "m^2", "dimensionless": "",
            "pressure": "Pa"}


def read_manifest(path) -> Manifest:
    """Read and check a manifest and its items CSV; raise every problem at once (``InputErrors``)."""
    path = Path(path)
    errors = Collector()
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError("manifest", str(path), "an existing TOML file") from None
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as err:
        raise InputError("manifest", str(path), f"a UTF-8 TOML file ({err})") from None
    except OSError as err:
        raise InputError("manifest", str(path), f"a readable file ({err.strerror})") from None
    for key in doc:
        if key not in ("series", "site", "shared", "vent"):
            errors.add(InputError(key, "(table)", "one of [series], [site], [shared], [[vent]]"))
    series = doc.get("series", {})
    for key in series:
        if key not in ("name", "items", "draws", "seed", "interval", "max_unphysical"):
            errors.add(InputError(f"series.{key}", series[key], "a known key: name, items, draws, seed, interval, "
                                                                 "max_unphysical"))
    draws = series.get("draws", DEFAULT_DRAWS)
    if not isinstance(draws, int) or isinstance(draws, bool) or not 100 <= draws <= 1_000_000:
        errors.add(InputError("series.draws", draws, "a whole number of Monte Carlo draws from 100 to 1000000"))
        draws = DEFAULT_DRAWS
    seed = series.get("seed", 20261202)
    if not isinstance(seed, int) or isinstance(seed, bool) or not 0 <= seed < 2**32:
        errors.add(InputError("series.seed", seed, "a whole number from 0 to 2^32 - 1"))
        seed = 20261202
    interval_s = DEFAULT_INTERVAL_S
    if "interval" in series:
        with errors.check():
            q = parse_quantity(series["interval"], "time", "series.interval")
            interval_s = float(q.to("s").magnitude)
            if not 1.0 <= interval_s <= 30 * 86400:
                errors.add(InputError("series.interval", series["interval"], "a window from 1 s to 30 days"))
    max_bad = series.get("max_unphysical", DEFAULT_MAX_UNPHYSICAL)
    if not isinstance(max_bad, (int, float)) or isinstance(max_bad, bool) or not 0 <= max_bad < 0.5:
        errors.add(InputError("series.max_unphysical", max_bad, "a fraction of draws from 0 to 0.5"))
        max_bad = DEFAULT_MAX_UNPHYSICAL

    site = _read_site(doc.get("site"), errors)
    shared = {}
    for name, raw in doc.get("shared", {}).items():
        with errors.check():
            shared[name] = parse_uncertain(str(raw), _guess_dimension(str(raw)), f"shared.{name}")
    vents = {}
    for i, table in enumerate(doc.get("vent", [])):
        v = _read_vent(table, f"vent[{i}]", shared, errors)
        if v is None:
            continue
        if v.name in vents:
            errors.add(InputError(f"vent[{i}].name", v.name, "a name not used by another vent"))
        vents[v.name] = v
    if not doc.get("vent"):
        errors.add(InputError("vent", "(none)", "at least one [[vent]] table"))
    items: list[Item] = []
    if "items" not in series:
        errors.add(InputError("series.items", "(missing)", "the path of the items CSV (columns vent, file, start)"))
    else:
        items = _read_items(path.parent / str(series["items"]), vents, errors)
    errors.raise_if_any()
    return Manifest(path=path, name=str(series.get("name", path.stem)), draws=draws, seed=seed,
                    interval_s=interval_s, max_unphysical=float(max_bad), site=site, shared=shared, vents=vents,
                    items=items)


def _guess_dimension(text: str) -> str:
    """The dimension a shared value's unit implies (shared inputs are typed by their unit)."""
    from ventflux.plugin_api import ureg

    tail = text.split(")")[-1] if ")" in text else text.split()[-1] if len(text.split()) > 1 else ""
    try:
        unit = ureg.parse_units(tail.strip()) if tail.strip() else ureg.dimensionless
    except Exception:
        return "dimensionless"
    for dim, u in _UNIT_OF.items():
        if u and ureg.Quantity(1, unit).check(ureg.parse_units(u).dimensionality):
            return dim
    return "dimensionless"


def _current_name(table: str, key: str, where: str) -> str:
    """A key's name in the one vocabulary; an old spelling is read with one deprecation line."""
    new = renamed_key(table, key)
    if new is None:
        return key
    warn_deprecated(f"{where}.{key}", f"{where}.{new}")
    return new


def _read_site(table, errors) -> dict:
    if table is None:
        errors.add(InputError("site", "(missing)", "a [site] table with depth or absolute_pressure and "
                                                   "ambient_temperature"))
        return {}
    site: dict = {}
    allowed = {"depth": "length", "absolute_pressure": "pressure", "ambient_temperature": "temperature"}
    for key, raw in table.items():
        key = _current_name("site", key, "site")
        if key in allowed:
            with errors.check():
                # held as "pressure" (absolute) inside the plugin, as in_situ_pressure takes it
                site["pressure" if key == "absolute_pressure" else key] = parse_quantity(raw, allowed[key],
                                                                                       f"site.{key}")
        elif key in ("latitude", "ambient_salinity"):
            lo, hi = (-90, 90) if key == "latitude" else (0, 42)
            if not isinstance(raw, (int, float)) or isinstance(raw, bool) or not lo <= raw <= hi:
                errors.add(InputError(f"site.{key}", raw, f"a number from {lo} to {hi}"))
            else:
                site[key] = float(raw)
        else:
            errors.add(InputError(f"site.{key}", raw, "a known key: depth, absolute_pressure, latitude, "
                                                        "ambient_temperature, "
                                                        "ambient_salinity"))
    if ("depth" in site) == ("pressure" in site) and not errors.errors:
        errors.add(InputError("site.depth", "(missing)" if "depth" not in site else site["depth"],
                              "either depth or absolute_pressure, not both"))
    if "ambient_temperature" not in table:
        errors.add(InputError("site.ambient_temperature", "(missing)", "the in-situ ambient temperature"))
    site.setdefault("ambient_salinity", 35.0)
    return site


def _read_vent(table, where, shared, errors) -> VentSettings | None:
    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        errors.add(InputError(f"{where}.name", name if name is not None else "(missing)", "a vent name"))
        return None
    where = f"{where}({name})"
    method = table.get("method")
    if method not in METHOD_KEYS:
        errors.add(InputError(f"{where}.method", method if method is not None else "(missing)",
                              "one of " + ", ".join(METHOD_KEYS)))
        return None
    keys = METHOD_KEYS[method]
    inputs = {}
    for key, raw in table.items():
        key = _current_name("vent", key, where)
        if key in COMMON_KEYS:
            continue
        if key not in keys:
            errors.add(InputError(f"{where}.{key}", raw, f"a key of method {method}: " + ", ".join(keys)))
            continue
        value = _value(raw, keys[key][0], f"{where}.{key}", shared, errors)
        if value is not None:
            inputs[key] = value
    given = {renamed_key("vent", k) or k for k in table}  # an old spelling gives its key too
    for key, (_, required) in keys.items():
        if required and key not in given:
            errors.add(InputError(f"{where}.{key}", "(missing)", f"the {key.replace('_', ' ')} ({method})"))
    xy = None
    if method in CLIP_METHODS:
        ox, oy = table.get("orifice_x"), table.get("orifice_y")
        if not all(isinstance(c, (int, float)) and not isinstance(c, bool) and c >= 0 for c in (ox, oy)):
            errors.add(InputError(f"{where}.orifice_x", f"{ox}, {oy}", "the orifice's pixel position in the frame "
                                                                          "(orifice_x, orifice_y ≥ 0)"))
        else:
            xy = (float(ox), float(oy))
    return VentSettings(name=name, method=method, inputs=inputs, orifice_xy=xy)


def _read_items(csv_path: Path, vents, errors) -> list[Item]:
    try:
        with open(csv_path, newline="", encoding="utf-8") as fh:
            rows = list(csv.reader(fh))
    except FileNotFoundError:
        errors.add(InputError("series.items", str(csv_path), "an existing CSV file"))
        return []
    except (UnicodeDecodeError, OSError) as err:
        errors.add(InputError("series.items", str(csv_path), f"a readable UTF-8 CSV file ({err})"))
        return []
    where = csv_path.name
    if not rows:
        errors.add(InputError("header", "(empty file)", "columns vent, file and (for clips) start", where=where))
        return []
    header = [h.strip() for h in rows[0]]
    for need in ("vent", "file"):
        if need not in header:
            errors.add(InputError("header", ",".join(header), f"a '{need}' column", where=f"{where}:1"))
    if errors.errors and any(e.where == f"{where}:1" for e in errors.errors):
        return []
    col = {h: i for i, h in enumerate(header)}
    items: list[Item] = []
    seen: dict[tuple[str, str], int] = {}
    for n, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue
        cell = {h: (row[i].strip() if i < len(row) else "") for h, i in col.items()}
        at = f"{where}:{n}"
        vent = vents.get(cell["vent"])
        if vent is None:
            errors.add(InputError("vent", cell["vent"], "a vent named in the manifest (" + ", ".join(vents) + ")",
                                  where=at))
            continue
        file_ = csv_path.parent / cell["file"]
        if not cell["file"] or not file_.is_file():
            errors.add(InputError("file", cell["file"], "an existing file, relative to the items CSV", where=at))
            continue
        key = (vent.name, cell["file"])
        if key in seen:
            errors.add(InputError("file", cell["file"], f"an item listed once (also on line {seen[key]})", where=at))
            continue
        seen[key] = n
        start = None
        if vent.method in CLIP_METHODS:
            start = _time(cell.get("start", ""), at, errors)
            if start is None:
                continue
        items.append(Item(index=len(items), vent=vent.name, method=vent.method, path=file_, start=start, line=n))
    if not items and not errors.errors:
        errors.add(InputError("items", "(none)", "at least one clip or record", where=where))
    return items


def _time(text, at, errors):
    try:
        t = pd.Timestamp(text)
    except (ValueError, TypeError):
        t = None
    if t is None or pd.isna(t):
        errors.add(InputError("start", text or "(missing)", "an ISO 8601 time, e.g. 2026-03-01T12:00:00Z", where=at))
        return None
    if t.tzinfo is not None:
        t = t.tz_convert("UTC").tz_localize(None)
    return np.datetime64(t.to_datetime64(), "ns")
