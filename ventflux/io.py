"""Atomic output writing and input hashing.

Outputs are written to a temporary file (or folder) beside the destination and
renamed into place, so a reader never sees a half-written file, and an
interrupted run leaves no file that could be mistaken for a finished one.
Inputs are only ever opened for reading.
"""

from __future__ import annotations

import hashlib
import math
import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path

import numpy as np


def atomic_write_bytes(path, data: bytes):
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def atomic_write_text(path, text: str):
    atomic_write_bytes(path, text.encode("utf-8"))


@contextmanager
def atomic_directory(path):
    """Build a folder under a temporary name and rename it to ``path`` on success.

    An existing ``path`` is replaced only once the new folder is complete.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent))
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = None
    if path.exists():
        old = path.with_name(f".{path.name}.old")
        shutil.rmtree(old, ignore_errors=True)
        os.replace(path, old)
    os.replace(tmp, path)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def sha256_of(path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def json_ready(value):
    """A JSON-ready copy: NumPy arrays and scalars as lists and numbers, non-finite floats as null."""
    if isinstance(value, dict):
        return {k: json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_ready(value.tolist())
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.integer):
        return int(value)
    return value
