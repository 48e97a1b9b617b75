"""Plausibility limits: the magnitudes past which an input is almost surely a typo.

A velocity of ``1e30 m/s`` or a pixel ``1e-30 mm`` wide parses and computes,
and yields a number nobody should publish. Every quantity ventflux reads
from a user — on the command line, in a survey file, through ``[shared]`` —
is checked here against one table, by the last part of its key path
(``vent[0].orifice[1].diameter`` and ``--diameter`` both meet the
``orifice size`` row). An uncertain value is checked at its nominal value and
over its distribution's 5–95 % range, so ``"2 ± 15 m/s"`` (whose 95 % point
is an absurd 27 m/s) is refused as well. A physical zero (a velocity must be
> 0) is checked at the nominal value only: how many draws may fall below
it is the propagation driver's policy (``ventflux.uncertainty``), which the
survey's check applies too (``ventflux.survey.fields``).

The limits are deliberately wide: they catch slips of a unit or an exponent,
not unusual science. A value outside them is refused with one line naming
the limit; ``--allow-implausible`` on any command (or ``allow_implausible =
true`` in a survey's ``[run]`` table) accepts it, and the run's provenance
says so. Non-finite values (``inf``, ``nan``) are never accepted; they are
refused when parsed (``ventflux.units.parse_quantity``).

Each row gives its reason. "A choice made here" marks a limit that is a
judgement (common practice, no source); a row's values "from memory" are
recalled, not looked up.

The table is ``LIMITS`` below; ``markdown_table()`` prints it as the
contributor guide shows it, so the two cannot drift apart.
"""

from __future__ import annotations

import contextlib
import contextvars
import math
import re
from dataclasses import dataclass

from .errors import InputError

#: Standard normal quantile of 0.95: the 5–95 % range of a normal is mean ± 1.6449 sd.
Z95 = 1.6448536269514722

_allow = contextvars.ContextVar("ventflux_allow_implausible", default=False)


@dataclass(frozen=True)
class Limit:
    """Plausible range of one quantity, in ``unit``; ``None`` leaves a side open.

    ``low_open`` makes the lower bound exclusive (a velocity must be > 0).
    """

    quantity: str
    keys: tuple
    dimension: str
    unit: str
    low: float | None
    high: float | None
    reason: str
    low_open: bool = False

    def allowed(self, note: str = "") -> str:
        return f"{self.span()}{note} (plausibility limit; --allow-implausible accepts it)"

    def span(self) -> str:
        lo = "" if self.low is None else f"{self.low:g}"
        hi = "" if self.high is None else f"{self.high:g}"
        if self.low is not None and self.high is not None:
            span = f"> {lo} and ≤ {hi} {self.unit}" if self.low_open else f"from {lo} to {hi} {self.unit}"
        elif self.low is not None:
            span = f"{'>' if self.low_open else '≥'} {lo} {self.unit}"
        else:
            span = f"≤ {hi} {self.unit}"
        return f"{self.quantity} {span}".rstrip()

    def contains(self, x: float) -> bool:
        if self.low is not None and (x < self.low or (self.low_open and x <= self.low)):
            return False
        return not (self.high is not None and x > self.high)


#: The table. Keys are matched against the end of a field's key path, with
#: array indices dropped and ``--option-name`` read as ``option_name``; the
#: longest matching key wins (``orifice.area`` before ``area``).
#: Geographic positions, degrees: bounds of validity, not of plausibility, so ``--allow-implausible`` never
#: widens them. The same bounds for every command (``cli`` frame), the survey file and CTD casts.
POSITION_BOUNDS = {"latitude": (-90.0, 90.0), "longitude": (-180.0, 360.0)}


def check_position(name: str, value, field: str) -> float:
    """``value`` (degrees) as a float inside ``POSITION_BOUNDS[name]``, or an ``InputError`` naming ``field``."""
    lo, hi = POSITION_BOUNDS[name]
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(field, value, f"a {name} in degrees from {lo:g} to {hi:g}") from None
    if not lo <= v <= hi:  # NaN fails too
        raise InputError(field, value, f"a {name} in degrees from {lo:g} to {hi:g}")
    return v


LIMITS: tuple[Limit, ...] = (
    Limit("a vent-fluid or seafloor velocity", ("velocity", "exit_velocity", "mean_velocity"), "velocity", "m/s",
          0.0, 20.0, "the fastest vent jets reported are a few m/s (from memory); 20 m/s is a choice made here",
          low_open=True),
    Limit("a current speed", ("current",), "velocity", "m/s", 0.0, 5.0,
          "deep-sea currents rarely exceed 0.5 m/s (from memory); a choice made here"),
    Limit("an orifice size", ("diameter", "minor_diameter", "orifice_diameter"), "length", "m", 5e-4, 20.0,
          "from a 0.5 mm crack to a 20 m chimney mouth; a choice made here"),
    Limit("an orifice area", ("orifice.area",), "area", "m^2", 2e-7, 300.0,
          "the area of the orifice-size range (π/4 · d²); a choice made here"),
    Limit("an area", ("area", "mapped_area", "patch.area"), "area", "m^2", 0.0, 1e7,
          "an area in a vent field: at most 10 km² (fields are well under that); a choice made here",
          low_open=True),
    Limit("a reservoir area", ("reservoir.area",), "area", "m^2", 0.0, 1e10,
          "at most 10⁴ km², a ridge segment's length times its width; a choice made here", low_open=True),
    Limit("a pixel size", ("pixel_size",), "length", "m", 1e-6, 1.0,
          "a camera pixel on the seafloor spans micrometres (macro) to a metre (survey mosaics); a choice made here"),
    Limit("a heat power", ("power", "heat_power"), "power", "W", 0.0, 1e11,
          "far above any single vent or vent field (event plumes are of order 10¹⁰ W, from memory); "
          "a choice made here", low_open=True),
    Limit("a rise height", ("rise_height", "plume_rise.height", "field_plume.height", "height"), "length", "m",
          0.0, 3000.0, "plumes rise hundreds of metres (from memory); 3 km is a choice made here", low_open=True),
    Limit("a depth", ("depth",), "length", "m", 0.0, 11000.0, "the deepest ocean is about 11 km", low_open=True),
    Limit("an absolute pressure", ("pressure", "absolute_pressure"), "pressure", "MPa", 0.1, 115.0,
          "one atmosphere to the pressure at 11 km depth"),
    Limit("a vent-fluid temperature", ("exit_temperature", "orifice.temperature", "vent.exit_temperature"),
          "temperature", "degC", -2.5, 600.0,
          "the hottest vent fluids measured are below 500 °C (from memory); a choice made here"),
    Limit("a temperature", ("temperature",), "temperature", "degC", -2.5, 1400.0,
          "from the coldest seawater to basaltic magma (about 1200 °C, from memory); a choice made here"),
    Limit("an ambient seawater temperature", ("ambient_temperature",), "temperature", "degC", -2.5, 40.0,
          "seawater freezes near −1.9 °C at the surface; TEOS-10 ends at 40 °C (IOC et al. 2010)"),
    Limit("a reservoir temperature", ("reservoir.temperature",), "temperature", "degC", 0.0, 1400.0,
          "up to basaltic magma, about 1200 °C (from memory); a choice made here"),
    Limit("a temperature anomaly", ("anomaly", "temperature_anomaly"), "temperature", "K", 0.0, 100.0,
          "diffuse fluid is a few to tens of kelvin above ambient, hotter flow is focused (from memory); "
          "100 K is a choice made here", low_open=True),
    Limit("a temperature drop", ("temperature_drop",), "temperature", "K", 0.0, 1400.0,
          "at most the reservoir temperature range; a choice made here", low_open=True),
    Limit("a practical salinity", ("salinity", "ambient_salinity"), "dimensionless", "", 0.0, 42.0,
          "TEOS-10's validity: absolute salinity 0–42 g/kg (McDougall & Barker 2011)"),
    Limit("a buoyancy frequency", ("buoyancy_frequency",), "frequency", "1/s", 0.0, 0.05,
          "deep-ocean N is about 1e-3 s⁻¹; the strongest thermoclines about 0.03 s⁻¹ (from memory)", low_open=True),
    Limit("an active fraction", ("active_fraction",), "dimensionless", "", 0.0, 1.0, "a fraction of an area",
          low_open=True),
    Limit("an entrainment coefficient", ("entrainment",), "dimensionless", "", 0.01, 0.5,
          "published top-hat values are 0.08–0.16 (from memory); a choice made here"),
    Limit("a frame rate", ("frame_rate",), "frequency", "Hz", 0.1, 10000.0,
          "from time-lapse to high-speed cameras; a choice made here"),
    Limit("a spreading rate", ("half_spreading_rate", "spreading_rate", "half_rate"), "velocity", "mm/yr", 0.0, 150.0,
          "the fastest ridges spread at about 150 mm/yr full rate (from memory); as a half rate, generous",
          low_open=True),
    Limit("a thermal conductivity", ("conductivity", "thermal_conductivity"), "thermal conductivity", "W/(m K)",
          0.0, 10.0, "sediments and rocks are 0.5–5 W/(m K) (from memory); a choice made here", low_open=True),
    Limit("a reservoir volume", ("volume", "melt_volume"), "volume", "km^3", 0.0, 1e5,
          "a choice made here: above any crustal magma body", low_open=True),
)


def _normalize(field: str) -> str:
    """``'vent[0].orifice[1]/velocity'`` → ``'vent.orifice.velocity'``; ``'--rise-height'`` → ``'rise_height'``."""
    f = str(field).strip()
    if f.startswith("--"):
        f = f[2:].replace("-", "_")
    f = re.sub(r"\[\d+\]", "", f).replace("/", ".")
    return f


def limit_for(field: str, dimension: str | None = None) -> Limit | None:
    """The row of ``LIMITS`` that applies to a field (by its key path), or ``None``."""
    path = _normalize(field)
    best, best_len = None, -1
    for lim in LIMITS:
        if dimension is not None and lim.dimension != dimension:
            continue
        for key in lim.keys:
            if (path == key or path.endswith("." + key)) and len(key) > best_len:
                best, best_len = lim, len(key)
    return best


def implausible_allowed() -> bool:
    """Whether the current command accepts values outside the table (``--allow-implausible``)."""
    return _allow.get()


@contextlib.contextmanager
def allowing_implausible(allow: bool = True):
    """Within this block, values outside ``LIMITS`` are accepted (non-finite ones never are)."""
    token = _allow.set(bool(allow))
    try:
        yield
    finally:
        _allow.reset(token)


def set_allow_implausible(allow: bool) -> None:
    """Accept (or refuse again) implausible values for the rest of this context (one CLI command)."""
    _allow.set(bool(allow))


def _span(value, unit: str):
    """Nominal value and 5–95 % range of a quantity or ``Uncertain``, as floats in ``unit``."""
    if hasattr(value, "kind") and hasattr(value, "a"):  # an Uncertain
        # Its nominal is a quantity of the one registry: convert with that (this module sits below ``units``,
        # which calls it, so it imports nothing of the package but errors).
        registry = value.nominal._REGISTRY

        def conv(x, u):
            return float(registry.Quantity(x, u).to(unit).magnitude)

        u, a, b = value.unit, value.a, value.b
        if value.kind == "normal":
            lo, nom, hi = a - Z95 * b, a, a + Z95 * b
        elif value.kind == "uniform":
            lo, nom, hi = a + 0.05 * (b - a), 0.5 * (a + b), a + 0.95 * (b - a)
        else:
            lo, nom, hi = a / b ** Z95, a, a * b ** Z95
        return conv(nom, u), conv(lo, u), conv(hi, u)
    mag = value.to(unit).magnitude
    try:
        x = float(mag)
    except (TypeError, ValueError):
        return None
    return x, x, x


def check(field: str, value, shown=None, dimension: str | None = None):
    """Refuse ``value`` (a quantity or ``Uncertain``) outside the plausibility limit of ``field``.

    Parameters
    ----------
    field : str
        The key path or option name; its end selects the row of ``LIMITS``.
    value : pint.Quantity or ventflux.uncertainty.Uncertain
        Scalar values only; arrays are checked by their readers.
    shown : str, optional
        The value as the user wrote it, for the message (default: ``value``).
    dimension : str, optional
        Only a row of this dimension applies.

    Returns
    -------
    value, unchanged.

    Raises
    ------
    InputError
        When the nominal value or either end of the 5–95 % range lies outside
        the limit, unless ``--allow-implausible`` is in effect.
    """
    lim = limit_for(field, dimension)
    if lim is None or implausible_allowed():
        return value
    try:
        span = _span(value, lim.unit or "dimensionless")
    except (TypeError, ValueError, AttributeError):  # another dimension: the dimension check reports it
        return value
    if span is None:
        return value
    nom, lo, hi = span
    shown = value if shown is None else shown
    if not lim.contains(nom):
        if lim.low is not None and lim.low >= 0 and nom <= 0 and not lim.span().startswith(f"{lim.quantity} >"):
            # say first what is physically wrong with a zero or a negative value
            rng = lim.span()[len(lim.quantity) + 1:]
            raise InputError(field, str(shown), f"{lim.quantity} > 0, and plausibly {rng} (plausibility limit; "
                                                "--allow-implausible accepts it)")
        raise InputError(field, str(shown), lim.allowed())
    # The tails meet the limit too, except a physical zero (a velocity > 0): how many draws may fall
    # below it is the propagation driver's policy (drop and count, refuse above its threshold).
    lo_ok = lim.contains(lo) or (lim.low == 0 and (lim.high is None or lo <= lim.high))
    if not (lo_ok and lim.contains(hi)):
        u = f" {lim.unit}" if lim.unit else ""
        raise InputError(field, str(shown), lim.allowed(f" over its whole 5-95 % range (here {lo:.3g} to {hi:.3g}{u})"))
    return value


def check_finite(field: str, magnitude, shown) -> None:
    """Refuse a non-finite number (``inf``, ``nan``) whatever ``--allow-implausible`` says."""
    try:
        ok = all(math.isfinite(float(x)) for x in _flat(magnitude))
    except (TypeError, ValueError):
        return
    if not ok:
        raise InputError(field, str(shown), "a finite number (not inf or nan)")


def _flat(m):
    import numpy as np

    return np.asarray(m, dtype=float).ravel()


def table_rows() -> list[tuple[str, str, str, str]]:
    """The table as rows (quantity, keys, allowed range, reason), for the contributor guide."""
    rows = []
    for lim in LIMITS:
        lo = "" if lim.low is None else f"{lim.low:g}"
        hi = "" if lim.high is None else f"{lim.high:g}"
        rows.append((lim.quantity, ", ".join(lim.keys), f"{'(' if lim.low_open else '['}{lo}, {hi}] {lim.unit}".strip(),
                     lim.reason))
    return rows


def markdown_table() -> str:
    """The plausibility table as Markdown (paste into the contributor guide)."""
    lines = ["| quantity | keys (end of the key path or option) | allowed | reason |", "|---|---|---|---|"]
    lines += [f"| {q} | `{k}` | {a} | {r} |" for q, k, a, r in table_rows()]
    return "\n".join(lines)
