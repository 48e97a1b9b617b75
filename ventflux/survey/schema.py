"""The survey file's schema: every table, key and data-file column, declared once.

Each table of a survey file (``[site]``, ``[[vent.orifice]]``, ``[diffuse]``,
a plugin's section, ...) is declared as a ``SurveyKey`` of kind ``"table"``
holding the ``SurveyKey`` s of its keys: their dimension or type, default,
whether they are required, whether they may carry an uncertainty, their
choices, a one-line meaning and, for a key naming a CSV file, the
``DataColumn`` s of that file. Core tables are declared beside their parsers
(``ventflux.survey.spec``, ``builtin``, ``plume_method``, ``field_sections``);
a plugin declares its method's or section's keys in ``SurveyMethod.keys`` /
``SurveySection.keys`` with the same objects (``ventflux.plugin_api``).

One declaration serves three readers, so they cannot drift apart:

* the validator: ``ventflux.survey.fields.Fields`` (given the whole schema by
  ``ventflux.survey.spec.survey_schema``) refuses a key of the file
  that its table does not declare (listing the declared ones), and a parser
  that reads an undeclared key is a programming error, raised in strict mode
  (``strict_schema()``, on in the test suite);
* ``ventflux survey --format [TABLE] [--json]`` (``format_text``,
  ``as_json``);
* ``ventflux survey --template`` (``ventflux.survey.template``), from the
  declared ``example`` values.
"""

from __future__ import annotations

import contextlib
import contextvars
import os
from dataclasses import dataclass
from typing import Any

#: Kinds of a key that are not a physical dimension (``ventflux.units.DIMENSIONS`` names the dimensions).
KINDS = {
    "string": "text",
    "number": "a number",
    "integer": "an integer",
    "boolean": "true or false",
    "path": "a file path, relative to the survey file",
    "table": "a table of keys",
    "position": "an inline table: {latitude = ..., longitude = ...} in degrees, or {east = \"... m\", "
                "north = \"... m\"} from a local origin",
    "list": "a list",
    "mapping": "an inline table of name = value",
    "value": "a quantity with its unit, or a bare number (a relative factor)",
}


@dataclass(frozen=True)
class DataColumn:
    """One column of a CSV data file a survey key names.

    Attributes
    ----------
    name : str
        The column's name without its unit (``temperature_anomaly``).
    unit : str
        The unit written in brackets in the header, as an example (any unit of the
        same dimension is read); empty for a bare number or a text column.
    meaning : str
        One line.
    required : bool or str
        True, False, or when it is required (``"unless depth is given"``).
    """

    name: str
    unit: str = ""
    meaning: str = ""
    required: bool | str = True

    @property
    def header(self) -> str:
        return f"{self.name} [{self.unit}]" if self.unit else self.name

    def as_dict(self) -> dict:
        return {"column": self.header, "name": self.name, "unit": self.unit or None, "required": self.required,
                "meaning": self.meaning}


@dataclass(frozen=True)
class SurveyKey:
    """One key of a survey table, or (``kind="table"``) a table and its keys.

    Attributes
    ----------
    name : str
        The key as written in the file (``exit_temperature``).
    kind : str
        A dimension of ``ventflux.units.DIMENSIONS`` (``"temperature"``,
        ``"length"``, ...), or one of ``KINDS``.
    meaning : str
        One line: what the value is.
    default : str, optional
        The value used when the key is left out, as text.
    required : bool or str
        True, or a sentence saying when it is required (``"or area"``).
    uncertain : bool
        Whether the value may carry an uncertainty (``"1.4 ± 0.2 m/s"``) or
        refer to ``[shared]`` (``"@name"``).
    choices : tuple of str
        The allowed values, for a string.
    columns : tuple of DataColumn
        For a path: the columns of the CSV file it names.
    keys : tuple of SurveyKey
        For a table: its keys (methods and sub-tables included).
    many : bool
        For a table: an array of tables (``[[vent.orifice]]``).
    open : bool
        For a table: its key names are the user's own (``[shared]``).
    example : str, optional
        A fictional value as TOML text, written by ``--template``.
    provider : str
        The distribution that declares a table (``ventflux``, a plugin).
    """

    name: str
    kind: str
    meaning: str
    default: str | None = None
    required: bool | str = False
    uncertain: bool = False
    choices: tuple[str, ...] = ()
    columns: tuple[DataColumn, ...] = ()
    keys: tuple[SurveyKey, ...] = ()
    many: bool = False
    open: bool = False
    example: str | None = None
    provider: str = "ventflux"

    def child(self, name: str) -> SurveyKey | None:
        """The declared key ``name`` of this table, or None."""
        for k in self.keys:
            if k.name == name:
                return k
        return None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(k.name for k in self.keys)

    def type_text(self) -> str:
        if self.kind == "table":
            return "array of tables" if self.many else "table"
        if self.kind in KINDS:
            return KINDS[self.kind]
        what = "a number (dimensionless)" if self.kind == "dimensionless" else \
            ("an " if self.kind[0] in "aeiou" else "a ") + self.kind
        return what + (", may be uncertain" if self.uncertain else "")

    def as_dict(self) -> dict:
        d: dict[str, Any] = {"key": self.name, "kind": self.kind, "meaning": self.meaning}
        if self.kind == "table":
            d.update(array=self.many, provider=self.provider, open=self.open,
                     keys=[k.as_dict() for k in self.keys])
            return d
        d.update(default=self.default, required=self.required, uncertain=self.uncertain,
                 choices=list(self.choices) or None)
        if self.columns:
            d["columns"] = [c.as_dict() for c in self.columns]
        return d


def table(name: str, meaning: str, keys, many: bool = False, provider: str = "ventflux", open: bool = False
          ) -> SurveyKey:
    """A table declaration (a ``SurveyKey`` of kind ``"table"``)."""
    return SurveyKey(name=name, kind="table", meaning=meaning, keys=tuple(keys), many=many, provider=provider,
                     open=open)


# ---- strict mode ------------------------------------------------------------------
class UndeclaredKey(RuntimeError):
    """A parser read a key its table does not declare: a bug of the parser (or its plugin), not of the input."""


_STRICT: contextvars.ContextVar[bool | None] = contextvars.ContextVar("ventflux_strict_schema", default=None)
#: Keys read without a declaration in this process (outside strict mode), ``table.key``: listed by tests.
UNDECLARED_READS: set[str] = set()


def is_strict() -> bool:
    """Strict inside ``strict_schema()``; elsewhere when the environment sets ``VENTFLUX_STRICT_SCHEMA=1``."""
    on = _STRICT.get()
    if on is not None:
        return on
    return os.environ.get("VENTFLUX_STRICT_SCHEMA", "") not in ("", "0")


@contextlib.contextmanager
def strict_schema(on: bool = True):
    """Raise ``UndeclaredKey`` when a parser reads a key its table does not declare (the test suite's mode)."""
    token = _STRICT.set(on)
    try:
        yield
    finally:
        _STRICT.reset(token)


def undeclared(scope: str, name: str) -> None:
    """Record (or, in strict mode, raise) a read of an undeclared key."""
    where = f"{scope}.{name}" if scope else name
    if is_strict():
        raise UndeclaredKey(f"survey key '{where}' is read but not declared in the survey schema "
                            "(ventflux.survey.schema); declare it beside its parser")
    UNDECLARED_READS.add(where)


def renamed_columns(path, columns) -> list[tuple[str, str]]:
    """``(old header, new header)`` for each column of a CSV file written under its deprecated name
    (``ventflux.vocabulary.RENAMED_COLUMNS``) when the declared ``columns`` name the new one."""
    from ..tables import _rows
    from ..units import parse_column_name
    from ..vocabulary import RENAMED_COLUMNS

    try:
        header: list[str] = next(iter(_rows(path)), (0, []))[1]
    except (OSError, UnicodeDecodeError):
        return []  # the reader reports an unreadable file
    found = {parse_column_name(label)[0]: label for label in header}
    declared = {c.name for c in columns}
    out = []
    for old, new in RENAMED_COLUMNS.items():
        if old in found and new in declared and new not in found:
            unit = parse_column_name(found[old])[1]
            out.append((found[old], f"{new} [{unit}]" if unit else new))
    return out

# ---- looking up the schema ------------------------------------------------------------------
def find(schema: SurveyKey, path: str) -> SurveyKey | None:
    """The table or key at ``path`` (``vent.orifice``, ``[[vent.orifice]]``, ``vent[0].orifice``, ``site.depth``)."""
    import re

    clean = re.sub(r"\[\d+\]", "", path.strip().strip("[]"))
    node: SurveyKey | None = schema
    for part in filter(None, clean.split(".")):
        node = node.child(part) if node is not None else None
    return node


def tables(schema: SurveyKey, prefix: str = ""):
    """Every table of the schema with its dotted path, depth first."""
    for k in schema.keys:
        if k.kind == "table":
            path = f"{prefix}.{k.name}" if prefix else k.name
            yield path, k
            yield from tables(k, path)


# ---- --format -----------------------------------------------------------------------------
INTRO = """\
A survey file is TOML. Quantities are strings with units ("2.05 degC", "2480 m"); a value marked "may be
uncertain" may carry an uncertainty ("1.4 ± 0.2 m/s", "uniform(9, 11) cm", "lognormal(0.3, 1.5) cm/s") or
refer to a named entry of [shared] as "@name" (drawn once per Monte Carlo draw for every value that refers to
it). Paths are relative to the survey file; CSV files carry units in their column headers
("temperature [degC]"; any unit of the same dimension is read). A key not listed here is refused.
'ventflux survey --format TABLE' shows one table (e.g. vent.orifice); --json gives all of this as JSON;
'ventflux survey --template' writes a starter survey."""


def _heading(path: str, t: SurveyKey) -> str:
    bracket = f"[[{path}]]" if t.many else f"[{path}]"
    who = f" ({t.provider})" if t.provider != "ventflux" else ""
    return f"{bracket}{who}: {t.meaning}"


def old_names(scope: str, name: str) -> list[str]:
    """Deprecated spellings of key ``name`` in the table at ``scope`` (``ventflux.vocabulary.RENAMED_KEYS``, the
    inverse of ``ventflux.vocabulary.renamed_key``)."""
    from ..vocabulary import RENAMED_KEYS

    return sorted(old for s in (scope, "*") for old, new in RENAMED_KEYS.get(s, {}).items() if new == name)


def _wrap(first: str, text: str) -> list[str]:
    import textwrap

    return textwrap.wrap(text, width=112, initial_indent=first, subsequent_indent=" " * len(first)) or [first]


def _key_lines(k: SurveyKey, scope: str = "") -> list[str]:
    facts = [k.type_text()]
    if k.required is True:
        facts.append("required")
    elif isinstance(k.required, str) and k.required:
        facts.append(f"required {k.required}")
    if k.choices:
        facts.append("one of " + " | ".join(f'"{c}"' for c in k.choices))
    if k.default is not None:
        facts.append(f"default {k.default}")
    old = old_names(scope, k.name)
    if old:
        facts.append(f"formerly {', '.join(old)}: still read, deprecated")
    out = _wrap(f"  {k.name:<24} ", k.meaning) + _wrap(" " * 27, f"({'; '.join(facts)})")
    for c in k.columns:
        req = "" if c.required is True else (" (optional)" if c.required is False else f" ({c.required})")
        out += _wrap(" " * 27 + "column ", f"\"{c.header}\"{req}: {c.meaning}")
    return out


def table_text(path: str, t: SurveyKey) -> str:
    """One table as text: its heading, then each key (sub-tables are listed by their own heading)."""
    lines = _wrap("", _heading(path, t))
    if t.open:
        lines.append("  name = value        any name of your own; the value a quantity or a bare relative factor")
    if not t.keys and not t.open:
        lines.append("  (its provider declares no keys)")
    for k in t.keys:
        if k.kind == "table":
            lines.append(f"  {k.name:<24} sub-table: see [{'[' if k.many else ''}{path}.{k.name}"
                         f"{']' if k.many else ''}]")
        else:
            lines.extend(_key_lines(k, path))
    return "\n".join(lines)


def format_text(schema: SurveyKey, only: str | None = None) -> str:
    """``ventflux survey --format [TABLE]`` as text; raises ``InputError`` for an unknown table."""
    if only:
        path, node = _only(schema, only)
        if node.kind != "table":
            return "\n".join([f"{path}:"] + _key_lines(node, path.rpartition(".")[0]))
        return "\n\n".join(table_text(p, t) for p, t in [(path, node), *tables(node, path)])
    return "\n\n".join([INTRO] + [table_text(p, t) for p, t in tables(schema)])


def _only(schema: SurveyKey, only: str):
    from ..errors import InputError

    node = find(schema, only)
    if node is None or node is schema:
        raise InputError("--format", only, "a table or key of the survey file: " +
                         ", ".join(p for p, _ in tables(schema)))
    import re

    return re.sub(r"\[\d+\]", "", only.strip().strip("[]")), node


def as_json(schema: SurveyKey, only: str | None = None) -> dict:
    """``ventflux survey --format [TABLE] --json``: the schema (or one table or key) as a JSON-ready dict."""
    if only:
        path, node = _only(schema, only)
        return {"path": path, **node.as_dict()}
    return {"format": "ventflux survey file (TOML)", "introduction": INTRO, **schema.as_dict()}


__all__ = ["DataColumn", "KINDS", "SurveyKey", "UndeclaredKey", "as_json", "find", "format_text", "strict_schema",
           "table", "tables"]
