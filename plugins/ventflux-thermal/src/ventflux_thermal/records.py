"""Reading probe records as loggers write them: elapsed seconds or ISO 8601 timestamps, gaps in dead channels.

A record is a CSV whose header names ``time [s]`` (elapsed time, any time
unit) or ``time`` holding ISO 8601 timestamps (``2026-03-14T08:00:00Z``;
timestamps without an offset are taken as UTC), and sensor columns
``T1 [degC]`` … ``TN [degC]`` (or K). Comment lines (``#``) at the head may
carry metadata (``probe.read_metadata``).

The time column must be complete, numeric and increasing. A sensor cell that
is empty or ``nan`` is a gap (a dead or dropped channel, counted and reported
by the reduction); any other text is an error. Problems repeated down a
column are reported once per column, with the first line and the count.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from ventflux.plugin_api import Collector, InputError
from ventflux.plugin_api import DIMENSIONS, Q_, parse_column_name, ureg

from .fitting import require_increasing

_MISSING = {"", "nan", "NaN", "NAN", "-nan"}


@dataclass
class ProbeRecord:
    """A record: time (s from ``start``), temperatures (K, sensors × samples, NaN in gaps), metadata."""

    path: Path
    time: np.ndarray
    temperature: np.ndarray
    sensors: tuple
    lines: np.ndarray
    meta: dict = field(default_factory=dict)
    start: datetime | None = None  # absolute time of time = 0 (UTC) when the record has timestamps

    def slice(self, t0: float, t1: float) -> "ProbeRecord":
        """The part of the record with t0 ≤ time ≤ t1 (same clock)."""
        i0 = int(np.searchsorted(self.time, t0, side="left"))
        i1 = int(np.searchsorted(self.time, t1, side="right"))
        return ProbeRecord(self.path, self.time[i0:i1], self.temperature[:, i0:i1], self.sensors,
                           self.lines[i0:i1], self.meta, self.start)


def _data_rows(path):
    with open(path, newline="", encoding="utf-8-sig") as fh:
        lines, rows = [], []
        for n, line in enumerate(fh, 1):
            if not line.strip() or line.lstrip().startswith("#"):
                continue
            lines.append(n)
            rows.append(line)
    if not rows:
        return None, None, [], []
    header = next(csv.reader([rows[0]]))
    return lines[0], header, lines[1:], rows[1:]


def _unit_ok(unit, dimension):
    try:
        return (1 * ureg.parse_units(unit)).check(DIMENSIONS[dimension])
    except Exception:
        return False


def parse_timestamps(cells, lines, where) -> tuple[np.ndarray, datetime | None]:
    """ISO 8601 cells → seconds since the first one, and the first as an aware UTC datetime (None without cells)."""
    out = np.empty(len(cells))
    first = None
    for r, cell in enumerate(cells):
        text = cell.strip()
        try:
            d = datetime.fromisoformat(text)
        except ValueError:
            raise InputError("time", text or "(empty)", "an ISO 8601 timestamp such as 2026-03-14T08:00:00Z",
                             where=f"{where}:{lines[r]}") from None
        if d.tzinfo is None:
            d = d.replace(tzinfo=UTC)
        if first is None:
            first = d
        out[r] = (d - first).total_seconds()
    return out, first


def _column(cells, label, lines, where, errs, allow_gaps):
    """A column of cells as floats: gaps as NaN when allowed; other text reported once for the column."""
    arr = np.char.strip(np.asarray(cells, dtype=str))
    gap = np.isin(arr, list(_MISSING))
    vals = np.full(arr.size, np.nan)
    try:
        vals[~gap] = arr[~gap].astype(float)
    except ValueError:
        for r in np.flatnonzero(~gap):
            try:
                vals[r] = float(arr[r])
            except ValueError:
                vals[r] = np.nan
                gap[r] = False
        bad = np.flatnonzero(np.isnan(vals) & ~gap)
        more = f" (and {bad.size - 1} more cells in this column)" if bad.size > 1 else ""
        errs.add(InputError(label, str(arr[bad[0]]), "a number" + more, where=f"{where}:{lines[bad[0]]}"))
    if not allow_gaps and gap.any():
        r = np.flatnonzero(gap)[0]
        more = f" (and {gap.sum() - 1} more empty cells)" if gap.sum() > 1 else ""
        errs.add(InputError(label, str(arr[r]) or "(empty)", "a number" + more, where=f"{where}:{lines[r]}"))
    inf = np.isinf(vals)
    if inf.any():
        r = np.flatnonzero(inf)[0]
        errs.add(InputError(label, str(arr[r]), "a finite number", where=f"{where}:{lines[r]}"))
    return vals


def read_record(path, sensor_columns=None, meta=None) -> ProbeRecord:
    """Read a probe or station record (see the module notes).

    Parameters
    ----------
    path : path-like
    sensor_columns : sequence of str, optional
        Sensor columns to read; default every ``T<n>`` column, in order.
    meta : dict, optional
        Metadata already read from the header, kept on the record.

    Raises
    ------
    InputError, InputErrors
        Every problem of the file at once, one line per column or problem.
    """
    path = Path(path)
    where = str(path)
    if not path.is_file():
        raise InputError("file", where, "an existing, readable CSV file")
    try:
        header_line, header, lines, rows = _data_rows(path)
    except (UnicodeDecodeError, OSError) as exc:
        raise InputError("file", where, f"a readable UTF-8 CSV file ({type(exc).__name__})") from None
    if header is None:
        raise InputError("file", where, "a CSV with a header line and at least one data row")
    if not rows:
        raise InputError("file", where, "at least one data row after the header")
    found = {}
    for i, label in enumerate(header):
        name, unit = parse_column_name(label)
        found[name] = (i, unit, label)
    errs = Collector()
    if sensor_columns is None:
        sensor_columns = sorted((n for n in found if re.fullmatch(r"T\d+", n)), key=lambda n: int(n[1:]))
        if not sensor_columns:
            raise InputError("column", "T1", f"sensor columns headed 'T1 [degC]', 'T2 [degC]', ...; found: "
                             f"{', '.join(header)}", where=f"{where}:{header_line}")
    for name in ["time", *sensor_columns]:
        if name not in found:
            errs.add(InputError("column", name, f"a column headed '{name} [unit]'; found: {', '.join(header)}",
                                where=f"{where}:{header_line}"))
    errs.raise_if_any()
    ti, tunit, tlabel = found["time"]
    if tunit is not None and not _unit_ok(tunit, "time"):
        errs.add(InputError("column", tlabel, "a unit of time, or ISO 8601 timestamps under 'time'",
                            where=f"{where}:{header_line}"))
    for name in sensor_columns:
        _, unit, label = found[name]
        if unit is None or not _unit_ok(unit, "temperature"):
            errs.add(InputError("column", label, "a temperature column with its unit, e.g. 'T1 [degC]'",
                                where=f"{where}:{header_line}"))
    errs.raise_if_any()
    table = list(csv.reader(rows))
    width = len(header)
    short = [k for k, c in enumerate(table) if len(c) < width]
    if short:
        more = f" (and {len(short) - 1} more short rows)" if len(short) > 1 else ""
        raise InputError("row", ",".join(table[short[0]]), f"{width} cells, one per column{more}",
                         where=f"{where}:{lines[short[0]]}")
    cols = list(zip(*table))
    line_no = np.asarray(lines, int)
    start = None
    if tunit is None:
        t, start = parse_timestamps(cols[ti], line_no, where)
    else:
        t = Q_(_column(cols[ti], tlabel, line_no, where, errs, allow_gaps=False), tunit).to("s").magnitude
    temps = []
    for name in sensor_columns:
        i, unit, label = found[name]
        v = _column(cols[i], label, line_no, where, errs, allow_gaps=True)
        temps.append(Q_(v, unit).to("K").magnitude)
    errs.raise_if_any()
    require_increasing(t, line_no, path, "time", "s")
    return ProbeRecord(path=path, time=t, temperature=np.vstack(temps), sensors=tuple(sensor_columns),
                       lines=line_no, meta=dict(meta or {}), start=start)


__all__ = ["ProbeRecord", "read_record", "parse_timestamps"]
