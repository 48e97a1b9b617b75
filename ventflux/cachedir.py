"""Where ventflux keeps what it builds once per machine (the unit registry, property tables, decay tables).

``$VENTFLUX_CACHE`` if set, else ``$XDG_CACHE_HOME/ventflux`` or
``~/.cache/ventflux``. Everything there can be deleted at any time; it is
rebuilt on next use.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path


def cache_dir() -> Path:
    """The ventflux cache directory (not created here)."""
    root = os.environ.get("VENTFLUX_CACHE") or os.path.join(
        os.environ.get("XDG_CACHE_HOME") or os.path.expanduser("~/.cache"), "ventflux")
    return Path(root)


def cached_arrays(name: str, build: Callable[[], dict], say: Callable[[str], None] | None = None) -> dict:
    """Named arrays built once per machine: read from ``cache_dir() / name`` (``.npz``), else built and saved.

    ``name`` must change with everything the arrays depend on (a version, a hash of the inputs and code).
    A file that cannot be read is rebuilt, never trusted; the file is written under a temporary name and
    renamed, so a reader never sees half of one; a cache that cannot be written costs a rebuild next time
    (``say`` is told why), never the result.
    """
    import numpy as np

    path = cache_dir() / name
    if path.exists():
        try:
            with np.load(path) as z:
                return {k: z[k] for k in z.files}
        except Exception:  # noqa: BLE001 - a damaged cache is rebuilt, never trusted
            pass
    arrays = build()
    tmp = path.with_name(f"{path.stem}.{os.getpid()}.part.npz")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        np.savez(tmp, **arrays)
        os.replace(tmp, path)
    except OSError as exc:
        try:  # a half-written temporary file (a full disk) is ventflux's own: removed
            tmp.unlink(missing_ok=True)
        except OSError:
            pass
        if say is not None:
            say(f"could not cache {path.name} in {path.parent} ({exc}); it will be rebuilt next time")
    return arrays
