"""``ventflux survey --template``: a commented starter survey, written from the survey schema.

Every table of the schema (``ventflux.survey.schema``) appears with each of
its keys and a comment giving the key's meaning, type, default and choices.
A table whose required keys all have a declared ``example`` is written
active with those (fictional) values; the others (a plugin's video clip,
probe records, tow-yo section) are written commented out, to be filled in.
The data files the active tables name are written beside the survey under
``data/``: each starts with comment lines describing every declared column,
then a header in the survey's vocabulary and a few fictional rows. The
result passes ``ventflux survey --check`` as written (a test checks it).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .schema import DataColumn, SurveyKey, find
from .spec import survey_schema

HEADER = """\
# A starter survey written by 'ventflux survey --template'. Every name and number in it is fictional:
# replace them with your own, delete what you did not measure, and run 'ventflux survey --check' on it.
# 'ventflux survey --format' lists every key; 'ventflux survey --format TABLE' one table (e.g. vent.orifice).
# Quantities are strings with units; measured values may carry an uncertainty ("1.4 ± 0.2 m/s") or refer
# to [shared] as "@name". Paths are relative to this file.
"""

#: Named shared inputs written into ``[shared]`` (the plume tables refer to the first).
SHARED_EXAMPLES = (
    ("entrainment", '"0.132 ± 0.015"', "the plume model's entrainment coefficient: one value for every plume"),
    ("hot probe offset", '"0 ± 1.5 K"', "one temperature probe's calibration, common to every orifice it "
                                         "measured (refer to it as temperature_offset = \"@hot probe offset\")"),
)


def _ctd_rows():
    """A fictional, stably stratified cast from 1800 to 2400 dbar: warmer and a little fresher upwards."""
    p = np.arange(1800.0, 2401.0, 20.0)
    t = 2.10 + 0.9 * np.exp(-(p - 1800.0) / 250.0)
    s = 34.690 - 0.02 * np.exp(-(p - 1800.0) / 250.0)
    return [[f"{a:.1f}", f"{b:.4f}", f"{c:.4f}"] for a, b, c in zip(p, t, s)]


#: Sample files by the key path that names them: (header columns in order, rows of cells).
SAMPLE_DATA: dict[str, tuple[tuple[str, ...], list]] = {
    "site.ctd": (("sea_pressure", "temperature", "salinity"), _ctd_rows()),
    "diffuse.patches": (("patch", "class", "area", "active_fraction", "temperature_anomaly", "velocity",
                         "temperature_anomaly_sd", "east", "north"),
                        [["P1", "mat", "12.0", "0.40", "4.5", "0.20", "0.6", "18", "-22"],
                         ["P2", "mat", "20.5", "0.35", "3.1", "0.15", "0.6", "25", "-40"],
                         ["P3", "shimmer", "6.0", "0.60", "8.2", "0.40", "0.9", "-10", "5"],
                         ["P4", "shimmer", "8.5", "0.55", "6.7", "0.35", "0.9", "-14", "12"]]),
    "diffuse.classes": (("class", "area", "area_sd"), [["mat", "900", "150"], ["shimmer", "250", "50"]]),
    "ridge_flank.observations": (("age", "heat_flow"),
                                 [["0.5", "180"], ["1.0", "150"], ["1.5", "140"], ["2.0", "135"], ["3.0", "130"]]),
}


def _column(columns: tuple[DataColumn, ...], name: str) -> DataColumn:
    for c in columns:
        if c.name == name:
            return c
    raise KeyError(f"column '{name}' is not declared")


def sample_csv(key: SurveyKey, header: tuple[str, ...], rows: list) -> str:
    """A data file: comment lines describing every declared column, then the header and ``rows``."""
    lines = [f"# Fictional sample data written by 'ventflux survey --template' for '{key.name}': replace with "
             "your own.", "# Columns (units in brackets; any unit of the same dimension is read):"]
    for c in key.columns:
        req = "" if c.required is True else " (optional)" if c.required is False else f" ({c.required})"
        lines.append(f"#   {c.header}{req}: {c.meaning}")
    lines.append(",".join(_column(key.columns, name).header for name in header))
    lines += [",".join(r) for r in rows]
    return "\n".join(lines) + "\n"


def _active(t: SurveyKey) -> bool:
    return t.provider == "ventflux" and all(k.example is not None for k in t.keys
                                            if k.required is True and k.kind != "table")


def _placeholder(k: SurveyKey) -> str:
    if k.choices:
        return f'"{k.choices[0]}"'
    return f"<{k.type_text()}>"


def _comment(k: SurveyKey) -> str:
    facts = [k.meaning]
    if k.required is True:
        facts.append("required")
    elif isinstance(k.required, str) and k.required:
        facts.append(f"required {k.required}")
    if k.choices:
        facts.append("one of " + ", ".join(f'"{c}"' for c in k.choices))
    if k.default is not None:
        facts.append(f"default {k.default}")
    if k.uncertain:
        facts.append("may be uncertain")
    return "# " + "; ".join(facts)


def _render(path: str, t: SurveyKey, out: list, active: bool, indent: str) -> None:
    on = active and _active(t)
    off = "" if on else "# "
    out.append("")
    out.append(f"{indent}# {t.meaning}" + ("" if t.provider == "ventflux" else f" (plugin {t.provider})"))
    out.append(f"{indent}{off}{'[[' if t.many else '['}{path}{']]' if t.many else ']'}")
    if t.open:
        for name, value, meaning in SHARED_EXAMPLES:
            out.append(f"{indent}# {meaning}")
            out.append(f'{indent}{off}"{name}" = {value}')
    for k in t.keys:
        if k.kind == "table":
            continue
        out.append(f"{indent}{_comment(k)}")
        if on and k.example is not None:
            out.append(f"{indent}{k.name} = {k.example}")
        else:
            out.append(f"{indent}# {k.name} = {k.example if k.example is not None else _placeholder(k)}")
    for k in t.keys:
        if k.kind == "table" and k.keys:
            _render(f"{path}.{k.name}", k, out, on, indent + "  ")


def template_text(schema: SurveyKey | None = None) -> str:
    """The starter survey as TOML text."""
    schema = schema or survey_schema()
    out = [HEADER.rstrip("\n")]
    for k in schema.keys:
        _render(k.name, k, out, True, "")
    return "\n".join(out) + "\n"


def write_template(path) -> list[Path]:
    """Write the starter survey to ``path`` and its sample data files under ``data/`` beside it.

    Refuses (``InputError``) when any of those files exists: ventflux never overwrites a file it did not
    create. Returns the files written.
    """
    from ..errors import InputError
    from ..io import atomic_write_text

    path = Path(path)
    schema = survey_schema()
    text = template_text(schema)
    files = {path: text}
    for key_path, (header, rows) in SAMPLE_DATA.items():
        key = find(schema, key_path)
        if key is None or key.example is None:
            continue
        files[path.parent / key.example.strip('"')] = sample_csv(key, header, rows)
    existing = [str(p) for p in files if p.exists()]
    if existing:
        raise InputError("--template", str(path), "a survey file and data files that do not exist yet (found: "
                         + ", ".join(existing) + "); ventflux does not overwrite them")
    if not path.parent.is_dir():
        raise InputError("--template", str(path), f"a path in an existing folder ({path.parent} does not exist)")
    for p, content in files.items():
        p.parent.mkdir(exist_ok=True)
        atomic_write_text(p, content)
    return list(files)
