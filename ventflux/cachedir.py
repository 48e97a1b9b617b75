"""Where ventflux keeps what it builds once per machine (the unit registry, property tables).

``$VENTFLUX_CACHE`` if set, else ``$XDG_CACHE_HOME/ventflux`` or
``~/.cache/ventflux``. Everything there can be deleted at any time; it is
rebuilt on next use.
"""

from __future__ import annotations

import os
from pathlib import Path


def cache_dir() -> Path:
    """The ventflux cache directory (not created here)."""
    root = os.environ.get("VENTFLUX_CACHE") or os.path.join(
        os.environ.get("XDG_CACHE_HOME") or os.path.expanduser("~/.cache"), "ventflux")
    return Path(root)
