"""Every input of a survey run as written: the survey file's keys, the defaults the run used, command-line values.

The survey file is read again as text (TOML) so each value appears exactly as
the user wrote it (``"351 ± 2 degC"``, ``"@hot probe offset"``), with its full
key path (``vent[0].orifice[1].diameter``) and, inside a ``[[vent]]``, the
vent's name. Values the file leaves out and the parser filled in come from
``SurveySpec.defaults_used``; draws and seed given on the command line, which
override the file, are marked as such.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

SOURCE_FILE = "survey file"
SOURCE_SHARED = "survey file, shared (one draw for every use)"
SOURCE_DEFAULT = "default"
SOURCE_COMMAND = "command line"


def _written(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return value
    if isinstance(value, list):
        return "[" + ", ".join(_written(v) for v in value) + "]"
    return str(value)


def _flatten(node, path: str, vent: str | None, out: list):
    if isinstance(node, dict):
        for k, v in node.items():
            key = f"{path}.{k}" if path else str(k)
            if isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
                for i, x in enumerate(v):
                    name = x.get("name") if k == "vent" and isinstance(x.get("name"), str) else vent
                    _flatten(x, f"{key}[{i}]", name, out)
            else:
                _flatten(v, key, vent, out)
    else:
        source = SOURCE_SHARED if path.startswith("shared.") else SOURCE_FILE
        out.append({"key": path, "vent": vent or "", "as_written": _written(node), "source": source})


def _vent_of(key: str, spec) -> str:
    if key.startswith("vent["):
        try:
            return spec.vents[int(key[5:key.index("]")])].name
        except (ValueError, IndexError, AttributeError):
            return ""
    return ""


def input_rows(spec) -> list[dict]:
    """Rows ``key``, ``vent``, ``as_written``, ``source``: the file's values, then defaults, then the command line."""
    rows: list[dict] = []
    raw: dict = {}
    path = Path(getattr(spec, "path", "") or "")
    if path.is_file():
        try:
            raw = tomllib.loads(path.read_text(encoding="utf-8"))
        except (tomllib.TOMLDecodeError, UnicodeDecodeError, OSError):
            raw = {}
    _flatten(raw, "", None, rows)
    written = {r["key"] for r in rows}
    run = raw.get("run", {}) if isinstance(raw.get("run"), dict) else {}
    defaults = dict(getattr(spec, "defaults_used", None) or {})
    for key, used in (("draws", spec.draws), ("seed", spec.seed)):
        if key in run:
            if run[key] != used:
                rows.append({"key": f"run.{key}", "vent": "", "as_written": str(used),
                             "source": f"{SOURCE_COMMAND} (instead of the file's {run[key]})"})
        elif str(defaults.get(f"run.{key}", used)) != str(used):
            defaults.pop(f"run.{key}")
            rows.append({"key": f"run.{key}", "vent": "", "as_written": str(used), "source": SOURCE_COMMAND})
    for key, value in defaults.items():
        if key not in written:
            rows.append({"key": key, "vent": _vent_of(key, spec), "as_written": str(value), "source": SOURCE_DEFAULT})
            written.add(key)
    if getattr(spec, "allow_implausible", False) and run.get("allow_implausible") is not True:
        rows.append({"key": "run.allow_implausible", "vent": "", "as_written": "true", "source": SOURCE_COMMAND})
    return rows
