"""Reading field-data tables whose column headers carry units.

Every CSV that ventflux reads (CTD casts, probe records, patch tables, ...)
names a unit in each header, ``temperature [degC]``, ``pressure [dbar]``.
``read_quantity_table`` checks the whole file in one pass and reports every
problem at once: missing columns, a unit of the wrong dimension, non-numeric
or empty cells (by line number), short rows. Lines starting with ``#`` are
comments. Files are only read.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import Collector, InputError
from .units import DIMENSIONS, Q_, parse_column_name, ureg


@dataclass
class QuantityTable:
    """Columns of a table as pint quantity arrays, by name (unit stripped from the header)."""

    path: Path
    columns: dict
    lines: np.ndarray  # file line number of each row, for later messages

    def __getitem__(self, name):
        return self.columns[name]

    def __contains__(self, name):
        return name in self.columns

    def __len__(self):
        return int(self.lines.size)


def _rows(path):
    with open(path, newline="", encoding="utf-8-sig") as fh:
        for n, line in enumerate(fh, 1):
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            # a line without quotes splits exactly as the csv module splits it, many times faster
            yield n, (line.rstrip("\r\n").split(",") if '"' not in line else next(csv.reader([line])))


def read_quantity_table(path, columns: dict, optional: dict | None = None, alternatives=(),
                        allow_missing: bool = False) -> QuantityTable:
    """Read a CSV with unit-carrying headers and return the named columns as quantities.

    Parameters
    ----------
    path : path-like
    columns : dict
        Required column name → dimension name (a key of ``ventflux.units.DIMENSIONS``).
    optional : dict, optional
        Further columns read when present.
    alternatives : sequence of tuple of str
        Groups of which at least one column must be present (e.g.
        ``("depth", "pressure")``); list them in ``optional``.
    allow_missing : bool
        Read an empty cell or ``nan`` as NaN instead of refusing it (for a
        caller that drops such samples and counts them); text that is not a
        number, and infinities, are still refused.

    Returns
    -------
    QuantityTable

    Raises
    ------
    InputError or InputErrors
        Every problem in the file, each naming the file, line and column.
    """
    path = Path(path)
    where = str(path)
    if not path.is_file():
        raise InputError("file", where, "an existing, readable CSV file")
    optional = dict(optional or {})
    errs = Collector()
    try:
        rows = list(_rows(path))
    except (UnicodeDecodeError, OSError) as exc:
        raise InputError("file", where, f"a readable UTF-8 CSV file ({type(exc).__name__})") from None
    if not rows:
        raise InputError("file", where, "a CSV with a header line and at least one data row")
    header_line, header = rows[0]
    data = rows[1:]
    found = {}
    for i, label in enumerate(header):
        name, unit = parse_column_name(label)
        found[name] = (i, unit, label)
    wanted = {**{k: (v, True) for k, v in columns.items()}, **{k: (v, False) for k, v in optional.items()}}
    for name, (dim, required) in wanted.items():
        if name not in found:
            if required:
                errs.add(InputError("column", name, f"a column headed '{name} [unit]'; found: {', '.join(header)}",
                                    where=f"{where}:{header_line}"))
            continue
        _, unit, label = found[name]
        with errs.check():
            _check_unit(unit, dim, label, f"{where}:{header_line}")
    for group in alternatives:
        if not any(g in found for g in group):
            errs.add(InputError("column", " or ".join(group), "at least one of these columns",
                                where=f"{where}:{header_line}"))
    if not data:
        errs.add(InputError("file", where, "at least one data row after the header"))
    errs.raise_if_any()
    out = {}
    lines = np.array([n for n, _ in data], int)
    for name in wanted:
        if name not in found:
            continue
        i, unit, label = found[name]
        values = _numbers([cells[i] if i < len(cells) else "" for _, cells in data])
        if values is not None:
            out[name] = Q_(values, unit or "dimensionless")
            continue
        values = np.empty(len(data))  # some cell is empty, not a number or not finite: each one is named
        for r, (n, cells) in enumerate(data):
            cell = cells[i].strip() if i < len(cells) else ""
            if allow_missing and cell.lower() in ("", "nan"):
                values[r] = np.nan
                continue
            try:
                values[r] = float(cell)
            except ValueError:
                errs.add(InputError(label, cell if cell else "(empty)", "a number", where=f"{where}:{n}"))
                values[r] = np.nan
            else:
                if not np.isfinite(values[r]):
                    errs.add(InputError(label, cell, "a finite number", where=f"{where}:{n}"))
        out[name] = Q_(values, unit or "dimensionless")
    errs.raise_if_any()
    return QuantityTable(path=path, columns=out, lines=lines)


def _numbers(cells: list[str]) -> np.ndarray | None:
    """The cells as finite floats, or None when any is not one (the caller then names each such cell)."""
    try:
        values = np.fromiter(map(float, cells), float, len(cells))
    except ValueError:
        return None
    return values if np.isfinite(values).all() else None


def _check_unit(unit, dimension, label, where):
    want = DIMENSIONS[dimension]
    if unit is None:
        if dimension == "dimensionless":
            return
        raise InputError("column", label, f"a header with a unit in brackets, e.g. '{label} [unit]'", where=where)
    try:
        u = ureg.parse_units(unit)
    except Exception:
        raise InputError("column", label, f"a known unit for a {dimension}", where=where) from None
    if not (1 * u).check(want):
        raise InputError("column", label, f"a unit of {dimension}", where=where)
