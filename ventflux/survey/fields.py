"""Reading one table of a survey file with every problem collected, not just the first.

``Fields`` wraps one TOML table and its key path (``vent[2].orifice[1]``). Each
getter parses one key, records a problem in the shared ``Collector`` instead
of raising, and notes which defaults were used so the run's provenance can
list them. Unknown keys are reported too: a misspelt key is a silent wrong
answer otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from ..errors import Collector, InputError, Warnings
from ..uncertainty import Uncertain, parse_uncertain
from ..units import Q_, parse_quantity
from .api import RunSettings


class Fields:
    """Typed access to one TOML table, collecting errors under a key path."""

    def __init__(self, table, path: str, errors: Collector, where: str, base_dir: Path, defaults: dict,
                 shared: dict | None = None, schema=None, scope: str = "", warnings: Warnings | None = None,
                 run: RunSettings | None = None):
        self.table = table if isinstance(table, dict) else {}
        self.path = path
        self.errors = errors
        self.where = where
        self.base_dir = base_dir
        self.defaults = defaults
        self.shared = shared if shared is not None else {}
        #: The table's declaration (``ventflux.survey.schema.SurveyKey``); None for a table that declares no keys
        #: (a third-party plugin's that predates the schema: its reads are recorded, and refused in strict mode).
        self.schema = schema if schema is None or schema.keys or schema.open else None
        #: The table's place in the schema without indices (``vent.orifice``): renamed keys are looked up by it.
        self.scope = scope
        self.warnings = warnings if warnings is not None else Warnings()
        #: The run's draws, seed and limit on impossible draws, shared by every table of the file (set once
        #: ``[run]`` and the command line are read): a value whose draws the run would refuse is refused here.
        self.run = run if run is not None else RunSettings()
        self.used: set[str] = set()
        #: New key name → the deprecated spelling the file used for it.
        self.aliases: dict[str, str] = {}
        if not isinstance(table, dict):
            self.error("", type(table).__name__, "a table (section) of keys")

    # -- plumbing ---------------------------------------------------------------
    def key(self, name: str) -> str:
        name = self.aliases.get(name, name)
        return f"{self.path}.{name}" if self.path else name

    def error(self, name, value, allowed):
        self.errors.add(InputError(self.key(name) if name else self.path, value, allowed, where=self.where))

    def _declare(self, name: str):
        """The declaration of key ``name`` (None when the table has none); an undeclared read is a parser bug."""
        if self.schema is None:
            from .schema import undeclared

            undeclared(self.scope, name + " (table without a declaration)")
            return None
        if self.schema.open:
            return None
        k = self.schema.child(name)
        if k is None:
            from .schema import undeclared

            undeclared(self.scope, name)
        return k

    def _old_names(self, name: str) -> list[str]:
        from .schema import old_names

        return old_names(self.scope, name)

    def _lookup(self, name: str) -> str | None:
        """The spelling of ``name`` the file uses: the key itself, a deprecated old name (recorded), or None."""
        if name in self.table:
            for old in self._old_names(name):
                if old in self.table and old not in self.used:  # reported once, however often the key is read
                    self.used.add(old)
                    self.error(old, self.table[old], f"either '{name}' or its deprecated spelling '{old}', not both")
            return name
        for old in self._old_names(name):
            if old in self.table:
                from ..vocabulary import deprecation_line

                self.used.add(old)
                self.aliases[name] = old
                self.warnings.add(self.key(name), deprecation_line(old, name))
                return old
        return None

    def _get(self, name, required, default):
        self._declare(name)
        self.used.add(name)
        written = self._lookup(name)
        if written is not None:
            return self.table[written], False
        if required:
            self.error(name, "(missing)", "a value for this required key")
        elif default is not None:
            self.defaults[self.key(name)] = str(default)
        return default, True

    def has(self, name) -> bool:
        """Whether the file gives key ``name`` (under its own or a deprecated spelling)."""
        return name in self.table or any(old in self.table for old in self._old_names(name))

    def raw(self, name):
        """The value of key ``name`` as written (for error messages), or None."""
        self.used.add(name)
        written = self._lookup(name)
        return None if written is None else self.table[written]

    def mark_used(self, name):
        """Key ``name`` is read directly from ``table`` by the parser (it must be declared)."""
        self._declare(name)
        self.used.add(name)

    def _child(self, name):
        decl = self._declare(name)
        scope = f"{self.scope}.{name}" if self.scope else name
        return decl, scope

    def sub(self, name, required=False) -> Fields | None:
        decl, scope = self._child(name)
        self.used.add(name)
        if name not in self.table:
            if required:
                self.error(name, "(missing)", "a table for this required section")
            return None
        return Fields(self.table[name], self.key(name), self.errors, self.where, self.base_dir, self.defaults,
                      self.shared, schema=decl, scope=scope, warnings=self.warnings, run=self.run)

    def subs(self, name) -> list[Fields]:
        """An array of tables (``[[vent]]``) as ``Fields`` with indexed key paths."""
        decl, scope = self._child(name)
        self.used.add(name)
        items = self.table.get(name, [])
        if isinstance(items, dict):
            items = [items]
        if not isinstance(items, list):
            self.error(name, type(items).__name__, "an array of tables, e.g. [[" + self.key(name) + "]]")
            return []
        return [Fields(t, f"{self.key(name)}[{i}]", self.errors, self.where, self.base_dir, self.defaults,
                       self.shared, schema=decl, scope=scope, warnings=self.warnings, run=self.run)
                for i, t in enumerate(items)]

    def check_unknown(self, extra_allowed=()):
        """Refuse every key of the table that the parser did not read, naming the table's declared keys."""
        from .schema import is_strict, undeclared

        if self.schema is not None and not self.schema.open and is_strict():
            for name in sorted(self.used - set(self.schema.names) - set(extra_allowed)):
                if name not in {o for n in self.schema.names for o in self._old_names(n)}:
                    undeclared(self.scope, name)
        unknown = sorted(set(self.table) - self.used - set(extra_allowed))
        if self.schema is not None and not self.schema.open:
            allowed = sorted(set(self.schema.names) | set(extra_allowed))
        else:
            allowed = sorted(self.used | set(extra_allowed))
        for k in unknown:
            import difflib

            close = difflib.get_close_matches(str(k), allowed, n=1)
            hint = f" (closest: '{close[0]}')" if close else ""
            where = f"; see 'ventflux survey --format {self.scope}'" if self.schema is not None and self.scope else ""
            self.error(k, "(unknown key)", "one of " + ", ".join(allowed) + hint + where)

    # -- getters ----------------------------------------------------------------
    def quantity(self, name, dimension, required=False, default=None, uncertain=True, positive=False,
                 minimum=None, maximum=None, shareable=True):
        """A quantity, an ``Uncertain`` (when allowed), or a ``("@", name)`` reference to [shared]."""
        raw, defaulted = self._get(name, required, default)
        if raw is None:
            return None
        if isinstance(raw, str) and raw.startswith("@"):
            ref = raw[1:].strip()
            if not shareable:
                self.error(name, raw, "a value of its own (this key cannot refer to [shared])")
                return None
            if ref not in self.shared:
                self.error(name, raw, "a reference to a name defined in [shared]: " +
                           (", ".join(sorted(self.shared)) or "(none defined)"))
                return None
            value = self.shared[ref]
            if value is REFUSED_SHARED:
                return None
            try:  # a shared value has the dimension and meets the plausibility limit of every key that uses it
                from ..units import require_dimension

                require_dimension(Q_(1.0, value.unit) if isinstance(value, Uncertain) else value, dimension,
                                  self.key(name))
                from ..limits import check

                check(self.key(name), value, f"{raw} = {value}", dimension)
            except InputError as e:
                self.errors.add(InputError(self.key(name), raw, e.allowed, where=self.where))
                return None
            if not uncertain and isinstance(value, Uncertain):
                self.error(name, f"{raw} = {value}", f"one exact {dimension} (this key cannot be uncertain)")
                return None
            # the key's own conditions (> 0, a minimum, a maximum) hold for the shared value too
            ok = self._meets(name, f"{raw} = {value}", value, dimension, positive, minimum, maximum, "shared/" + ref)
            return SharedRef(ref, value) if ok else None
        if isinstance(raw, (int, float)) and not isinstance(raw, bool):
            raw = str(raw) if dimension == "dimensionless" else raw
        if not isinstance(raw, (str, int, float)) or isinstance(raw, bool):
            self.error(name, repr(raw), f"a {dimension} written as a string, e.g. \"1.4 ± 0.2 m/s\"")
            return None
        try:
            if uncertain:
                value = parse_uncertain(str(raw), dimension, self.key(name))
            else:
                value = parse_quantity(str(raw), dimension, self.key(name))
        except InputError as e:
            self.errors.add(InputError(self.key(name), raw, e.allowed, where=self.where))
            return None
        if defaulted:
            return value
        return value if self._meets(name, raw, value, dimension, positive, minimum, maximum) else None

    def _meets(self, name, shown, value, dimension, positive, minimum, maximum, stream=None) -> bool:
        """Whether ``value`` is > 0 (``positive``), ≥ ``minimum`` and ≤ ``maximum``; a problem is recorded.

        An uncertain value that must be positive may be ≤ 0 in at most the run's share of draws (the run drops
        such draws and refuses above its limit): a [shared] value (``stream``: the name the run draws it under)
        is counted on the run's own draws; a value of the table's own, whose stream its estimator names, by its
        distribution's point at that share.
        """
        centre = value.nominal if isinstance(value, Uncertain) else value
        mag = centre.to_base_units().magnitude if dimension != "temperature" else centre.to("K").magnitude
        if positive and not mag > 0:
            self.error(name, shown, f"a {dimension} > 0")
            return False
        if positive and isinstance(value, Uncertain):
            if stream is not None:
                refused = self.run.refuses_draws(stream, value, dimension)
                if refused:
                    self.error(name, shown, f"a {dimension} > 0 in all but {refused}")
                    return False
            else:
                share = self.run.max_unphysical
                low = low_point(value, share, self.run.draws, dimension == "temperature")
                if not low > 0:
                    self.error(name, shown, f"a {dimension} > 0 in at least {1 - share:.1%} of its draws (its "
                                            f"{share:.1%} point, at the run's limit on impossible draws "
                                            f"({self.run.option}), is {low:.3g} in SI units; narrow the spread or "
                                            "use a lognormal)")
                    return False
        if minimum is not None and centre < minimum:
            self.error(name, shown, f"a {dimension} ≥ {minimum:~P}")
            return False
        if maximum is not None and centre > maximum:
            self.error(name, shown, f"a {dimension} ≤ {maximum:~P}")
            return False
        return True

    def number(self, name, required=False, default=None, minimum=None, maximum=None, integer=False):
        raw, defaulted = self._get(name, required, default)
        if raw is None or defaulted:
            return raw
        ok_type = isinstance(raw, int) if integer else isinstance(raw, (int, float))
        if isinstance(raw, bool) or not ok_type:
            self.error(name, repr(raw), "an integer" if integer else "a number")
            return None
        if not math.isfinite(raw):
            self.error(name, raw, "a finite number (not inf or nan)")
            return None
        if (minimum is not None and raw < minimum) or (maximum is not None and raw > maximum):
            rng = f"from {minimum} to {maximum}" if maximum is not None else f"≥ {minimum}"
            self.error(name, raw, f"a number {rng}")
            return None
        return raw

    def string(self, name, required=False, default=None, choices=None):
        raw, defaulted = self._get(name, required, default)
        if raw is None or defaulted:
            return raw
        if not isinstance(raw, str) or not raw.strip():
            self.error(name, repr(raw), "a non-empty string")
            return None
        if choices is not None and raw not in choices:
            self.error(name, raw, "one of " + ", ".join(choices))
            return None
        return raw

    def path_value(self, name, required=False, kind="file"):
        raw, _ = self._get(name, required, None)
        if raw is None:
            return None
        if not isinstance(raw, str) or not raw.strip():
            self.error(name, repr(raw), "a path written as a string, relative to the survey file")
            return None
        if "\0" in raw:
            self.error(name, raw.replace("\0", "\\0"), "a path without NUL characters")
            return None
        p = (self.base_dir / raw).resolve() if not Path(raw).is_absolute() else Path(raw)
        exists = p.is_file() if kind == "file" else p.is_dir()
        if not exists:
            self.error(name, raw, f"an existing {kind} (looked for {p})")
            return None
        return p


    def position(self, name, required=False):
        """A ``Position`` from an inline table: ``{latitude, longitude}`` in degrees or ``{east, north}`` lengths."""
        raw, _ = self._get(name, required, None)
        if raw is None:
            return None
        allowed = ("an inline table {latitude = -17.3012, longitude = -113.6004} in degrees, or "
                   "{east = \"120 m\", north = \"-35 m\"} from a local origin (lengths; a bare number is metres)")
        if not isinstance(raw, dict) or set(raw) not in ({"latitude", "longitude"}, {"east", "north"}):
            self.error(name, repr(raw), allowed)
            return None
        from ..limits import check_position

        out: dict[str, float] = {}
        for axis, v in raw.items():
            field = f"{self.key(name)}.{axis}"
            try:
                if isinstance(v, bool):
                    raise InputError(field, repr(v), "a number")
                if axis in ("latitude", "longitude"):
                    if isinstance(v, str):
                        raise InputError(field, v, f"a {axis} in decimal degrees, written as a number")
                    out[axis] = check_position(axis, v, field)
                else:
                    q = Q_(float(v), "m") if isinstance(v, (int, float)) else parse_quantity(str(v), "length", field)
                    metres = float(q.to("m").magnitude)
                    if not math.isfinite(metres) or abs(metres) > POSITION_RANGE_M:
                        raise InputError(field, v, f"a finite distance within {POSITION_RANGE_M / 1e3:g} km of the "
                                                   "local origin")
                    out[axis] = metres
            except InputError as e:
                self.errors.add(InputError(field, e.value, e.allowed, where=self.where))
                return None
        return Position(**out)


#: Largest distance of a local east/north position from its origin (a vent field spans a few km; a choice).
POSITION_RANGE_M = 100e3


@dataclass(frozen=True)
class Position:
    """Where a vent or a patch is: ``latitude``/``longitude`` in degrees, or ``east``/``north`` in metres from
    a local origin (the survey's own; the site's coordinates are not assumed to be that origin)."""

    latitude: float | None = None
    longitude: float | None = None
    east: float | None = None
    north: float | None = None

    @property
    def local(self) -> bool:
        """True for east/north in metres, False for latitude/longitude."""
        return self.east is not None


def low_point(value, share: float, draws: int, temperature: bool = False) -> float:
    """The point a distribution's ``share`` of draws lies below, in SI (kelvin for a temperature).

    A share of 0 (no impossible draw allowed) is taken as one draw in ``draws``: a normal has some mass below
    every point, and the run refuses only what its draws show.
    """
    from statistics import NormalDist

    if value.kind in ("lognormal", "beta"):  # never ≤ 0
        return math.inf
    share = min(max(share, 1.0 / max(int(draws), 1)), 1.0)
    if value.kind == "normal":
        low = value.a + NormalDist().inv_cdf(share) * value.b if share < 1 else math.inf
    else:  # uniform
        low = value.a + share * (value.b - value.a)
    unit = "K" if temperature else str(Q_(1.0, value.unit).to_base_units().units)
    return float(Q_(low, value.unit).to(unit).magnitude)


def key_drawn_as(stream: str, table: dict) -> str | None:
    """The key of a parsed table whose value refers to the [shared] name drawn under ``stream`` (``shared/<name>``),
    or None: how a refusal raised on the run's draws names the key the user wrote."""
    return next((k for k, v in table.items() if isinstance(v, SharedRef) and stream == f"shared/{v.name}"), None)


#: The value of a [shared] name that was refused (``Fields.shared``): a key referring to it is not refused again.
REFUSED_SHARED = object()


class SharedRef:
    """A survey value that refers to a named entry of [shared]: drawn once per draw for all users."""

    def __init__(self, name, value):
        self.name = name
        self.value = value

    def __repr__(self):
        return f"@{self.name}"


def resolve(value, own_name: str, draws):
    """Draws of a survey value: shared references by their shared name, others by their own key path."""
    if isinstance(value, SharedRef):
        return draws.draw("shared/" + value.name, value.value)
    return draws.draw(own_name, value)


def nominal_of(value):
    from ..uncertainty import nominal

    if isinstance(value, SharedRef):
        value = value.value
    return nominal(value)


def as_float(q):
    """A dimensionless quantity (or float) as float/array."""
    return q.to("dimensionless").magnitude if hasattr(q, "to") else q


__all__ = ["Q_", "Fields", "Position", "SharedRef", "as_float", "nominal_of", "resolve"]
