"""Shared output helpers for subcommands: JSON to stdout or a readable table."""

from __future__ import annotations

import json
import math
import sys

import numpy as np


def add_output_options(parser):
    parser.add_argument("--json", action="store_true", help="print one JSON object to standard output")
    parser.add_argument("--allow-implausible", action="store_true",
                        help="accept values outside the plausibility limits (ventflux.limits); never inf or nan")


def write_output(option, path, write, *args):
    """Call ``write(*args)``; a ``path`` that cannot be written is the user's mistake (``InputError``, exit 2)."""
    from ..errors import InputError

    try:
        return write(*args)
    except OSError as err:
        raise InputError(option, str(path), f"a path that can be written ({err.strerror})") from None


def _clean(value):
    """JSON-ready copy of ``value`` (``ventflux.io.json_ready``)."""
    from ..io import json_ready

    return json_ready(value)


def print_json(obj, stream=None):
    """Print ``obj`` as one JSON object (NaN becomes null so any JSON reader takes it)."""
    json.dump(_clean(obj), stream or sys.stdout, indent=2, ensure_ascii=False)
    (stream or sys.stdout).write("\n")


def print_table(rows, title: str | None = None, stream=None):
    """Print ``(label, value, unit)`` rows aligned, values to 4 significant digits."""
    out = stream or sys.stdout
    if title:
        out.write(f"{title}\n")
    rows = [(str(a), _fmt(b), str(c)) for a, b, c in rows]
    w0 = max((len(r[0]) for r in rows), default=0)
    w1 = max((len(r[1]) for r in rows), default=0)
    for label, value, unit in rows:
        out.write(f"  {label:<{w0}}  {value:>{w1}}  {unit}\n")


def _fmt(v):
    if isinstance(v, str):
        return v
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    if isinstance(v, (int, np.integer)):
        return f"{v:d}"
    a = abs(v)
    if a != 0 and (a >= 1e5 or a < 1e-3):
        return f"{v:.4g}"
    return f"{v:.4g}" if a >= 1000 else f"{v:.4g}"
